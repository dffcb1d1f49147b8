"""Data access for training loops: every shard of a split as one dataset, a
token-budget batch sampler, and padding into NumPy arrays.

    data = sheaf.SplitDataset("runs/demo", "train")
    sampler = sheaf.TokenBatchSampler(data, max_tokens=4096, seed=1,
                                      rank=rank, world_size=world_size)
    for epoch in range(epochs):
        sampler.set_epoch(epoch)
        for batch in sheaf.batches(data, sampler):
            batch["source"], batch["target"]   # int64 [pairs, longest], padded

NumPy only (the PyTorch adapter is sheaf.torch_data).
"""

import bisect
import os
import re

import numpy as np

from .shards import Shard, ShardError

_SHARD_NAME = re.compile(r"^(?P<split>.+)\.(?P<index>\d{5})\.shard$")


def _vocabulary_specials(path):
    """The special ids a vocabulary file's header names
    (docs/vocabulary-format.md: lines "special-pad N", ...)."""
    out = {}
    with open(path, "rb") as f:
        for line in f:
            if line == b"--\n":
                break
            key, _, value = line.rstrip(b"\n").partition(b"\t")
            if key.startswith(b"special-"):
                out[key[8:].decode()] = int(value)
    return out


class SplitDataset:
    """All shards of one split of a run as one sequence of pairs.

    data[i] is (source_ids, target_ids), NumPy views into the memory-mapped
    shards (uint16 or uint32); len(data) is the number of pairs, in shard
    order. lengths(side) reads only the offsets, never the ids. pad_id and
    eos_id are the run's special ids (from the shard header, or for
    version-1 shards from the run's vocabulary file). Safe to hand to worker
    processes: a copy reopens the shards from their paths.
    """

    def __init__(self, run_dir, split="train"):
        self.run_dir = os.fspath(run_dir)
        self.split = split
        shard_dir = os.path.join(self.run_dir, "shards")
        names = []
        for name in os.listdir(shard_dir) if os.path.isdir(shard_dir) else []:
            m = _SHARD_NAME.match(name)
            if m and m.group("split") == split:
                names.append((int(m.group("index")), name))
        if not names:
            raise ShardError("%s: no shards of the split %r (is it a finished run?)" % (shard_dir, split))
        names.sort()
        if [i for i, _ in names] != list(range(len(names))):
            raise ShardError("%s: the shards of %r are not numbered 0, 1, ... without a gap" % (shard_dir, split))
        self.paths = [os.path.join(shard_dir, n) for _, n in names]
        self._open()

    def _open(self):
        self._shards = [Shard(p) for p in self.paths]
        self._starts = [0]
        for s in self._shards:
            self._starts.append(self._starts[-1] + len(s))
        self._lengths = [None, None]
        first = self._shards[0].header
        specials = first.get("specials")
        if specials is None:
            vocab = os.path.join(self.run_dir, "vocab.shared.txt")
            if not os.path.exists(vocab):
                vocab = os.path.join(self.run_dir, "vocab.source.txt")
            v = _vocabulary_specials(vocab)
            specials = {"source": v, "target": v}
        self.specials = specials
        self.pad_id = specials["source"]["pad"]
        self.target_pad_id = specials["target"]["pad"]

    def __getstate__(self):
        return {"run_dir": self.run_dir, "split": self.split, "paths": self.paths}

    def __setstate__(self, state):
        self.__dict__.update(state)
        self._open()

    def __len__(self):
        return self._starts[-1]

    def __getitem__(self, i):
        i = int(i)
        if i < 0:
            i += len(self)
        if not 0 <= i < len(self):
            raise IndexError(i)
        k = bisect.bisect_right(self._starts, i) - 1
        return self._shards[k][i - self._starts[k]]

    def lengths(self, side):
        """Tokens per pair of one side (0 source, 1 target), int64."""
        if self._lengths[side] is None:
            self._lengths[side] = np.concatenate([s.lengths(side) for s in self._shards])
        return self._lengths[side]


