"""The bibliography (``references.yaml``): keys mapped to the works that entries cite."""

from __future__ import annotations

import re

from builder.arith.integers import show
from builder.catalogue.fields import REFERENCE, REFERENCE_STATUSES
from builder.catalogue.files import ID_PATTERN, RawFile
from builder.catalogue.model import Reference
from builder.catalogue.nodes import MappingNode
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
        f = doc.fields(node, (key,), REFERENCE)
        if f is None:
            continue
        before = len(problems)
        authors = (
            doc.listing(f["authors"], (key, "authors"), lambda n, p: doc.text(n, p, one_line=True))
            if "authors" in f
            else None
        )
        if authors is not None and not authors:
            doc.error(f["authors"], (key, "authors"), "expected at least one author, got an empty list")
        title = doc.text(f["title"], (key, "title"), one_line=True) if "title" in f else None
        venue = doc.text(f["venue"], (key, "venue"), one_line=True) if "venue" in f else None
        year = doc.integer(f["year"], (key, "year")) if "year" in f else None
        if year is not None and not 1000 <= year <= 9999:
            doc.error(f["year"], (key, "year"), f"expected a four-digit year, got {show(year)}")
        doi = url = status = note = None
        if "doi" in f:
            doi = doc.text(f["doi"], (key, "doi"), one_line=True)
            if doi is not None and _DOI.fullmatch(doi) is None:
                doc.error(f["doi"], (key, "doi"), f"expected a DOI such as 10.2307/2322189, got '{short(doi)}'")
        if "url" in f:
            url = doc.text(f["url"], (key, "url"), one_line=True)
            if url is not None and _URL.fullmatch(url) is None:
                doc.error(f["url"], (key, "url"), f"expected an http or https address, got '{short(url)}'")
        if "status" in f:
            status = doc.text(f["status"], (key, "status"))
            if status is not None and status not in REFERENCE_STATUSES:
                doc.error(
                    f["status"], (key, "status"), f"expected one of {', '.join(REFERENCE_STATUSES)}, got '{short(status)}'"
                )
        if "note" in f:
            note = doc.text(f["note"], (key, "note"))
        if len(problems) == before:
            assert authors is not None and title is not None and venue is not None and year is not None
            out[key] = Reference(key, tuple(authors), title, venue, year, doi, url, status, note)
    return out
