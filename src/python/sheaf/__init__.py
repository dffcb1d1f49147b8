"""sheaf from Python: encode and decode text as a run did, read its shards,
and batch them for a training loop. See docs/python.md.

    import sheaf
    tok = sheaf.Tokenizer("runs/demo")
    ids = tok.encode("The garden opens at nine.")
    text = tok.decode(ids)
"""

from .data import SplitDataset, TokenBatchSampler, batches, collate, pad
from .shards import Shard, ShardError
from .tokenizer import Tokenizer

__all__ = ["Shard", "ShardError", "SplitDataset", "TokenBatchSampler", "Tokenizer", "batches", "collate", "pad"]
