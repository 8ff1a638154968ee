"""Findable and citable: the record's description for search engines, citation tools and crawlers.

Three texts for the built site, each a pure function of the record and the edition being built:

- ``dataset_jsonld`` / ``jsonld_script``: a schema.org ``Dataset`` (https://schema.org/Dataset) as JSON-LD
  for the home page, with one ``DataDownload`` per export;
- ``citation_cff``: ``CITATION.cff`` in the Citation File Format 1.2.0, a YAML file;
- ``robots_txt``: ``robots.txt`` (RFC 9309) allowing everything and naming the sitemap (sitemaps.org).

Every text is deterministic: the same inputs always give the same bytes (no build time, fixed key order).
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import date, datetime
from typing import Any
from urllib.parse import quote

from markupsafe import Markup

from builder.catalogue.entries import yaml_string
from builder.catalogue.model import Record
from builder.site.cff_licences import CFF_LICENCES
from builder.wording import count

__all__ = [
    "KEYWORDS",
    "Download",
    "citation_cff",
    "dataset_jsonld",
    "jsonld_script",
    "robots_txt",
    "size_text",
]

#: Subject keywords for both the JSON-LD and CITATION.cff: the usual names of the problem and its objects.
KEYWORDS: tuple[str, ...] = ("3x+1 problem", "Collatz problem", "Collatz-type maps", "cycles", "integer dynamics")

# The format's own identifier for this version; its schema's pattern for cff-version is exactly this.
_CFF_VERSION = "1.2.0"
_CFF_MESSAGE = "When you use this record, please cite it with the metadata in this file, naming the version you used."

# What the record's loader guarantees of base_url (http or https, ending in "/", no spaces or controls);
# re-checked here because a stray newline would inject a line into robots.txt.
_BASE_URL = re.compile(r"https?://[^\s\x00-\x1f\x7f]+/")


@dataclass(frozen=True, slots=True)
class Download:
    """One file a reader can download: its site-relative ``path`` (e.g. ``data/catalogue.json``),
    its media type (e.g. ``text/csv``) and a short human ``name``."""

    path: str
    media_type: str
    name: str


def _check_base_url(base_url: str) -> None:
    assert _BASE_URL.fullmatch(base_url), f"expected an http(s) URL ending in '/', got {base_url!r}"


def _absolute(base_url: str | None, path: str) -> str:
    """``path`` (site-relative, inside the site) as an absolute URL under ``base_url``; without a published
    address, as it is (relative to the site's root, where the home page is)."""
    segments = path.split("/")
    assert path and not path.startswith("/") and ":" not in segments[0], f"expected a site-relative path, got {path!r}"
    assert not {"", ".", ".."} & set(segments), f"expected a plain path inside the site, got {path!r}"
    return (base_url or "") + quote(path, safe="/")


def _iso(day: date) -> str:
    # A datetime is a date too, but would print its time of day: only calendar dates belong here.
    assert not isinstance(day, datetime), f"expected a date, got the datetime {day!r}"
    return day.isoformat()


def _check_keywords(keywords: Sequence[str]) -> None:
    # The CFF schema wants keywords unique and non-empty; the same list goes into the JSON-LD.
    assert all(keywords) and len(set(keywords)) == len(keywords), f"expected distinct keywords, got {keywords!r}"


def size_text(*, cycles: int, maps: int) -> str:
    """The record's size in words, e.g. ``"702 cycles of 70 maps"`` (singular for 1)."""
    assert cycles >= 0 and maps >= 0, (cycles, maps)
    return f"{count(cycles, 'cycle')} of {count(maps, 'map')}"


def dataset_jsonld(
    record: Record,
    *,
    release: str,
    released_on: date | None,
    modified_on: date | None,
    downloads: Sequence[Download],
    cycles: int,
    maps: int,
    keywords: Sequence[str] = KEYWORDS,
) -> dict[str, Any]:
    """The record as a schema.org ``Dataset`` (JSON-LD data, ready for ``jsonld_script``).

    Uses only schema.org terms: name, description, url (the site's base URL, when it has one), license (the
    SPDX page of the licence), version (``release``), creator and publisher (an ``Organization`` named by the
    maintainers), isAccessibleForFree, keywords, size (``size_text``), datePublished / dateModified as ISO
    dates when given, and distribution: one ``DataDownload`` per download, with an absolute contentUrl
    (relative to the home page while the record has no published address).
    """
    if record.base_url is not None:
        _check_base_url(record.base_url)
    _check_keywords(keywords)
    assert release, "expected a release name, got an empty string"
    keeper = {"@type": "Organization", "name": record.maintainers}
    data: dict[str, Any] = {
        "@context": "https://schema.org",
        "@type": "Dataset",
        "name": record.title,
        "description": record.description,
        "license": record.licence_url,
        "version": release,
        "creator": keeper,
        "publisher": dict(keeper),
        "isAccessibleForFree": True,
        "keywords": list(keywords),
        "size": size_text(cycles=cycles, maps=maps),
        "distribution": [
            {
                "@type": "DataDownload",
                "name": d.name,
                "contentUrl": _absolute(record.base_url, d.path),
                "encodingFormat": d.media_type,
            }
            for d in downloads
        ],
    }
    if record.base_url is not None:
        data["url"] = record.base_url
    if released_on is not None:
        data["datePublished"] = _iso(released_on)
    if modified_on is not None:
        data["dateModified"] = _iso(modified_on)
    return data


# In a script element's text, "</script" ends the element and "<!--" opens an escaped state (WHATWG HTML,
# "script data" states); U+2028/U+2029 end a line in older JavaScript parsers.  None of these characters is
# JSON syntax, so they only occur inside strings, where a \u escape means the same character.
_SCRIPT_UNSAFE = {ord(c): f"\\u{ord(c):04x}" for c in "<>&\u2028\u2029"}


def jsonld_script(data: Mapping[str, Any]) -> Markup:
    """``<script type="application/ld+json">`` holding ``data`` as JSON (sorted keys, indented).

    Whatever the strings hold, the text cannot end the script element or open a comment: ``<``, ``>``,
    ``&``, U+2028 and U+2029 are written as ``\\u`` escapes, which every JSON parser reads back unchanged;
    so the text is returned as ``markupsafe.Markup``, safe to place in a page as it is.
    """
    text = json.dumps(data, ensure_ascii=False, sort_keys=True, indent=1, allow_nan=False)
    return Markup(f'<script type="application/ld+json">\n{text.translate(_SCRIPT_UNSAFE)}\n</script>')


def citation_cff(
    record: Record,
    *,
    release: str,
    released_on: date | None,
    commit: str | None,
    keywords: Sequence[str] = KEYWORDS,
) -> str:
    """``CITATION.cff`` for the record at ``release``: Citation File Format 1.2.0, type dataset.

    Fields: cff-version, type, message, title, version, date-released (when known), commit (when known),
    authors (the maintainers as one entity), abstract (the description), license (the SPDX identifier;
    one newer than the format's 2021 licence list goes in license-url as its SPDX page), url (when the
    record has a published address) and
    keywords.  Every value is a double-quoted string (``yaml_string``), so YAML reads each back as
    exactly that string: a version ``1.0`` stays text and a date stays the string the schema expects.
    Ends with a newline.
    """
    if record.base_url is not None:
        _check_base_url(record.base_url)
    _check_keywords(keywords)
    assert release, "expected a release name, got an empty string"
    assert commit is None or commit, "expected a commit id or None, got an empty string"
    q = yaml_string
    lines = [
        "# How to cite this record: Citation File Format 1.2.0 (https://citation-file-format.github.io/).",
        f"cff-version: {q(_CFF_VERSION)}",
        f"type: {q('dataset')}",
        f"message: {q(_CFF_MESSAGE)}",
        f"title: {q(record.title)}",
        f"version: {q(release)}",
    ]
    if released_on is not None:
        lines.append(f"date-released: {q(_iso(released_on))}")
    if commit is not None:
        lines.append(f"commit: {q(commit)}")
    lines += [
        "authors:",
        f"  - name: {q(record.maintainers)}",
        f"abstract: {q(record.description)}",
        # CFF 1.2.0 froze its licence list in 2021; a newer SPDX identifier goes in as the URL of its
        # page on the SPDX License List, the schema's "license-url", so the file still validates.
        f"license: {q(record.licence)}" if record.licence in CFF_LICENCES else f"license-url: {q(record.licence_url)}",
    ]
    if record.base_url is not None:  # none while the record has no published address
        lines.append(f"url: {q(record.base_url)}")
    if keywords:
        lines.append("keywords:")
        lines += [f"  - {q(k)}" for k in keywords]
    return "\n".join(lines) + "\n"


def robots_txt(base_url: str | None) -> str:
    """``robots.txt`` letting every crawler fetch everything (RFC 9309), with a ``Sitemap:`` line for
    ``<base_url>sitemap.xml`` when the site's address is known (sitemaps.org wants an absolute URL)."""
    lines = ["# Every crawler may fetch every page of this record.", "User-agent: *", "Allow: /"]
    if base_url is not None:
        _check_base_url(base_url)
        lines += ["", f"Sitemap: {base_url}sitemap.xml"]
    return "\n".join(lines) + "\n"
