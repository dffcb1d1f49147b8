"""Text to token ids and back, exactly as a sheaf run's shards hold them."""

import os

from . import _sheaf


class Tokenizer:
    """Encodes text for one side (source or target) of a run.

    Text first goes through the pipeline's text rules (the rewrites of its
    normalize and pattern stages, in pipeline order), then the run's
    vocabulary encodes it, so a model sees at inference the ids it was
    trained on.

        tok = Tokenizer("runs/demo")                         # a run directory
        tok = Tokenizer("runs/demo", side="target")
        tok = Tokenizer(vocab="vocab.shared.txt", pipeline="demo.toml")

    Thread-safe. bos/eos default to what the run's shards stage did.
    """

    def __init__(self, run_dir=None, side="source", vocab=None, pipeline=None):
        if run_dir is not None:
            if vocab is not None or pipeline is not None:
                raise ValueError("give a run directory, or vocab= and pipeline=, not both")
            self._t = _sheaf.Tokenizer.from_run(os.fspath(run_dir), side)
        elif vocab is not None and pipeline is not None:
            self._t = _sheaf.Tokenizer.from_files(os.fspath(vocab), os.fspath(pipeline), side)
        else:
            raise ValueError("give a run directory, or both vocab= and pipeline=")
        self.side = side

    # Ids of the special tokens and the size of the vocabulary.
    @property
    def vocab_size(self):
        return self._t.vocab_size

    @property
    def pad_id(self):
        return self._t.pad_id

    @property
    def unk_id(self):
        return self._t.unk_id

    @property
    def bos_id(self):
        return self._t.bos_id

    @property
    def eos_id(self):
        return self._t.eos_id

    @property
    def vocabulary_checksum(self):
        """XXH3-64 of the vocabulary file, as the shards' headers record it."""
        return self._t.vocabulary_checksum

    @property
    def user_tokens(self):
        """The vocabulary's user-defined tokens (tags), in id order."""
        return self._t.user_tokens

    def _wrap(self, bos, eos, tag):
        if tag is None:
            tag_id = self._t.shard_tag
        elif tag is False or tag == "":
            tag_id = -1
        else:
            tag_id = self._t.user_id(tag)
            if tag_id < 0:
                raise ValueError("%r is not a user-defined token of this vocabulary" % (tag,))
        return (self._t.shard_bos if bos is None else bool(bos),
                self._t.shard_eos if eos is None else bool(eos), tag_id)

    def normalize(self, text):
        """The text as the pipeline would have written it into train.tsv."""
        return self._t.rewrite(text)

    def encode(self, text, bos=None, eos=None, dropout=0.0, seed=0, tag=None):
        """Ids of one text: a NumPy uint32 array. bos, eos and tag (a
        user-defined token put first, after bos) default to what the run's
        shards stage did for this side; tag="" puts none.

        dropout > 0: BPE-dropout (Provilkov et al. 2020), each applicable
        merge left out with that probability at every step, drawn from
        `seed` (the same text, dropout and seed give the same ids)."""
        b, e, t = self._wrap(bos, eos, tag)
        return self._t.encode(text, b, e, t, float(dropout), int(seed))

    def encode_batch(self, texts, bos=None, eos=None, threads=0, dropout=0.0, seed=0, ragged=False, tag=None):
        """Ids of many texts, encoded on `threads` threads (0: all cores) with
        the GIL released: a list of uint32 arrays, or with ragged=True a pair
        (ids, offsets): all ids in one uint32 array, text i's being
        ids[offsets[i]:offsets[i + 1]] (faster: two objects instead of one
        per text). With dropout, text i draws from a seed made of (seed, i),
        whatever the thread count."""
        b, e, t = self._wrap(bos, eos, tag)
        if not isinstance(texts, list):
            texts = list(texts)
        return self._t.encode_batch(texts, b, e, t, int(threads), float(dropout), int(seed), bool(ragged))

    def decode(self, ids, stop_at_eos=True, skip_special=True):
        """Text of ids: up to the first end-of-sequence id, special tokens
        left out (by default). Bytes that do not form UTF-8 become U+FFFD."""
        return self._t.decode(ids, stop_at_eos, skip_special)

    def decode_batch(self, batch, stop_at_eos=True, skip_special=True):
        """Texts of a sequence of id sequences, or of the rows of a 2-D array
        (padding is a special token, so it is left out)."""
        return [self._t.decode(row, stop_at_eos, skip_special) for row in batch]

    def tokens(self, text):
        """The tokens of a text (without bos/eos) as readable strings: the
        escaped form of docs/vocabulary-format.md (\\s for a space)."""
        return self._t.tokens(text)

    def token(self, token_id):
        """One token as a readable string."""
        return self._t.token(int(token_id))
