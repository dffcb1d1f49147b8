"""The package's shard reader (sheaf.Shard, NumPy only) against the C++
decoder: every shard read in Python and decoded with a vocabulary parsed
here from docs/vocabulary-format.md alone must print what `sheaf decode`
prints; a damaged or truncated shard is refused."""

import numpy as np
import pytest

import sheaf
from conftest import run_sheaf, shard_paths


def load_vocab(path):
    tokens = {}
    with open(path, "rb") as f:
        body = f.read().split(b"\n--\n", 1)[1]
    for line in body.split(b"\n"):
        if not line or line.startswith(b"checksum\t"):
            continue
        fields = line.split(b"\t")
        tokens[int(fields[0])] = (fields[1], unescape(fields[2].decode("utf-8")))
    return tokens


def unescape(s):
    out = bytearray()
    i = 0
    while i < len(s):
        c = s[i]
        if c != "\\":
            out += c.encode("utf-8")
            i += 1
            continue
        e = s[i + 1]
        if e == "x":
            out.append(int(s[i + 2:i + 4], 16))
            i += 4
        elif e == "u":
            close = s.index("}", i)
            out += chr(int(s[i + 3:close], 16)).encode("utf-8")
            i = close + 1
        else:
            out += {"\\": b"\\", "s": b" ", "t": b"\t", "n": b"\n", "r": b"\r"}[e]
            i += 2
    return bytes(out)


def decode_shard(path, vocab):
    lines = []
    for src, tgt in sheaf.Shard(path):
        sides = [b"".join(vocab[int(i)][1] for i in ids if vocab[int(i)][0] != b"special") for ids in (src, tgt)]
        lines.append(sides[0] + b"\t" + sides[1] + b"\n")
    return b"".join(lines)


def test_python_reader_matches_the_decoder(demo_run):
    vocab = load_vocab(demo_run / "vocab.shared.txt")
    paths = shard_paths(demo_run, "train")
    assert len(paths) > 1
    for path in paths:
        r = run_sheaf("decode", path)
        assert r.returncode == 0, r.stderr.decode()
        assert decode_shard(path, vocab) == r.stdout


def test_lengths_match_the_pairs(demo_run):
    shard = sheaf.Shard(shard_paths(demo_run, "dev")[0])
    for side in (0, 1):
        np.testing.assert_array_equal(shard.lengths(side), [len(pair[side]) for pair in shard])


@pytest.mark.parametrize("where", ["header", "body"])
def test_a_damaged_shard_is_refused(demo_run, tmp_path, where):
    good = open(shard_paths(demo_run, "dev")[0], "rb").read()
    at = 20 if where == "header" else len(good) // 2
    bad = bytearray(good)
    bad[at] ^= 1
    (tmp_path / "bad.shard").write_bytes(bytes(bad))
    with pytest.raises(sheaf.ShardError):
        sheaf.Shard(str(tmp_path / "bad.shard"))


def test_a_truncated_shard_is_refused(demo_run, tmp_path):
    good = open(shard_paths(demo_run, "dev")[0], "rb").read()
    for n in (0, 100, len(good) - 100):
        (tmp_path / "short.shard").write_bytes(good[:n])
        with pytest.raises(sheaf.ShardError):
            sheaf.Shard(str(tmp_path / "short.shard"))


def test_header_holds_the_special_ids(demo_run):
    tok = sheaf.Tokenizer(demo_run)
    want = {"pad": tok.pad_id, "unk": tok.unk_id, "bos": tok.bos_id, "eos": tok.eos_id}
    for path in shard_paths(demo_run, "train"):
        header = sheaf.Shard(path).header
        assert header["version"] == 2
        assert header["specials"] == {"source": want, "target": want}


def test_format_one_is_still_read():
    # Written before the header held the special ids (the fuzz seed corpus).
    from conftest import SOURCE_DIR
    shard = sheaf.Shard(SOURCE_DIR + "/tests/fuzz/corpus/shard_reader/dev.shard")
    assert shard.header["version"] == 1 and shard.header["specials"] is None
    assert len(shard) == 63 and int(shard[62][1][-1]) == 3
