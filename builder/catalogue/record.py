"""The record's own description (``record.yaml``): title, maintainers, licence, address and version."""

from __future__ import annotations

import re

from builder.catalogue.fields import RECORD
from builder.catalogue.files import RawFile
from builder.catalogue.licences import check_licence
from builder.catalogue.model import Record
from builder.catalogue.nodes import Node, Scalar
from builder.catalogue.reader import EntryReader, describe, open_entry, short, yaml_type
from builder.catalogue.versions import UNRELEASED, version_problem
from builder.errors import Problem

__all__ = ["RECORD_FILE", "SITE_ADDRESS", "check_record", "placeholder_address", "site_address"]

RECORD_FILE = "record.yaml"
_BASE_URL = re.compile(r"https?://[A-Za-z0-9.-]+(?::[0-9]{1,5})?(?:/[A-Za-z0-9._~%!$&'()*+,;=:@/-]*)?")


def check_record(raw: RawFile, problems: list[Problem]) -> Record | None:
    """The record's description, or None after recording what is wrong with it."""
    opened = open_entry(raw.path, raw.root, problems, RECORD)
    if opened is None:
        return None
    doc, f = opened
    v = doc.values(f, RECORD)
    title, description, maintainers = v.get("title"), v.get("description"), v.get("maintainers")
    licence = _record_licence(doc, f["licence"]) if "licence" in f else None
    base_url = _record_base_url(doc, f["base_url"]) if "base_url" in f else None
    if "base_url" not in f:
        assert raw.root is not None, "open_entry found fields"
        doc.warn(raw.root, (), f"no base_url: {_UNPUBLISHED}", "no-address")
    version = _record_version(doc, f["version"]) if "version" in f else None
    credit = False
    if "credit_committers" in f:
        node = f["credit_committers"]
        if isinstance(node, Scalar) and node.plain and node.value in ("true", "false"):
            credit = node.value == "true"
        else:
            doc.error(node, ("credit_committers",), f"expected true or false, got {describe(node)}")
    if doc.failed:
        return None
    assert title and description and maintainers and licence and version
    return Record(title.strip(), " ".join(description.split()), maintainers.strip(), licence, base_url, version, credit)


def _record_licence(doc: EntryReader, node: Node) -> str | None:
    text = doc.text(node, ("licence",), one_line=True)
    if text is None:
        return None
    text = text.strip()
    found = check_licence(text)
    if not found.known:
        doc.error(
            node,
            ("licence",),
            f"expected an SPDX licence identifier (https://spdx.org/licenses/), such as CC-BY-4.0 or CC0-1.0, "
            f"got '{short(text)}'",
            "unknown-licence",
        )
        return None
    assert found.spelling is not None
    if found.spelling != text:
        doc.error(
            node, ("licence",), f"expected the SPDX spelling '{found.spelling}', got '{short(text)}'", "licence-case"
        )
        return None
    if found.deprecated:
        doc.error(
            node,
            ("licence",),
            f"expected a current SPDX licence identifier, got the deprecated '{text}' ({found.name}); "
            f"use its replacement from https://spdx.org/licenses/",
            "deprecated-licence",
        )
        return None
    return found.spelling


def site_address(text: str) -> str | None:
    """``text`` as the site's address (an http or https URL with no query or fragment, ending in "/"), or None."""
    text = text.strip()
    if _BASE_URL.fullmatch(text) is None:
        return None
    return text if text.endswith("/") else text + "/"


#: What a site address must be, for "expected X, got Y" messages.
SITE_ADDRESS = (
    "the http or https address the site is published at, such as https://example.org/cycles/, with no query or fragment"
)


# Names reserved for examples and tests (RFC 2606, section 2 and 3; RFC 6761, section 6): an address under
# one of them is the starter's placeholder, never where a record is published.
_RESERVED_DOMAINS = ("example.com", "example.net", "example.org")
_RESERVED_TOP = ("example", "invalid", "test")
_UNPUBLISHED = (
    "the site is built with relative permalinks and says the record has no published address yet; "
    "set base_url to the address the site is published at (or give build --base-url)"
)


def placeholder_address(address: str) -> bool:
    """Whether a site address's host is a name reserved for examples (RFC 2606): a placeholder, not an address."""
    host = address.split("://", 1)[1].split("/", 1)[0].rsplit(":", 1)[0].lower().rstrip(".")
    if host.rsplit(".", 1)[-1] in _RESERVED_TOP:
        return True
    return any(host == name or host.endswith("." + name) for name in _RESERVED_DOMAINS)


def _record_base_url(doc: EntryReader, node: Node) -> str | None:
    text = doc.text(node, ("base_url",), one_line=True)
    if text is None:
        return None
    address = site_address(text)
    if address is None:
        doc.error(node, ("base_url",), f"expected {SITE_ADDRESS}, got '{short(text.strip())}'", "bad-base-url")
    elif placeholder_address(address):
        doc.warn(
            node,
            ("base_url",),
            f"expected the address the site is published at, got the placeholder '{short(address)}' (a name "
            f"reserved for examples, RFC 2606): {_UNPUBLISHED}",
            "placeholder-address",
        )
        return None
    return address


def _record_version(doc: EntryReader, node: Node) -> str | None:
    if isinstance(node, Scalar) and node.plain and yaml_type(node) in ("int", "float"):
        doc.error(
            node,
            ("version",),
            f"expected a version as text, got the number {short(node.value)} (YAML would read 1.10 as 1.1); "
            f'write it in quotes: version: "{short(node.value)}"',
            "unquoted-version",
        )
        return None
    text = doc.text(node, ("version",), one_line=True)
    if text is None:
        return None
    text = text.strip()
    why = version_problem(text)
    if why is not None:
        doc.error(
            node,
            ("version",),
            f"expected a version of letters, digits, dots, hyphens and underscores such as 2026.1 "
            f"(it names the git tag record-<version>), got '{short(text)}'"
            + (f" ({why})" if text.lower() == UNRELEASED else ""),
            "bad-version",
        )
        return None
    return text
