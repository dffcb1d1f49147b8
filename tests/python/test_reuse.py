"""Vocabulary reuse: a new corpus goes through the pipeline into shards with
an existing run's ids; the run record names the reused file."""

import json
import os

import numpy as np

import sheaf
from conftest import run_sheaf, shard_paths, split_lines

PIPELINE = """sheaf = 1
[corpus]
files = ["new.tsv"]
source_lang = "en"
target_lang = "es"
[output]
dir = "out"
[[stage]]
kind = "normalize"
source_form = "nfkc"
target_form = "nfkc"
[[stage]]
kind = "split"
dev = 0.1
test = 0.1
[[stage]]
kind = "vocabulary"
reuse = [%s]
[[stage]]
kind = "shards"
"""


def new_corpus(demo_run, tmp_path):
    # Invented new text: the demo's sentences, changed, some in full-width
    # letters (the pipeline normalizes them).
    lines = []
    for i, (src, tgt) in enumerate(split_lines(demo_run, "train")[:400]):
        src = "Again: " + src
        if i % 5 == 0:
            src = "".join(chr(ord(c) + 0xFEE0) if "!" <= c <= "~" else c for c in src)
        lines.append(src + "\t" + tgt + " Otra vez.\n")
    (tmp_path / "new.tsv").write_text("".join(lines), encoding="utf-8")


def test_a_reused_vocabulary_gives_the_old_runs_ids(demo_run, tmp_path):
    new_corpus(demo_run, tmp_path)
    vocab = str(demo_run / "vocab.shared.txt")
    (tmp_path / "p.toml").write_text(PIPELINE % json.dumps(vocab), encoding="utf-8")
    r = run_sheaf("run", str(tmp_path / "p.toml"), "--quiet")
    assert r.returncode == 0, r.stderr.decode()
    out = tmp_path / "out"
    assert (out / "vocab.shared.txt").read_bytes() == (demo_run / "vocab.shared.txt").read_bytes()
    old = sheaf.Tokenizer(demo_run)
    manifest = json.loads((out / "manifest.json").read_text())
    reused = manifest["vocabulary"]["reused"]
    assert [{k: r[k] for k in ("side", "file", "xxh3_64")} for r in reused] == [
        {"side": "shared", "file": vocab, "xxh3_64": "%016x" % old.vocabulary_checksum}]
    summary = json.loads((out / "summary.json").read_text())
    rows = summary["vocabulary"]["vocabularies"][0]["sweep"]["source"]
    assert rows[-1]["size"] == old.vocab_size and "unknown_rate" in rows[-1] and rows[-1]["tokens_per_word"] > 1
    # The old run's figures for the same vocabulary, beside the new ones.
    old_summary = json.loads((demo_run / "summary.json").read_text())
    old_rows = old_summary["vocabulary"]["vocabularies"][0]["sweep"]["source"]
    old_row = [r for r in old_rows if r["size"] == old.vocab_size][0]
    reused = summary["vocabulary"]["reused"][0]["old_run"]
    assert reused["summary"] == str(demo_run / "summary.json")
    assert reused["source"]["tokens_per_word"] == old_row["tokens_per_word"]
    # Ids of the new shards are the old tokenizer's encoding of the new text.
    pairs = [p for path in shard_paths(out, "train") for p in sheaf.Shard(path)]
    train = split_lines(out, "train")
    assert len(pairs) == len(train) > 300
    for (src, tgt), (src_ids, tgt_ids) in zip(train, pairs):
        np.testing.assert_array_equal(old.encode(src), src_ids)
        np.testing.assert_array_equal(old.encode(tgt), tgt_ids)


def test_a_reused_vocabulary_of_the_wrong_kind_or_damaged_is_refused(demo_run, tmp_path):
    new_corpus(demo_run, tmp_path)
    vocab = str(demo_run / "vocab.shared.txt")
    (tmp_path / "p.toml").write_text(PIPELINE % (json.dumps(vocab) + ", " + json.dumps(vocab)), encoding="utf-8")
    r = run_sheaf("run", str(tmp_path / "p.toml"), "--quiet")
    assert r.returncode == 2 and b"is a shared vocabulary" in r.stderr, r.stderr
    damaged = (demo_run / "vocab.shared.txt").read_bytes().replace(b"alphabet-coverage\t0.9", b"alphabet-coverage\t0.8", 1)
    (tmp_path / "bad.txt").write_bytes(damaged)
    (tmp_path / "p.toml").write_text(PIPELINE % json.dumps(str(tmp_path / "bad.txt")), encoding="utf-8")
    r = run_sheaf("run", str(tmp_path / "p.toml"), "--quiet", "--force")
    assert r.returncode != 0 and b"checksum" in r.stderr, r.stderr
    assert not os.path.exists(tmp_path / "out" / "manifest.json")


def test_a_damaged_summary_beside_the_reused_vocabulary_is_ignored(demo_run, tmp_path):
    # The old run's summary.json is only read for figures to show: a field of
    # the wrong type there (a size written as text) must not stop the run
    # (it aborted it before the reader was checked).
    old = tmp_path / "old"
    old.mkdir()
    (old / "vocab.shared.txt").write_bytes((demo_run / "vocab.shared.txt").read_bytes())
    summary = json.loads((demo_run / "summary.json").read_text())
    for row in summary["vocabulary"]["vocabularies"][0]["sweep"]["source"]:
        row["size"] = str(row["size"])
    (old / "summary.json").write_text(json.dumps(summary), encoding="utf-8")
    new_corpus(demo_run, tmp_path)
    (tmp_path / "p.toml").write_text(PIPELINE % json.dumps(str(old / "vocab.shared.txt")), encoding="utf-8")
    r = run_sheaf("run", str(tmp_path / "p.toml"), "--quiet")
    assert r.returncode == 0, r.stderr.decode()
    reused = json.loads((tmp_path / "out" / "summary.json").read_text())["vocabulary"]["reused"][0]["old_run"]
    assert reused["summary"] == str(old / "summary.json")
    assert "source" not in reused  # no figure could be read
