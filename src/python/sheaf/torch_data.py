"""A thin PyTorch adapter over sheaf.data: a map-style dataset and a
DataLoader whose batches are dicts of padded int64 tensors.

    from sheaf.torch_data import data_loader
    data = sheaf.SplitDataset("runs/demo", "train")
    sampler = sheaf.TokenBatchSampler(data, max_tokens=4096, seed=1, rank=rank, world_size=world)
    loader = data_loader(data, sampler, num_workers=2)
    for epoch in range(epochs):
        sampler.set_epoch(epoch)
        for batch in loader:
            batch["source"], batch["target"]   # torch.int64 [pairs, longest]
"""

import numpy as np
import torch
import torch.utils.data

from .data import pad


class PairDataset(torch.utils.data.Dataset):
    """Map-style torch dataset over a SplitDataset: item i is
    (i, source_ids, target_ids) as int64 NumPy arrays."""

    def __init__(self, split_dataset):
        self.data = split_dataset

    def __len__(self):
        return len(self.data)

    def __getitem__(self, i):
        src, tgt = self.data[i]
        return i, src.astype(np.int64), tgt.astype(np.int64)


class Collate:
    """Pads a list of PairDataset items into a dict of tensors (a class, not a
    closure, so that worker processes can receive it)."""

    def __init__(self, pad_id, target_pad_id):
        self.pad_id = pad_id
        self.target_pad_id = target_pad_id

    def __call__(self, items):
        source, source_lengths = pad([it[1] for it in items], self.pad_id)
        target, target_lengths = pad([it[2] for it in items], self.target_pad_id)
        return {"source": torch.from_numpy(source), "source_lengths": torch.from_numpy(source_lengths),
                "target": torch.from_numpy(target), "target_lengths": torch.from_numpy(target_lengths),
                "indices": torch.tensor([it[0] for it in items], dtype=torch.int64)}


def data_loader(split_dataset, sampler, num_workers=0, **kwargs):
    """A torch DataLoader that batches with `sampler` (a TokenBatchSampler;
    call its set_epoch before each epoch) and pads with the run's pad ids."""
    return torch.utils.data.DataLoader(PairDataset(split_dataset), batch_sampler=sampler,
                                       collate_fn=Collate(split_dataset.pad_id, split_dataset.target_pad_id),
                                       num_workers=num_workers, **kwargs)
