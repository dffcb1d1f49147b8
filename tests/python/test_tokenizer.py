"""The package's tokenizer against the run's own outputs: the shards hold
the ids of train.tsv, so encoding train.tsv must give them back exactly."""

import unicodedata

import numpy as np
import pytest

import sheaf
from conftest import run_sheaf, shard_paths, split_lines


@pytest.fixture(scope="module")
def tok(demo_run):
    return sheaf.Tokenizer(demo_run)


@pytest.fixture(scope="module")
def train(demo_run):
    return split_lines(demo_run, "train")


def shard_ids(run_dir, split):
    out = []
    for path in shard_paths(run_dir, split):
        for src, tgt in sheaf.Shard(path):
            out.append((src.astype(np.uint32), tgt.astype(np.uint32)))
    return out


def test_every_train_line_encodes_to_the_shard_ids(demo_run, tok, train):
    target = sheaf.Tokenizer(demo_run, side="target")
    shards = shard_ids(demo_run, "train")
    assert len(shards) == len(train) > 1000
    for (src_text, tgt_text), (src_ids, tgt_ids) in zip(train, shards):
        np.testing.assert_array_equal(tok.encode(src_text), src_ids)
        np.testing.assert_array_equal(target.encode(tgt_text), tgt_ids)
    batch = tok.encode_batch([s for s, _ in train], threads=2)
    flat, offsets = tok.encode_batch([s for s, _ in train], threads=2, ragged=True)
    assert len(offsets) == len(train) + 1 and offsets[-1] == len(flat)
    for i, (ids, (src_ids, _)) in enumerate(zip(batch, shards)):
        np.testing.assert_array_equal(ids, src_ids)
        np.testing.assert_array_equal(flat[offsets[i]:offsets[i + 1]], src_ids)


# Text as scraped pages hold it. The demo pipeline normalizes to NFKC and
# collapses spaces, and its pattern stage turns HTML tags into spaces.
# NFD and NFKC: Unicode Standard Annex #15 (through Python's unicodedata);
# full-width forms U+FF01..U+FF5E are <wide> compatibility decompositions of
# U+0021..U+007E (UnicodeData.txt), so NFKC maps them back.
def full_width(text):
    return "".join(chr(ord(c) + 0xFEE0) if "!" <= c <= "~" else c for c in text)


def messy_forms(text):
    words = text.split(" ")
    tagged = " ".join("<b>%s</b>" % w if i % 3 == 1 else w for i, w in enumerate(words))
    return [
        unicodedata.normalize("NFD", text),
        full_width(text),
        "  " + text.replace(" ", "   ") + " ",
        text.replace(" ", "\u00a0"),
        tagged,
    ]


def test_unnormalized_text_encodes_like_its_normalized_form(tok, train):
    checked = 0
    for src, _ in train[:300]:
        want = tok.encode(src)
        for messy in messy_forms(src):
            assert tok.normalize(messy) == src, repr(messy)
            np.testing.assert_array_equal(tok.encode(messy), want)
            checked += 1
    assert checked == 1500


def test_decode_of_encode_gives_the_normalized_text(demo_run, tok, train):
    target = sheaf.Tokenizer(demo_run, side="target")
    for src, tgt in train:
        assert tok.decode(tok.encode(src)) == src
        assert target.decode(target.encode(tgt)) == tgt
        for messy in messy_forms(src)[:2]:
            assert tok.decode(tok.encode(messy)) == src


def test_decode_stops_at_eos_and_skips_special_tokens(tok):
    ids = list(tok.encode("The garden opens at nine.", bos=True, eos=True))
    assert ids[0] == tok.bos_id and ids[-1] == tok.eos_id
    more = ids + list(tok.encode("Closed on Monday.", eos=False)) + [tok.pad_id] * 3
    assert tok.decode(more) == "The garden opens at nine."
    assert tok.decode(more, stop_at_eos=False) == "The garden opens at nine.Closed on Monday."
    # Spellings of the special tokens from the vocabulary file's header.
    kept = tok.decode(ids, stop_at_eos=False, skip_special=False)
    assert kept.startswith(tok.token(tok.bos_id)) and kept.endswith(tok.token(tok.eos_id))
    padded = np.array([ids + [tok.pad_id] * 2, ids[:3] + [tok.eos_id] + [tok.pad_id] * (len(ids) - 2)])
    assert tok.decode_batch(padded) == ["The garden opens at nine.", tok.decode(ids[:3])]


