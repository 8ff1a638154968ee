"""The bibliography (``references.yaml``): keys mapped to the works that entries cite."""

from __future__ import annotations

import re
from typing import Any

from builder.arith.integers import show
from builder.catalogue.fields import REFERENCE, REFERENCE_STATUSES
from builder.catalogue.files import ID_PATTERN, RawFile
from builder.catalogue.model import Reference
from builder.catalogue.nodes import MappingNode, Node
from builder.catalogue.reader import EntryReader, describe, short
from builder.errors import Problem

__all__ = ["check_references"]

_DOI = re.compile(r"10\.[0-9]{4,9}/\S+")
_URL = re.compile(r"https?://[^\s/$.?#][^\s]*", re.IGNORECASE)


def check_references(raw: RawFile, problems: list[Problem]) -> dict[str, Reference]:
    doc = EntryReader(raw.path, problems)
    out: dict[str, Reference] = {}
    root = raw.root
    if root is None:
        return out
    if not isinstance(root, MappingNode):
        doc.error(root, (), f"expected a mapping from reference keys to references, got {describe(root)}")
        return out
    for key, (key_node, node) in root.entries.items():
        if ID_PATTERN.fullmatch(key) is None:
            doc.error(
                key_node,
                (key,),
                f"expected a key of lowercase letters, digits and hyphens, got '{short(key)}'",
                "bad-id",
            )
            continue
        before = len(problems)
        f = doc.fields(node, (key,), REFERENCE)
        if f is None or len(problems) > before:
            continue
        v = doc.values(f, REFERENCE, (key,))
        _check_reference(doc, key, f, v)
        if len(problems) == before:
            authors, title, venue, year = v["authors"], v["title"], v["venue"], v["year"]
            assert authors is not None and title is not None and venue is not None and year is not None
            ref = Reference(
                key, tuple(authors), title, venue, year, v.get("doi"), v.get("url"), v.get("status"), v.get("note")
            )
            out[key] = ref
    return out


def _check_reference(doc: EntryReader, key: str, f: dict[str, Node], v: dict[str, Any]) -> None:
    """What the field types alone do not say: a first author, a four-digit year, DOI and URL forms, a status."""
    if v.get("authors") == []:
        doc.error(f["authors"], (key, "authors"), "expected at least one author, got an empty list")
    year = v.get("year")
    if year is not None and not 1000 <= year <= 9999:
        doc.error(f["year"], (key, "year"), f"expected a four-digit year, got {show(year)}")
    doi, url, status = v.get("doi"), v.get("url"), v.get("status")
    if doi is not None and _DOI.fullmatch(doi) is None:
        doc.error(f["doi"], (key, "doi"), f"expected a DOI such as 10.2307/2322189, got '{short(doi)}'")
    if url is not None and _URL.fullmatch(url) is None:
        doc.error(f["url"], (key, "url"), f"expected an http or https address, got '{short(url)}'")
    if status is not None and status not in REFERENCE_STATUSES:
        message = f"expected one of {', '.join(REFERENCE_STATUSES)}, got '{short(status)}'"
        doc.error(f["status"], (key, "status"), message)
