"""Times batch encoding through the Python package, to set beside
sheaf_bench_encode (the C++ encoder alone) on the same text:

    PYTHONPATH=build/python /usr/bin/python3 tests/bench/encode_python.py RUN THREADS [--ragged]

RUN is a run directory (its train.tsv is encoded: sources with the source
tokenizer, targets with the target one). Reading the file and making the
Python strings is not timed; encode_batch is, with the pipeline's text
rules, from an empty cache, and the NumPy arrays it returns. Prints seconds,
MB/s of text and tokens.
"""

import os
import sys
import time

import sheaf


def main():
    run, threads = sys.argv[1], int(sys.argv[2])
    ragged = len(sys.argv) > 3 and sys.argv[3] == "--ragged"
    with open(os.path.join(run, "train.tsv"), encoding="utf-8") as f:
        pairs = [line.rstrip("\n").split("\t") for line in f]
    sides = [[p[0] for p in pairs], [p[1] for p in pairs]]
    size = sum(len(s.encode("utf-8")) for side in sides for s in side)
    toks = [sheaf.Tokenizer(run, side="source"), sheaf.Tokenizer(run, side="target")]
    start = time.perf_counter()
    tokens = 0
    for tok, texts in zip(toks, sides):
        out = tok.encode_batch(texts, bos=False, eos=False, threads=threads, ragged=ragged)
        tokens += len(out[0]) if ragged else sum(len(ids) for ids in out)
    seconds = time.perf_counter() - start
    print("%.3f s  %.1f MB/s  %d tokens" % (seconds, size / seconds / 1e6, tokens))


if __name__ == "__main__":
    main()
