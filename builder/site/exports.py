"""Machine-readable exports of the verified record: JSON, CSV, the search index, Atom, sitemap.

Every text is produced deterministically (sorted keys, fixed formatting, no
build time): the same catalogue always gives the same bytes.
"""

from __future__ import annotations

import csv
import io
import json
import uuid
from typing import Any
from xml.sax.saxutils import escape, quoteattr

from builder.site.views import SiteViews

__all__ = ["CSV_COLUMNS", "atom_feed", "cycles_csv", "json_text", "search_index_js", "sitemap_xml"]

CSV_COLUMNS = (
    "map", "id", "fingerprint", "canonical", "length", "word", "residue_counts", "min", "max", "A", "B", "target",
    "standard_length", "found_by", "found_on", "url",
)  # fmt: skip
_FEED_NAMESPACE = uuid.UUID("6f1e3a52-8d1b-4c55-9a53-5c2f0e9b7d11")  # fixed, so entry ids never change


def json_text(data: Any) -> str:
    return json.dumps(data, ensure_ascii=False, indent=1, sort_keys=True) + "\n"


def _cell(text: str) -> str:
    """Free text for a CSV cell: a leading = + - @ would be read as a formula by spreadsheets
    (OWASP, "CSV Injection"), so such text gets a leading apostrophe."""
    return "'" + text if text[:1] in ("=", "+", "-", "@", "\t", "\r") else text


def cycles_csv(views: SiteViews) -> str:
    out = io.StringIO()
    record, edition = views.record, views.edition
    # One comment line first (RFC 4180 has none; readers skip it with comment='#' or skiprows=1).
    header = (
        f"{record.title}, {edition.label}; data licence {record.licence} ({record.licence_url}); every verified "
        f"cycle, one per row; members are in data/catalogue.json"
    )
    out.write("# " + " ".join(header.split()) + "\n")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for r in views.cycle_records:
        writer.writerow(
            [
                r["map"], r["id"], r["fingerprint"], r["canonical"], r["length"], r["word"],
                " ".join(map(str, r["residue_counts"])), r["min"], r["max"], r["A"], r["B"], r["target"],
                "" if r["standard_length"] is None else r["standard_length"],
                _cell(r["provenance"]["found_by"]), r["provenance"]["found_on"], r["url"],
            ]
        )  # fmt: skip
    return out.getvalue()


def search_index_js(views: SiteViews) -> str:
    """The search index as a script (pages opened from disk cannot fetch JSON)."""
    data = json.dumps(views.search_index, ensure_ascii=True, sort_keys=True, separators=(",", ":"))
    # No data may close the script element or open a comment inside it.
    data = data.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
    return f"window.PERIPLUS_SEARCH = {data};\n"


def _entry_id(*parts: str) -> str:
    return f"urn:uuid:{uuid.uuid5(_FEED_NAMESPACE, '/'.join(parts))}"


def atom_feed(views: SiteViews) -> str:
    """An Atom feed (RFC 4287) of the cycles by found_on, newest first; entry ids follow fingerprints."""
    entries = views.feed_entries
    record = views.record
    updated = f"{entries[0]['found_on']}T00:00:00Z" if entries else "1970-01-01T00:00:00Z"
    rights = f"Data licence {record.licence} ({record.licence_url}); {views.edition.label}"
    lines = [
        '<?xml version="1.0" encoding="utf-8"?>',
        f'<feed xmlns="http://www.w3.org/2005/Atom" xml:base={quoteattr(views.base_url)}>',
        f"  <title>{escape(record.title)}</title>",
        f"  <id>{_entry_id('feed')}</id>",
        f"  <updated>{updated}</updated>",
        '  <link rel="alternate" type="text/html" href="index.html"/>',
        '  <link rel="self" type="application/atom+xml" href="feed.xml"/>',
        f"  <rights>{escape(rights)}</rights>",
        f"  <author><name>{escape(record.maintainers)}</name></author>",
        '  <generator uri="https://pypi.org/project/periplus/">Periplus</generator>',
    ]
    for e in entries:
        lines += [
            "  <entry>",
            f"    <title>{escape(e['title'])}</title>",
            f"    <id>{_entry_id('cycle', e['fingerprint'])}</id>",
            f"    <updated>{e['found_on']}T00:00:00Z</updated>",
            f'    <link rel="alternate" type="text/html" href={quoteattr(e["url"])}/>',
            f"    <author><name>{escape(e['found_by'])}</name></author>",
            f"    <summary>{escape(e['summary'])}</summary>",
            "  </entry>",
        ]
    lines.append("</feed>")
    return "\n".join(lines) + "\n"


def sitemap_xml(paths: list[str], base_url: str) -> str:
    """A sitemaps.org sitemap; it needs absolute addresses, hence a base URL."""
    base = base_url if base_url.endswith("/") else base_url + "/"
    rows = "".join(f"  <url><loc>{escape(base + p)}</loc></url>\n" for p in sorted(paths))
    return f'<?xml version="1.0" encoding="utf-8"?>\n<urlset xmlns="http://www.sitemaps.org/schemas/sitemap/0.9">\n{rows}</urlset>\n'
