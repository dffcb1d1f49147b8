"""Test helper: prints a shard's pairs as TSV with the Python reader.
Exit status 3 when the reader refuses the shard."""
import sys

sys.path.insert(0, __file__.rsplit("/tests/", 1)[0] + "/src/python")
from sheaf_shards import Shard, ShardError  # noqa: E402


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


def main():
    try:
        shard = Shard(sys.argv[1])
    except ShardError as e:
        print(e, file=sys.stderr)
        sys.exit(3)
    vocab = load_vocab(sys.argv[2])
    out = sys.stdout.buffer
    for src, tgt in shard:
        sides = []
        for ids in (src, tgt):
            sides.append(b"".join(vocab[int(i)][1] for i in ids if vocab[int(i)][0] != b"special"))
        out.write(sides[0] + b"\t" + sides[1] + b"\n")


if __name__ == "__main__":
    main()
