"""Dataset over a split, the token-budget sampler and the PyTorch adapter,
checked against the shards read one by one."""

import numpy as np
import pytest
import torch

import sheaf
from conftest import shard_paths
from sheaf.torch_data import data_loader


@pytest.fixture(scope="module")
def data(demo_run):
    return sheaf.SplitDataset(demo_run, "train")


def test_dataset_is_every_shard_in_order(demo_run, data):
    pairs = [p for path in shard_paths(demo_run, "train") for p in sheaf.Shard(path)]
    assert len(data) == len(pairs) > 1000
    for i in (0, 499, 500, 501, len(pairs) - 1, -1):
        for side in (0, 1):
            np.testing.assert_array_equal(data[i][side], pairs[i][side])
    with pytest.raises(IndexError):
        data[len(data)]
    for side in (0, 1):
        np.testing.assert_array_equal(data.lengths(side), [len(p[side]) for p in pairs])
    tok = sheaf.Tokenizer(demo_run)
    assert (data.pad_id, data.target_pad_id) == (tok.pad_id, tok.pad_id)


def test_missing_split_is_reported(demo_run):
    with pytest.raises(sheaf.ShardError, match="no shards"):
        sheaf.SplitDataset(demo_run, "nosuch")


def all_indices(sampler):
    return [i for b in sampler for i in b]


@pytest.mark.parametrize("world", [1, 2, 3])
def test_every_pair_goes_to_exactly_one_rank_each_epoch(data, world):
    for epoch in (0, 1):
        seen = []
        for rank in range(world):
            s = sheaf.TokenBatchSampler(data, max_tokens=300, seed=5, rank=rank, world_size=world)
            s.set_epoch(epoch)
            seen += all_indices(s)
        assert sorted(seen) == list(range(len(data)))


def test_batches_keep_to_the_budget_and_are_bucketed(data):
    s = sheaf.TokenBatchSampler(data, max_tokens=256, seed=1)
    lengths = np.maximum(data.lengths(0), data.lengths(1))
    spread = []
    for b in s:
        longest = int(lengths[b].max())
        assert len(b) * longest <= 256 or len(b) == 1
        spread.append(longest - int(lengths[b].min()))
    # Sorted pools: pairs of a batch have nearly the same length.
    assert np.mean(spread) <= 2


def test_shuffle_is_seeded_per_epoch(data):
    a = sheaf.TokenBatchSampler(data, max_tokens=300, seed=1)
    b = sheaf.TokenBatchSampler(data, max_tokens=300, seed=1)
    first = list(a)
    assert first == list(b)
    a.set_epoch(1)
    assert list(a) != first and sorted(all_indices(a)) == sorted(i for x in first for i in x)
    c = sheaf.TokenBatchSampler(data, max_tokens=300, seed=2)
    assert list(c) != first
    fixed = sheaf.TokenBatchSampler(data, max_tokens=300, shuffle=False)
    once = list(fixed)
    fixed.set_epoch(3)
    assert list(fixed) == once


def test_collated_batches_are_padded_pairs(data):
    s = sheaf.TokenBatchSampler(data, max_tokens=400, seed=3)
    for batch in sheaf.batches(data, s):
        for row, i in enumerate(batch["indices"]):
            for key, side in (("source", 0), ("target", 1)):
                ids = data[i][side]
                n = batch[key + "_lengths"][row]
                assert n == len(ids)
                np.testing.assert_array_equal(batch[key][row, :n], ids)
                assert (batch[key][row, n:] == data.pad_id).all()
            assert batch["source"].dtype == np.int64


def test_torch_data_loader_with_worker_processes(data):
    world = 2
    seen = []
    for rank in range(world):
        sampler = sheaf.TokenBatchSampler(data, max_tokens=512, seed=9, rank=rank, world_size=world)
        sampler.set_epoch(2)
        expected = list(sampler)
        loader = data_loader(data, sampler, num_workers=2)
        got = list(loader)
        assert len(got) == len(expected)
        for batch, indices in zip(got, expected):
            assert batch["indices"].tolist() == indices
            assert batch["source"].dtype == torch.int64
            assert batch["source"].shape == (len(indices), int(batch["source_lengths"].max()))
            assert batch["target"].shape == (len(indices), int(batch["target_lengths"].max()))
            for row, i in enumerate(indices):
                src, tgt = data[i]
                n, m = len(src), len(tgt)
                assert batch["source"][row, :n].tolist() == src.tolist()
                assert batch["target"][row, :m].tolist() == tgt.tolist()
                assert (batch["source"][row, n:] == data.pad_id).all()
                assert (batch["target"][row, m:] == data.target_pad_id).all()
            seen += indices
    assert sorted(seen) == list(range(len(data)))


def test_dataset_survives_pickling_for_spawned_workers(data):
    import pickle
    copy = pickle.loads(pickle.dumps(data))
    assert len(copy) == len(data) and copy.pad_id == data.pad_id
    for i in (0, len(data) // 2, len(data) - 1):
        np.testing.assert_array_equal(copy[i][1], data[i][1])
