"""Verification outcomes as bytes and back, for the cache (:mod:`builder.catalogue.cache`): pickles that load fast.

A warm cache reads one outcome per file of the catalogue, so loading dominates its time.  Dataclasses
(the model objects, problems, entries as written) are pickled field by field and restored by a
function made once per class that sets each field in turn, instead of the generic ``__setstate__``
of ``dataclasses``, which looks the fields up again for every object; named tuples are restored by
``tuple.__new__``; equal instances of a class marked ``__shared_when_equal__`` load as one object.  A
file's own path, which its problems and model objects all name, is written as a reference to the file
(its path from the catalogue root) and restored as the path it is read at, which the cache key makes
equal to it.
"""

from __future__ import annotations

import contextlib
import dataclasses
import io
import pickle
import threading
import weakref
from collections.abc import Mapping
from operator import attrgetter
from pathlib import Path
from typing import Any

__all__ = ["PathsUnder", "dumps", "loads"]


class _Pickler(pickle.Pickler):
    """Pickles what loads fast: dataclasses field by field (restored by code made for each class, not by the
    generic ``__setstate__``), named tuples as tuples, and the paths of ``rels`` as references to files."""

    def __init__(self, out: io.BytesIO, rels: Mapping[Path, str]) -> None:
        super().__init__(out, pickle.HIGHEST_PROTOCOL)
        self.dispatch_table = _Reducers(rels)


class _Reducers(dict[type, Any]):
    """How each class is pickled (a pickler's ``dispatch_table``), made on first use of the class."""

    def __init__(self, rels: Mapping[Path, str]) -> None:
        super().__init__()
        self.rels = rels

    def __missing__(self, cls: type) -> Any:
        if hasattr(cls, "__dataclass_fields__"):
            values = attrgetter(*_fields(cls))
            rebuild = _rebuild_shared if getattr(cls, "__shared_when_equal__", False) else _rebuild

            def reduce(obj: Any) -> Any:
                return rebuild, (cls, values(obj))

        elif issubclass(cls, tuple) and hasattr(cls, "_fields"):

            def reduce(obj: Any) -> Any:
                return _new_tuple, (cls, tuple(obj))

        elif cls is _PATH:

            def reduce(obj: Any) -> Any:
                rel = self.rels.get(obj)
                return obj.__reduce_ex__(pickle.HIGHEST_PROTOCOL) if rel is None else (_here, (rel,))

        else:
            raise KeyError(cls)  # pickled as pickle would without a table (dates, enumerations, classes...)
        self[cls] = reduce
        return reduce


_PATH = type(Path())
_new_tuple = tuple.__new__
_here_now = threading.local()


def _here(rel: str) -> Path | None:
    """The path the file ``rel`` is read at (None for a file no longer there, whose outcome is not used)."""
    paths: Mapping[str, Path] = _here_now.paths
    try:
        return paths[rel]  # made now by a PathsUnder
    except KeyError:
        return None


class PathsUnder(dict[str, Path]):
    """The path of each file of the catalogue at ``root`` by its path from the root (``rel``, POSIX): those
    given, and ``root / rel`` for any other, made when first asked for (``paths[rel]``).

    Every path given must be ``root / rel``, as the catalogue's listing makes them: then two of these with
    one root give equal paths for every file, and what was loaded with one holds for the other (the cache
    loads what it keeps before the files are listed, builder.catalogue.cache).
    """

    def __init__(self, root: Path, known: Mapping[str, Path] | None = None) -> None:
        super().__init__(known or {})
        self.root = root

    def __missing__(self, rel: str) -> Path:
        path = self[rel] = self.root / rel
        return path


def _fields(cls: type) -> tuple[str, ...]:
    names = _FIELDS.get(cls)
    if names is None:
        names = _FIELDS[cls] = tuple(f.name for f in dataclasses.fields(cls))
    return names


_FIELDS: dict[type, tuple[str, ...]] = {}


class _Makers(dict[type, Any]):
    """For each dataclass, a function setting each field of a new instance in turn (frozen ones included)."""

    def __missing__(self, cls: type) -> Any:
        lines = [f"    set(obj, {name!r}, values[{i}])" for i, name in enumerate(_fields(cls))]
        code = "def make(values):\n    obj = new(cls)\n" + "\n".join(lines) + "\n    return obj\n"
        scope = {"new": object.__new__, "set": object.__setattr__, "cls": cls}
        exec(code, scope)  # as dataclasses makes __init__: one straight-line function per class
        self[cls] = scope["make"]
        return scope["make"]


_MAKERS = _Makers()


def _rebuild(cls: type, values: tuple[Any, ...]) -> Any:
    return _MAKERS[cls](values)


#: The loaded instances of the classes that say ``__shared_when_equal__`` (frozen, compared by value), by
#: class and fields, while any is alive: equal ones load as one object.  A catalogue's cycles found by one
#: search have one provenance, which 50,000 cycles would otherwise each hold a copy of.
_LOADED: weakref.WeakValueDictionary[tuple[type, tuple[Any, ...]], Any] = weakref.WeakValueDictionary()


def _rebuild_shared(cls: type, values: tuple[Any, ...]) -> Any:
    key = (cls, values)
    try:
        return _LOADED[key]
    except (KeyError, TypeError):  # not loaded yet, or fields that cannot be compared by hash
        obj = _MAKERS[cls](values)
        with contextlib.suppress(TypeError):
            _LOADED[key] = obj
        return obj


def dumps(value: Any, rels: Mapping[Path, str]) -> bytes:
    """``value`` as bytes; each path of ``rels`` in it as a reference to the file (``rels[path]``), not the path."""
    out = io.BytesIO()
    _Pickler(out, rels).dump(value)
    return out.getvalue()


def loads(data: bytes, paths: Mapping[str, Path]) -> Any | None:
    """The value of ``dumps(value, ...)``, each file referred to by the path ``paths`` gives it; None if the bytes
    cannot be read.

    Only for bytes this program wrote (the cache checks their signature first): unpickling runs code.
    """
    _here_now.paths = paths
    try:
        return pickle.loads(data)
    except Exception:  # a row written by other code under the same version, cut short...: checked again
        return None
    finally:
        _here_now.paths = {}
