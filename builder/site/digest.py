"""Digests of what pages are made from, for incremental builds (builder.site.render).

``stable_digest`` reads plain data (numbers, text, dates, paths, tuples, lists, dicts and frozen
dataclasses of them) into one SHA-256.  The data's repr() is that reading for every type handed here
(pickle is not: its bytes depend on which equal objects happen to be shared), and it is fast; but
repr refuses integers of more than 4,300 digits, so such data is read again item by item, with
integers as hexadecimal, which has no such limit.  On that path a type it does not know is an error,
and sets are refused on both: their order is not a property of their contents.
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
    elif dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        h.update(b"<" + type(obj).__qualname__.encode() + b">")
        for f in dataclasses.fields(obj):
            h.update(f.name.encode() + b"=")
            _feed(h, getattr(obj, f.name))
    else:
        raise TypeError(f"expected plain data to digest, got {type(obj).__qualname__}")


def stable_digest(obj: object) -> str:
    """The SHA-256 of ``obj`` read as plain data (hexadecimal)."""
    try:
        text = repr(obj)
    except ValueError:  # an integer past the interpreter's limit for decimal text
        h = hashlib.sha256(b"long:")
        _feed(h, obj)
        return h.hexdigest()
    return hashlib.sha256(b"repr:" + text.encode("utf-8", "surrogatepass")).hexdigest()