def test_encode_wraps_as_the_shards_do(tok):
    plain = tok.encode("garden", bos=False, eos=False)
    assert list(tok.encode("garden")) == list(plain) + [tok.eos_id]  # demo: shards eos = true, bos = false
    assert list(tok.encode("garden", bos=True)) == [tok.bos_id] + list(plain) + [tok.eos_id]
    assert tok.encode("").tolist() == [tok.eos_id]


def test_tokens_are_readable_strings(tok):
    toks = tok.tokens("The garden")
    assert "".join(toks).replace("\\s", " ") == "The garden"
    assert [tok.token(i) for i in tok.encode("The garden", eos=False)] == toks


def test_bad_arguments_are_reported(demo_run, tok, tmp_path):
    with pytest.raises(ValueError, match="side"):
        sheaf.Tokenizer(demo_run, side="middle")
    with pytest.raises(RuntimeError, match="pipeline.toml"):
        sheaf.Tokenizer(tmp_path)
    with pytest.raises(ValueError, match="not a token id"):
        tok.decode([tok.vocab_size])
    with pytest.raises(ValueError):
        tok.decode([-1])
    with pytest.raises(ValueError):
        sheaf.Tokenizer()


def test_vocabulary_and_pipeline_files_load_like_the_run(demo_run, tok, train):
    import os
    from conftest import SOURCE_DIR
    other = sheaf.Tokenizer(vocab=os.path.join(demo_run, "vocab.shared.txt"),
                            pipeline=os.path.join(SOURCE_DIR, "pipelines", "demo.toml"))
    for src, _ in train[:200]:
        messy = full_width(src)
        np.testing.assert_array_equal(other.encode(messy), tok.encode(messy))
    assert other.vocabulary_checksum == tok.vocabulary_checksum == sheaf.Shard(
        shard_paths(demo_run, "train")[0]).header["source_vocab"]


def test_command_line_encode_applies_the_run_text_rules(demo_run, tok, train):
    lines = [full_width(s) for s, _ in train[:50]]
    r = run_sheaf("encode", "--run", str(demo_run), "--eos", stdin="\n".join(lines).encode() + b"\n")
    assert r.returncode == 0, r.stderr.decode()
    got = [[int(x) for x in line.split()] for line in r.stdout.decode().splitlines()]
    assert got == [tok.encode(s).tolist() for s in lines]
    # decode --vocab stops at the end-of-sequence id.
    ids = " ".join(str(i) for i in list(tok.encode("The garden")) + list(tok.encode("closed")))
    r = run_sheaf("decode", "--vocab", str(demo_run / "vocab.shared.txt"), stdin=ids.encode() + b"\n")
    assert r.stdout.decode() == "The garden\n"


def test_bpe_dropout_is_seeded_and_keeps_the_text(tok, train):
    texts = [s for s, _ in train[:200]]
    plain = tok.encode_batch(texts, threads=1)
    zero = tok.encode_batch(texts, threads=2, dropout=0.0, seed=3)
    one = tok.encode_batch(texts, threads=1, dropout=0.4, seed=3)
    two = tok.encode_batch(texts, threads=2, dropout=0.4, seed=3)
    other = tok.encode_batch(texts, threads=2, dropout=0.4, seed=4)
    changed = 0
    for text, p, z, a, b, c in zip(texts, plain, zero, one, two, other):
        np.testing.assert_array_equal(p, z)
        np.testing.assert_array_equal(a, b)  # the same at any thread count
        assert tok.decode(a) == text
        changed += not np.array_equal(a, c)
    assert changed > 150
    np.testing.assert_array_equal(tok.encode(texts[0], dropout=0.4, seed=9), tok.encode(texts[0], dropout=0.4, seed=9))
    with pytest.raises(ValueError, match="probability"):
        tok.encode("x", dropout=1.5)
