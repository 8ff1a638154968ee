"""Digests of what pages are made from, for incremental builds (builder.site.render).

``stable_digest`` reads plain data (numbers of any size, text, bytes, dates, paths, enums, tuples,
lists, dicts and dataclasses of them) into one SHA-256, through pickle's encoding of it written
without its memo.  With the memo, pickle's bytes would depend on which equal objects happen to be
shared; without it, equal data gives equal bytes, and the encoding is made in C (repr() of a
dataclass runs Python code per object, and refuses integers of more than 4,300 digits).  Sets must
not be handed here: their order is not a property of their contents (it changes with the process's
hash seed), so neither is their encoding.  tests/site/test_incremental.py digests every task's inputs
under two hash seeds.
"""

from __future__ import annotations

import hashlib
import pickle

__all__ = ["stable_digest"]


class _Digest:
    """What the pickler writes to: the SHA-256 of every byte."""

    def __init__(self) -> None:
        self.sha256 = hashlib.sha256(b"pickle-5:")

    def write(self, data: bytes) -> int:
        self.sha256.update(data)
        return len(data)


def stable_digest(obj: object) -> str:
    """The SHA-256 of ``obj`` read as plain data (hexadecimal)."""
    sink = _Digest()
    pickler = pickle.Pickler(sink, protocol=5)
    pickler.fast = True  # no memo: the bytes do not depend on which equal objects are one object
    try:
        pickler.dump(obj)
    except (pickle.PicklingError, AttributeError) as exc:
        raise TypeError(f"expected plain data to digest, got data pickle cannot write: {exc}") from None
    return sink.sha256.hexdigest()
