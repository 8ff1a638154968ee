"""A catalogue on disk for the fuzz mutator: YAML files read into Python values and written back.

The writer emits plain block YAML itself (not yaml.safe_dump): integers of any size in decimal (Python's
``str`` refuses more than 4,300 digits, so GMP writes them), every string double-quoted with escapes, dates
plain, and two kinds of value the mutations need: :class:`Raw` text written as it is, and :class:`Pairs`,
a mapping that may hold one key twice.
"""

from __future__ import annotations

import datetime
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import gmpy2
import yaml
from texts import quote

__all__ = ["Catalogue", "Pairs", "Raw", "emit", "leaves", "set_at", "show"]

_PLAIN_KEY = re.compile(r"[a-z0-9_][a-z0-9_-]*")


class Raw(str):
    """A scalar written into the YAML exactly as it is."""


class Pairs(list):  # type: ignore[type-arg]
    """A mapping written from (key, value) pairs, so that a key may appear twice."""


def show(value: Any) -> str:
    """A short printable form of a value for a mutant's description (long integers abbreviated)."""
    if isinstance(value, int) and not isinstance(value, bool):
        text = str(gmpy2.mpz(value))
        digits = len(text.lstrip("-"))
        return text if digits <= 24 else f"{text[:12]}...{text[-6:]} ({digits} digits)"
    if isinstance(value, list):
        return "[" + ", ".join(show(item) for item in value) + "]"
    if isinstance(value, datetime.date):
        return value.isoformat()
    text = ascii(value)
    return text if len(text) <= 80 else f"{text[:60]}...{text[-12:]} ({len(text)} characters)"


def _items(value: Any) -> list[tuple[Any, Any]]:
    return list(value) if isinstance(value, Pairs) else list(value.items())


def _scalar(value: Any) -> str:
    if isinstance(value, Raw):
        return str(value)
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(gmpy2.mpz(value))
    if isinstance(value, datetime.date):
        return value.isoformat()
    if isinstance(value, str):
        return quote(value)
    if isinstance(value, dict | list) and not value:
        return "{}" if isinstance(value, dict) else "[]"
    raise TypeError(f"cannot write {type(value).__name__}")


def _block(value: Any) -> bool:
    return isinstance(value, dict | list) and bool(value)


def _key(key: Any) -> str:
    text = _scalar(key)
    return text if not isinstance(key, str) or _PLAIN_KEY.fullmatch(key) else quote(key)


def _lines(value: Any, indent: int) -> list[str]:
    pad = " " * indent
    lines: list[str] = []
    if isinstance(value, dict):  # Pairs is a list: it goes through the first branch on purpose
        value = Pairs(value.items())
    if isinstance(value, Pairs):
        for key, item in value:
            if _block(item):
                lines.append(f"{pad}{_key(key)}:")
                lines += _lines(item, indent + 2)
            else:
                lines.append(f"{pad}{_key(key)}: {_scalar(item)}")
        return lines
    for item in value:
        if _block(item):
            inner = _lines(item, indent + 2)
            inner[0] = f"{pad}- {inner[0][indent + 2 :]}"
            lines += inner
        else:
            lines.append(f"{pad}- {_scalar(item)}")
    return lines


def emit(document: Any) -> str:
    """YAML text for a document: a mapping, a list or a scalar."""
    if _block(document):
        return "\n".join(_lines(document, 0)) + "\n"
    return _scalar(document) + "\n"


def leaves(value: Any, path: tuple[Any, ...] = ()) -> Iterator[tuple[tuple[Any, ...], Any]]:
    """Every scalar of a document with its path of keys and list indices."""
    if isinstance(value, dict):
        for key, item in value.items():
            yield from leaves(item, (*path, key))
    elif isinstance(value, list):
        for index, item in enumerate(value):
            yield from leaves(item, (*path, index))
    else:
        yield path, value


def set_at(document: Any, path: tuple[Any, ...], value: Any) -> None:
    for step in path[:-1]:
        document = document[step]
    document[path[-1]] = value


class Catalogue:
    """The files of one mutant catalogue under ``root``, read and written by relative path."""

    def __init__(self, root: Path) -> None:
        self.root = root

    def files(self, suffix: str = ".yaml") -> list[str]:
        found = (p for p in self.root.rglob("*") if p.is_file() and p.name.endswith(suffix))
        return sorted(p.relative_to(self.root).as_posix() for p in found)

    def cycle_files(self, map_id: str | None = None) -> list[str]:
        return [f for f in self.files() if f.startswith(f"cycles/{map_id}/" if map_id else "cycles/")]

    def load(self, rel: str) -> Any:
        return yaml.safe_load((self.root / rel).read_text(encoding="utf-8"))

    def save(self, rel: str, document: Any) -> None:
        self.write(rel, emit(document))

    def write(self, rel: str, content: str | bytes) -> None:
        path = self.root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, str):
            content = content.encode("utf-8", "surrogatepass")
        path.write_bytes(content)

    def read(self, rel: str) -> bytes:
        return (self.root / rel).read_bytes()
