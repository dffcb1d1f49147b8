"""User-defined tokens (tags): the last ids of the vocabulary, never split,
and a tag put at the start of a side in the shards."""

import numpy as np
import pytest

import sheaf
from conftest import SOURCE_DIR, run_sheaf, shard_paths, split_lines

SETS = ["--set", 'vocabulary.user_tokens=["<2es>", "<2en>", "<2en-gb>"]', "--set", 'shards.source_tag="<2es>"']


@pytest.fixture(scope="module")
def tagged_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("tagged") / "run"
    r = run_sheaf("run", SOURCE_DIR + "/pipelines/demo.toml", "--out", str(out), "--quiet", *SETS)
    assert r.returncode == 0, r.stderr.decode()
    return out


def test_user_tokens_take_the_last_ids_within_the_size(tagged_run):
    tok = sheaf.Tokenizer(tagged_run)
    assert tok.vocab_size == 1200  # the demo's size
    assert tok.user_tokens == ["<2es>", "<2en>", "<2en-gb>"]
    assert [tok.token(i) for i in range(1197, 1200)] == tok.user_tokens
    head = (tagged_run / "vocab.shared.txt").read_bytes().split(b"\n")[:6]
    assert head[0] == b"sheaf-vocabulary\t2" and b"user-tokens\t3" in head


def test_shards_start_each_source_with_the_tag(tagged_run):
    src_tok = sheaf.Tokenizer(tagged_run)
    tgt_tok = sheaf.Tokenizer(tagged_run, side="target")
    tag = 1197
    pairs = [p for path in shard_paths(tagged_run, "train") for p in sheaf.Shard(path)]
    train = split_lines(tagged_run, "train")
    assert len(pairs) == len(train)
    for (src, tgt), (src_ids, tgt_ids) in zip(train, pairs):
        assert src_ids[0] == tag and tag not in tgt_ids
        np.testing.assert_array_equal(src_tok.encode(src), src_ids)
        np.testing.assert_array_equal(tgt_tok.encode(tgt), tgt_ids)
    # decode keeps a tag (it is text, not a special token)
    assert src_tok.decode(pairs[0][0]) == "<2es>" + train[0][0]
    assert src_tok.encode("garden", tag="").tolist() == src_tok.encode("garden", tag="<2en>").tolist()[1:]


def test_user_tokens_are_never_split(tagged_run):
    tok = sheaf.Tokenizer(tagged_run)
    ids = tok.encode("<2en-gb> The garden<2en>opens", tag="", eos=False).tolist()
    assert ids[0] == 1199  # the longest token at a position wins
    assert 1198 in ids
    assert tok.decode(ids) == "<2en-gb> The garden<2en>opens"
    for p in (0.5, 1.0):
        assert 1199 in tok.encode("<2en-gb> The garden", tag="", dropout=p, seed=1).tolist()
    with pytest.raises(ValueError, match="user-defined"):
        tok.encode("x", tag="<2fr>")


def test_a_tag_that_is_not_a_user_token_is_refused(tmp_path):
    r = run_sheaf("run", SOURCE_DIR + "/pipelines/demo.toml", "--out", str(tmp_path / "run"), "--quiet",
                  "--set", 'shards.source_tag="<2fr>"')
    assert r.returncode == 2 and b"user_tokens" in r.stderr, r.stderr


# A bad tag is refused when the pipeline is built, not after the cleaning
# pass: `sheaf validate` refuses it (exit 2), and `sheaf run` stops before
# pass 1 has written anything. The message names the key, the tag and what
# to do.
def test_validate_refuses_a_tag_that_is_not_a_user_token(tmp_path):
    pipeline = SOURCE_DIR + "/pipelines/demo.toml"
    r = run_sheaf("validate", pipeline, "--set", 'vocabulary.user_tokens=["<2es>"]',
                  "--set", 'shards.source_tag="<2fr>"')
    assert r.returncode == 2, r.stderr
    assert b'source_tag "<2fr>"' in r.stderr and b"user_tokens" in r.stderr, r.stderr
    r = run_sheaf("validate", pipeline, "--set", 'vocabulary.user_tokens=["<2es>"]',
                  "--set", 'shards.target_tag="<2es>"')
    assert r.returncode == 0, r.stderr
    out = tmp_path / "run"
    r = run_sheaf("run", pipeline, "--out", str(out), "--quiet", "--set", 'shards.target_tag="<2fr>"')
    assert r.returncode == 2 and b'target_tag "<2fr>"' in r.stderr, r.stderr
    assert not (out / "train.tsv").exists() and not (out / "rejected.tsv").exists()


def test_validate_checks_a_tag_against_a_reused_vocabulary(tmp_path, demo_run):
    # The demo's vocabulary has no user tokens: the message says so and
    # names the file.
    vocab = demo_run / "vocab.shared.txt"
    r = run_sheaf("validate", SOURCE_DIR + "/pipelines/demo.toml", "--set", f'vocabulary.reuse=["{vocab}"]',
                  "--set", 'shards.source_tag="<2es>"')
    assert r.returncode == 2, r.stderr
    assert b'source_tag "<2es>"' in r.stderr and str(vocab).encode() in r.stderr and b"none" in r.stderr, r.stderr
