"""Digests of what pages are made from, for incremental builds (builder.site.render).

``stable_digest`` reads plain data (numbers, text, dates, paths, tuples, lists, dicts, sets and frozen
dataclasses of them) into one SHA-256.  It is written here rather than taken from repr() or pickle: repr
refuses integers of more than 4,300 digits, and pickle's bytes depend on which equal objects happen to
be shared.  Integers go in as hexadecimal, which has no such limit.  A type it does not know is an
error, so a page kind cannot hand it something whose text might change between equal values.
"""

from __future__ import annotations

import dataclasses
import hashlib
from datetime import date
from enum import Enum
from pathlib import PurePath
from typing import Any

__all__ = ["stable_digest"]


def _feed(h: Any, obj: object) -> None:
    # kept iterative-free but shallow: the data handed here nests a few levels deep at most
    if obj is None or isinstance(obj, bool):
        h.update(b"N" if obj is None else (b"T" if obj else b"F"))
    elif isinstance(obj, int):
        h.update(b"i" + format(obj, "x").encode() + b";")
    elif isinstance(obj, str):
        data = obj.encode("utf-8", "surrogatepass")
        h.update(b"s" + str(len(data)).encode() + b":" + data)
    elif isinstance(obj, float):
        h.update(b"f" + repr(obj).encode() + b";")
    elif isinstance(obj, bytes):
        h.update(b"b" + str(len(obj)).encode() + b":" + obj)
    elif isinstance(obj, date):
        h.update(b"d" + obj.isoformat().encode() + b";")
    elif isinstance(obj, PurePath):
        _feed(h, obj.as_posix())
    elif isinstance(obj, Enum):
        _feed(h, (type(obj).__name__, obj.value))
    elif isinstance(obj, (tuple, list)):
        h.update(b"(" + str(len(obj)).encode() + b":")
        for item in obj:
            _feed(h, item)
        h.update(b")")
    elif isinstance(obj, dict):
        h.update(b"{" + str(len(obj)).encode() + b":")
        for key, value in obj.items():
            _feed(h, key)
            _feed(h, value)
        h.update(b"}")
    elif isinstance(obj, (set, frozenset)):
        _feed(h, sorted(stable_digest(item) for item in obj))
    elif dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        h.update(b"<" + type(obj).__qualname__.encode() + b">")
        for f in dataclasses.fields(obj):
            h.update(f.name.encode() + b"=")
            _feed(h, getattr(obj, f.name))
    else:
        raise TypeError(f"expected plain data to digest, got {type(obj).__qualname__}")


def stable_digest(obj: object) -> str:
    """The SHA-256 of ``obj`` read as plain data (hexadecimal)."""
    h = hashlib.sha256()
    _feed(h, obj)
    return h.hexdigest()
