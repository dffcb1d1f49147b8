"""The shard step's token limits (max_source_tokens, max_target_tokens):
a pair over a limit is left out of the shards, its row in rejected.tsv
names its input line and holds its text as in the split file, the funnel
counts it, and nothing is lost: every pair of the split files is in the
shards or in rejected.tsv, exactly once."""

import json
import os

import numpy as np
import pytest

import sheaf
from conftest import SOURCE_DIR, run_sheaf, shard_paths, split_lines

LIMIT = 14  # target ids, eos included: about a fifth of the demo's pairs are longer


@pytest.fixture(scope="module")
def limited_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("limit") / "run"
    r = run_sheaf("run", os.path.join(SOURCE_DIR, "pipelines", "demo.toml"), "--out", str(out), "--quiet",
                  "--threads", "2", "--set", f"shards.max_target_tokens={LIMIT}")
    assert r.returncode == 0, r.stderr.decode()
    return out


def rejected_rows(run_dir, stage):
    rows = []
    with open(os.path.join(run_dir, "rejected.tsv"), "rb") as f:
        for line in f:
            fields = line.rstrip(b"\n").split(b"\t")
            if fields[1] == stage.encode():
                rows.append(fields)
    return rows


def shard_pairs(run_dir, split, tok):
    pairs = []
    for path in shard_paths(run_dir, split):
        shard = sheaf.Shard(path)
        for i in range(len(shard)):
            src, tgt = shard[i]
            pairs.append((tok.decode(src), tok.decode(tgt), len(tgt)))
    return pairs


def test_every_split_pair_is_in_the_shards_or_rejected_once(limited_run):
    tok = sheaf.Tokenizer(str(limited_run))
    dropped = rejected_rows(limited_run, "shards")
    assert len(dropped) > 20  # the limit bites on the demo
    rejected_text = {}
    for fields in dropped:
        assert fields[2] == b"too-many-tokens:target"
        assert fields[3] == b"-"
        text = (fields[4].decode(), fields[5].decode())
        rejected_text[text] = rejected_text.get(text, 0) + 1
        # Over the limit: the target's ids (eos included, as in the shards).
        assert len(tok.encode(text[1], eos=True)) > LIMIT
    seen = 0
    for split in ("train", "dev", "test"):
        shards = shard_pairs(limited_run, split, tok)
        kept = [(s, t) for s, t, n in shards]
        assert all(n <= LIMIT for _, _, n in shards)
        # In order: the split file minus the rejected pairs, each once.
        expect = []
        for s, t in split_lines(limited_run, split):
            if rejected_text.get((s, t), 0) > 0 and len(tok.encode(t, eos=True)) > LIMIT:
                seen += 1
                continue
            expect.append((s, t))
        assert kept == expect
    assert seen == len(dropped)


def test_rejected_rows_name_the_input_line(limited_run):
    # The demo corpus is one TSV file: a row's origin is its input line, and
    # that line, normalized by the run's rules, is the row's text.
    src_tok = sheaf.Tokenizer(str(limited_run))
    tgt_tok = sheaf.Tokenizer(str(limited_run), side="target")
    with open(os.path.join(SOURCE_DIR, "samples", "garden-en-es.tsv"), "rb") as f:
        lines = f.read().split(b"\n")
    checked = 0
    for fields in rejected_rows(limited_run, "shards"):
        try:  # the sample holds a few lines of invalid UTF-8 on purpose
            line = lines[int(fields[0]) - 1].decode("utf-8").split("\t")
        except UnicodeDecodeError:
            continue
        assert src_tok.normalize(line[0]) == fields[4].decode()
        assert tgt_tok.normalize(line[1]) == fields[5].decode()
        checked += 1
    assert checked > 20


def test_the_funnel_and_the_counts_include_the_step(limited_run):
    with open(os.path.join(limited_run, "manifest.json"), encoding="utf-8") as f:
        rec = json.load(f)
    dropped = len(rejected_rows(limited_run, "shards"))
    last = rec["stages"][-1]
    assert last["name"] == "shards"
    split_pairs = sum(o["records"] for o in rec["outputs"] if o["kind"] == "text")
    shard_pairs_n = sum(o["records"] for o in rec["outputs"] if o["kind"] == "shard")
    assert last["in"] == split_pairs
    assert last["out"] == shard_pairs_n == split_pairs - dropped
    assert rec["counts"]["read"] == rec["counts"]["kept"] + rec["counts"]["rejected"]
    assert rec["counts"]["kept"] == shard_pairs_n
    rejected_rows_n = next(o["records"] for o in rec["outputs"] if o["path"] == "rejected.tsv")
    assert rejected_rows_n == rec["counts"]["rejected"]
    with open(os.path.join(limited_run, "summary.json"), encoding="utf-8") as f:
        summary = json.load(f)
    assert summary["funnel"][-1]["name"] == "shards"
    assert summary["funnel"][-1]["rejected"] == {"too-many-tokens": dropped}
    # No scratch file is left behind.
    assert not [n for n in os.listdir(limited_run) if n.endswith(".origins") or n.endswith(".partial")]


def test_no_limit_changes_nothing(limited_run, demo_run):
    # Without limits the funnel ends at "output", as before.
    with open(os.path.join(demo_run, "manifest.json"), encoding="utf-8") as f:
        rec = json.load(f)
    assert rec["stages"][-1]["name"] == "output"
    assert not rejected_rows(demo_run, "shards")


@pytest.mark.parametrize("pipeline,extra", [
    ("multi-corpus.toml", []),  # named corpora, one not held out: pairs spooled, routed at the end
    ("demo.toml", ["--set", "split.dev=100", "--set", "split.test=100"]),  # count mode: spooled too
])
def test_origins_survive_the_spool_and_name_the_corpus(tmp_path, pipeline, extra):
    out = tmp_path / "run"
    r = run_sheaf("run", os.path.join(SOURCE_DIR, "pipelines", pipeline), "--out", str(out), "--quiet",
                  "--threads", "2", "--set", "shards.max_source_tokens=12", *extra)
    assert r.returncode == 0, r.stderr.decode()
    with open(os.path.join(out, "manifest.json"), encoding="utf-8") as f:
        rec = json.load(f)
    rows = rejected_rows(out, "shards")
    assert rows
    names = [c["name"] for c in rec.get("corpora", [])]
    split_text = set()
    for split in ("train", "dev", "test"):
        split_text.update((s, t) for s, t in split_lines(out, split))
    per_corpus = {}
    for fields in rows:
        origin = fields[0].decode()
        if names:
            name, line = origin.rsplit(":", 1)
            assert name in names
            per_corpus[name] = per_corpus.get(name, 0) + 1
        else:
            line = origin
        assert int(line) >= 1
        assert (fields[4].decode(), fields[5].decode()) in split_text
    for c in rec.get("corpora", []):
        assert c["rejected"].get("shards/too-many-tokens", 0) == per_corpus.get(c["name"], 0)
        assert c["counts"]["read"] == c["counts"]["kept"] + c["counts"]["rejected"]
        assert c["stages_out"]["shards"] == c["counts"]["kept"]
    assert rec["counts"]["read"] == rec["counts"]["kept"] + rec["counts"]["rejected"]