class TokenBatchSampler:
    """Batches of pair indices whose padded size stays within a token budget.

    Each epoch (set_epoch), with a generator seeded by (seed, epoch): the
    indices are shuffled and dealt to the ranks (rank r gets every
    world_size-th of the shuffled order, so each pair goes to exactly one
    rank); each rank cuts its share into pools of `pool` pairs, sorts each
    pool by length (the longer side of a pair) and fills batches greedily
    while batch_pairs x longest <= max_tokens; then the batch order is
    shuffled (seed, epoch, rank). A pair longer than max_tokens gets a batch
    of its own: nothing is dropped. Ranks may differ by a few batches.
    shuffle=False keeps the dataset's order (pools still sorted), the same
    every epoch.
    """

    def __init__(self, dataset, max_tokens, seed=0, rank=0, world_size=1, shuffle=True, pool=8192):
        if max_tokens < 1:
            raise ValueError("max_tokens must be at least 1")
        if not 0 <= rank < world_size:
            raise ValueError("rank must be in 0 .. world_size - 1")
        self.lengths = np.maximum(dataset.lengths(0), dataset.lengths(1))
        self.max_tokens = int(max_tokens)
        self.seed = int(seed)
        self.rank = int(rank)
        self.world_size = int(world_size)
        self.shuffle = shuffle
        self.pool = int(pool)
        self.epoch = 0
        self._cached = None

    def set_epoch(self, epoch):
        self.epoch = int(epoch)
        self._cached = None

    def _batches(self):
        if self._cached is not None and self._cached[0] == self.epoch:
            return self._cached[1]
        n = len(self.lengths)
        if self.shuffle:
            order = np.random.default_rng([self.seed, self.epoch]).permutation(n)
        else:
            order = np.arange(n)
        mine = order[self.rank::self.world_size]
        batches = []
        for start in range(0, len(mine), self.pool):
            chunk = mine[start:start + self.pool]
            chunk = chunk[np.argsort(self.lengths[chunk], kind="stable")]
            batch, longest = [], 0
            for i in chunk.tolist():
                size = max(longest, int(self.lengths[i]))
                if batch and size * (len(batch) + 1) > self.max_tokens:
                    batches.append(batch)
                    batch, size = [], int(self.lengths[i])
                batch.append(i)
                longest = size
            if batch:
                batches.append(batch)
        if self.shuffle:
            rng = np.random.default_rng([self.seed, self.epoch, self.rank])
            batches = [batches[k] for k in rng.permutation(len(batches))]
        self._cached = (self.epoch, batches)
        return batches

    def __iter__(self):
        return iter(self._batches())

    def __len__(self):
        return len(self._batches())


def pad(sequences, pad_id, dtype=np.int64):
    """A [len(sequences), longest] array, each row a sequence then pad_id,
    and the lengths."""
    lengths = np.fromiter((len(s) for s in sequences), dtype=np.int64, count=len(sequences))
    out = np.full((len(sequences), int(lengths.max()) if len(sequences) else 0), pad_id, dtype=dtype)
    for row, s in enumerate(sequences):
        out[row, :len(s)] = s
    return out, lengths


def collate(dataset, indices, dtype=np.int64):
    """One batch: padded source and target arrays, their lengths and the
    pairs' indices."""
    pairs = [dataset[i] for i in indices]
    source, source_lengths = pad([p[0] for p in pairs], dataset.pad_id, dtype)
    target, target_lengths = pad([p[1] for p in pairs], dataset.target_pad_id, dtype)
    return {"source": source, "source_lengths": source_lengths, "target": target,
            "target_lengths": target_lengths, "indices": np.asarray(indices, dtype=np.int64)}


def batches(dataset, sampler, dtype=np.int64):
    """The sampler's batches of the current epoch, collated."""
    for indices in sampler:
        yield collate(dataset, indices, dtype)
