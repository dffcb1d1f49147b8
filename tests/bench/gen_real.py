#!/usr/bin/python3
"""Writes a benchmark corpus derived from real translated text.

Pairs are the genuine English -> LANG entries of the quality sets
(tests/quality/make_sets.py: Debian's message catalogues), each corpus line
joining 1 to 4 entries chosen by a seeded generator on both sides alike, so
the text is real translation throughout and lines rarely repeat. Writes TSV
to standard output until --mb megabytes.

  /usr/bin/python3 tests/bench/gen_real.py --mb 200 --lang es > build-rel/real-200-es.tsv
"""

import argparse
import os
import random
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "quality"))
import make_sets  # noqa: E402


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--mb", type=int, default=200)
    ap.add_argument("--lang", default="es")
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()
    rows = make_sets.genuine(a.lang, make_sets.read_sets())
    if not rows:
        sys.exit("no catalogue text for %s; install the packages of tests/quality/sets.txt" % a.lang)
    rng = random.Random(a.seed)
    limit = a.mb * 1000 * 1000
    out = sys.stdout.buffer
    written = 0
    while written < limit:
        k = rng.randint(1, 4)
        picks = [rows[rng.randrange(len(rows))] for _ in range(k)]
        line = (" ".join(r["src"] for r in picks) + "\t" + " ".join(r["tgt"] for r in picks) + "\n").encode("utf-8")
        out.write(line)
        written += len(line)
    return 0


if __name__ == "__main__":
    sys.exit(main())
