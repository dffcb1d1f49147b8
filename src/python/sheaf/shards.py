"""Reads sheaf token-id shards from Python training code.

Standard library and NumPy only. A shard is memory-mapped (numpy.memmap) and
checked before use: magic bytes, format version, the CRC-32 of the header and
of the body (zlib, in the standard library), every position and count against
the file size, and the offsets. The format is specified in
docs/shard-format.md; formats 1 and 2 are read (header["specials"], the
special ids of each side, is None for format 1).

    from sheaf import Shard
    shard = Shard("runs/demo/shards/train.00000.shard")
    for source_ids, target_ids in shard:
        ...  # numpy arrays of dtype uint16 or uint32
"""

import os
import struct
import zlib

import numpy as np

MAGIC = b"shfids\x1a\x00"
FORMAT_VERSIONS = (1, 2)
# Bytes 0..111 are the same in both formats.
FIELDS = struct.Struct("<8sIIQQQIIQQQQQQQII")
SPECIALS = struct.Struct("<8I")        # format 2: bytes 112..143
CHECKS = struct.Struct("<QI")          # XXH3-64 and CRC-32 of the header before them
HEADER_SIZE = {1: 128, 2: 160}
CHECKS_AT = {1: 112, 2: 144}
SPECIAL_NAMES = ("pad", "unk", "bos", "eos")
ALIGN = 64


class ShardError(Exception):
    """The file is not a valid shard (damaged, truncated or another format)."""


class Shard:
    """One shard: len(shard) pairs; shard[i] is (source_ids, target_ids)."""

    def __init__(self, path):
        self.path = path
        size = os.path.getsize(path)
        if size < 136:
            raise ShardError("%s: %d bytes, less than a header and a checksum (truncated?)" % (path, size))
        self._map = np.memmap(path, dtype=np.uint8, mode="r")
        (magic, version, width, pairs, src_vocab, tgt_vocab, order, flags, src_off, src_ids, src_count, tgt_off,
         tgt_ids, tgt_count, file_size, index, body_crc) = FIELDS.unpack(bytes(self._map[:112]))
        if magic != MAGIC:
            raise ShardError("%s: not a sheaf shard (wrong magic bytes)" % path)
        # The header checksums follow the fields they cover; where they are
        # depends on the version, which is trusted only once format 1's
        # checksum has failed too.
        at = CHECKS_AT.get(version, 112)
        if size < HEADER_SIZE.get(version, 128) + 8:
            raise ShardError("%s: %d bytes, less than a header and a checksum (truncated?)" % (path, size))
        raw = bytes(self._map[:at + 12])
        _xxh, header_crc = CHECKS.unpack(raw[at:at + 12])
        if zlib.crc32(raw[:at]) != header_crc:
            raise ShardError("%s: the header checksum does not match" % path)
        if version not in FORMAT_VERSIONS:
            raise ShardError("%s: format version %d is not one of %s" % (path, version, FORMAT_VERSIONS))
        header_size = HEADER_SIZE[version]
        specials = None
        if version >= 2:
            ids = SPECIALS.unpack(raw[112:144])
            specials = {"source": dict(zip(SPECIAL_NAMES, ids[:4])), "target": dict(zip(SPECIAL_NAMES, ids[4:]))}
        if width not in (2, 4):
            raise ShardError("%s: id width must be 2 or 4" % path)
        if file_size != size:
            raise ShardError("%s: the header says %d bytes, the file has %d (truncated?)" % (path, file_size, size))
        body_end = size - 8
        if zlib.crc32(self._map[header_size:body_end]) != body_crc:
            raise ShardError("%s: the body checksum does not match (a damaged byte?)" % path)

        def check(pos, count, item, what):
            if pos % ALIGN or pos < header_size or pos > body_end or count > (body_end - pos) // item:
                raise ShardError("%s: %s runs past the end of the file or is misplaced" % (path, what))

        if pairs > body_end // 8:
            raise ShardError("%s: the pair count is larger than the file can hold" % path)
        check(src_off, pairs + 1, 8, "the source offsets")
        check(src_ids, src_count, width, "the source ids")
        check(tgt_off, pairs + 1, 8, "the target offsets")
        check(tgt_ids, tgt_count, width, "the target ids")
        dtype = np.uint16 if width == 2 else np.uint32
        self.header = {"version": version, "id_width": width, "pairs": pairs, "source_vocab": src_vocab,
                       "target_vocab": tgt_vocab, "order": "length" if order == 1 else "input",
                       "bos": bool(flags & 1), "eos": bool(flags & 2), "shard_index": index,
                       "body_crc32": body_crc, "specials": specials}
        self._offsets = []
        self._ids = []
        for off, ids, count in ((src_off, src_ids, src_count), (tgt_off, tgt_ids, tgt_count)):
            o = self._map[off:off + (pairs + 1) * 8].view("<u8")
            if len(o) != pairs + 1 or o[0] != 0 or o[-1] != count or np.any(np.diff(o.astype(np.int64)) < 0):
                raise ShardError("%s: the offsets are damaged" % path)
            self._offsets.append(o)
            self._ids.append(self._map[ids:ids + count * width].view(dtype))

    def __len__(self):
        return self.header["pairs"]

    def __getitem__(self, i):
        if not 0 <= i < len(self):
            raise IndexError(i)
        out = []
        for side in (0, 1):
            o = self._offsets[side]
            out.append(self._ids[side][int(o[i]):int(o[i + 1])])
        return tuple(out)

    def __iter__(self):
        for i in range(len(self)):
            yield self[i]

    def lengths(self, side):
        """Token counts of one side (0 = source, 1 = target) for every pair."""
        return np.diff(self._offsets[side].astype(np.int64))
