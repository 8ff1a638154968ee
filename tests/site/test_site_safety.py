"""``periplus build`` against hostile input and hostile conditions: entry text that tries to run
script or load from elsewhere, ids that try to leave the site folder, failed and interrupted builds,
folders that are not a site, and repeat builds that must give the same bytes.

tests/fixtures/hostile is a small catalogue that verifies (its only mathematics is the shortcut
3x+1 map and its cycle 1 -> 2, Lagarias 1985 via /work/shared/literature.md) and whose free text
holds the attacks; that text makes no claim.
"""

from __future__ import annotations

import csv
import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import time
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
import yaml
from bs4 import BeautifulSoup, Tag
from conftest import FIXTURES, REPO, VALID, broken_copy, expected_output, write_files
from hypothesis import given
from hypothesis import strategies as st
from test_search_index import read_shard
from test_site import ATOM, Site, check_links, check_no_remote_resources, check_structure, parse_site, resolve

import builder.site.build
import builder.site.render
from builder.catalogue.verify import Limits, verify_catalogue
from builder.errors import UsageError
from builder.site import exports
from builder.site.build import build_site
from builder.site.markdown import render_notes
from builder.site.pages import Unit
from builder.site.pages.common import Page
from builder.site.pages.not_found import not_found_pages
from builder.site.render import Writer, render_site
from builder.site.views import build_views

HOSTILE = FIXTURES / "hostile"
SHIPPED = REPO / "catalogue"
# Common practice, no source (the HTML standard's "event handler content attributes"): every
# attribute whose name starts with "on" runs script.
EVENT_ATTRIBUTE = re.compile(r"^on", re.IGNORECASE)
# Common practice, no source: schemes that run script or carry a whole document in a URL. Browsers
# ignore leading spaces and control characters and letter case in the scheme (WHATWG URL standard,
# from memory), so the check does too.
SCRIPT_SCHEMES = ("javascript:", "data:", "vbscript:")
# Elements no entry may bring into a page (the site's own pages use none of them).
FORBIDDEN_ELEMENTS = ("iframe", "frame", "object", "embed", "style", "form", "input", "base", "meta[http-equiv]")


def hostile_yaml(rel: str) -> dict:
    return yaml.safe_load((HOSTILE / rel).read_text(encoding="utf-8"))


def tree_hashes(root: Path) -> dict[str, str]:
    """sha256 of every file under root (dotfiles included), by relative path."""
    return {
        p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }


def listing(root: Path) -> set[str]:
    return {p.relative_to(root).as_posix() for p in root.rglob("*")}


@pytest.fixture(scope="module")
def hostile(tmp_path_factory: pytest.TempPathFactory) -> Site:
    out = tmp_path_factory.mktemp("hostile") / "site"
    result = build_site(HOSTILE, out)
    # The build renders these entries inert rather than refusing them; the checks below hold it to that.
    assert result.report.ok, [str(p) for p in result.report.problems]
    assert result.pages > 0
    return parse_site(out)


# --- 5. hostile entries --------------------------------------------------------------------------


def test_hostile_site_links_and_structure(hostile: Site) -> None:
    check_links(hostile)
    for rel, soup in hostile.pages.items():
        check_structure(rel, soup)
    check_no_remote_resources(hostile)


def own_inline_text(site: Site, rel: str, element: Tag) -> bool:
    """Whether ``element`` is the 404 page's copy of the site's own stylesheet or script, text for text.

    A host serves 404.html at any address, so that page relies on no relative address: it carries
    static/style.css and static/not-found.js inside it (builder.site.pages.not_found), the only inline
    style and script of the site.  Nothing else, and no data, may be there.
    """
    if rel != "404.html":
        return False
    own = {"style": "style.css", "script": "not-found.js"}.get(element.name)
    if own is None or element.get("src") is not None:
        return False
    text = (site.root / "static" / own).read_text(encoding="utf-8")
    return element.get_text().strip() == text.strip()


def test_no_script_but_the_sites_own(hostile: Site) -> None:
    for rel, soup in hostile.pages.items():
        for script in soup.find_all("script"):
            if rel == "index.html" and script.get("type") == "application/ld+json":
                continue  # the dataset description: data, not script (checked in the test below)
            if own_inline_text(hostile, rel, script):
                continue
            src = script.get("src")
            assert isinstance(src, str), f"{rel}: an inline <script>: {script}"
            assert not script.get_text(strip=True), f"{rel}: a <script src> with content"
            target, _ = resolve(rel, src)
            assert target.startswith(("static/", "data/")), f"{rel}: <script src={src!r}>"
            assert (hostile.root / target).is_file()
    # The raw bytes too: no script tag survives in any case anywhere in a page.
    for path in hostile.root.rglob("*.html"):
        text = path.read_text(encoding="utf-8")
        tags = re.findall(r"<script\b[^>]*>", text, re.IGNORECASE)
        if path == hostile.root / "index.html":
            tags.remove('<script type="application/ld+json">')
        if path == hostile.root / "404.html":  # its own script, under the record's path (checked above)
            tags.remove('<script data-site-root="/a&#39;b/">')
        assert all(re.fullmatch(r'<script src="[./]*(static|data)/[a-z-]+\.js">', t) for t in tags), (path, tags)


def test_hostile_record_text_stays_data(hostile: Site) -> None:
    record = hostile_yaml("record.yaml")
    assert "</script>" in record["description"] and "<script>" in record["title"]  # the fixture is what it says
    home = hostile.page("index.html")
    assert home.find("h1").get_text() == record["title"]
    # The description is one paragraph: its white space (the fixture's U+2028 included) folds to spaces.
    description = " ".join(record["description"].split())
    assert "\u2028" in record["description"] and "\u2028" not in description
    assert home.select_one("p.lead").get_text() == description
    # One JSON-LD block, whose JSON holds the text as written (the HTML standard ends a script element
    # at "</script", common practice, no source: so the JSON may not contain it raw).
    blocks = home.find_all("script", type="application/ld+json")
    assert len(blocks) == 1
    raw = blocks[0].string or ""
    assert "</" not in raw and "<!--" not in raw
    assert json.loads(raw)["description"] == description
    for rel, soup in hostile.pages.items():
        footer = soup.find("footer")
        assert footer is not None and record["maintainers"] in footer.get_text(), rel
        assert not footer.find("img"), rel
    # The CSV comment line stays one line; CITATION.cff reads back as written (PyYAML, reference library).
    first = (hostile.root / "data" / "cycles.csv").read_text(encoding="utf-8").split("\n", 1)[0]
    assert first.startswith("# ") and record["title"] in first
    cff = yaml.safe_load((hostile.root / "CITATION.cff").read_text(encoding="utf-8"))
    assert (cff["title"], cff["abstract"]) == (record["title"], description)
    assert cff["url"] == record["base_url"]


def test_no_event_handlers_or_script_urls(hostile: Site) -> None:
    for rel, soup in hostile.pages.items():
        for tag in soup.find_all(True):
            for name, value in tag.attrs.items():
                assert not EVENT_ATTRIBUTE.match(name), f"{rel}: <{tag.name} {name}=...>"
                assert name != "style", f"{rel}: <{tag.name} style=...>"
                values = value if isinstance(value, list) else [value]
                for v in values:
                    # Strip what browsers strip before reading the scheme (see SCRIPT_SCHEMES).
                    scheme = re.sub(r"[\x00-\x20]", "", str(v)).lower()
                    if name in ("href", "src", "action", "data", "formaction", "xlink:href", "poster", "srcset"):
                        assert not scheme.startswith(SCRIPT_SCHEMES), f"{rel}: <{tag.name} {name}={v!r}>"


def test_no_frames_styles_or_forms_from_entries(hostile: Site) -> None:
    for rel, soup in hostile.pages.items():
        for selector in FORBIDDEN_ELEMENTS:
            if rel == "search/index.html" and selector in ("form", "input"):
                continue  # the search page's own form, from templates/search.html
            found = [tag for tag in soup.select(selector) if not own_inline_text(hostile, rel, tag)]
            assert not found, f"{rel}: <{selector}> in the page"
        for notes in soup.select("div.notes"):
            # Entry notes may hold text markup only: no pictures, no maths, no images from elsewhere.
            assert not notes.find(["svg", "math", "img", "script", "iframe", "style"]), f"{rel}: {notes}"
            for a in notes.find_all("a"):
                href = a.get("href")
                assert href is None or href.startswith(("http://", "https://", "mailto:")), (rel, href)


def test_hostile_text_appears_literally(hostile: Site) -> None:
    entry = hostile_yaml("maps/hostile.yaml")
    cycle = hostile_yaml("cycles/hostile/1.yaml")
    refs = hostile_yaml("references.yaml")
    name, summary = entry["name"], entry["summary"]
    assert "<script>" in name and "&" in name and "<" in summary  # the fixture is what it says

    map_page = hostile.page("maps/hostile/index.html")
    assert map_page.find("h1").get_text() == name
    assert map_page.find("title").get_text().startswith(name)
    assert map_page.select_one("p.lead").get_text() == summary
    assert map_page.find("meta", attrs={"name": "description"})["content"] == f"{name}: {summary}"

    cycle_page = hostile.page("maps/hostile/1/index.html")
    assert cycle_page.find("h1").get_text() == f"{name}: cycle through 1"
    facts = {dt.get_text(): dt.find_next_sibling("dd").get_text() for dt in cycle_page.select("dl.facts dt")}
    assert facts["Found by"] == cycle["provenance"]["found_by"]
    assert facts["Method"] == cycle["provenance"]["method"]
    assert any(name in pre.get_text() for pre in cycle_page.select("pre.cite"))
    for svg in cycle_page.find_all("svg"):
        assert name in svg.find("title", recursive=False).get_text()
    assert cycle_page.select_one("div.notes").get_text().strip().endswith("Plain text with 1 < 2 & 3 > 2.")

    ref = refs["hostile-ref"]
    section = hostile.page("references/index.html").find(id="ref-hostile-ref")
    assert isinstance(section, Tag)
    assert ref["title"] in section.get_text() and ref["venue"] in section.get_text()
    assert ", ".join(ref["authors"]) in section.get_text()
    # The DOI that tried to close its attribute stays inside the doi.org address.
    doi_links = [a["href"] for a in section.find_all("a") if a.get("href", "").startswith("https://doi.org/")]
    assert doi_links == ["https://doi.org/" + ref["doi"]]
    # The raw bytes hold the text escaped (HTML Living Standard, "escaping a string", from memory).
    raw = (hostile.root / "maps" / "hostile" / "index.html").read_text(encoding="utf-8")
    assert "&lt;script&gt;alert(" in raw and "&amp; &lt;script&gt;" in raw


def test_hostile_text_in_the_exports(hostile: Site) -> None:
    entry = hostile_yaml("maps/hostile.yaml")
    cycle = hostile_yaml("cycles/hostile/1.yaml")
    record = json.loads((hostile.root / "data" / "catalogue.json").read_text(encoding="utf-8"))
    assert record["maps"][0]["name"] == entry["name"]  # data, kept as written
    assert record["cycles"][0]["provenance"]["found_by"] == cycle["provenance"]["found_by"]
    # The search index is a script: it must not hold anything that closes the script element
    # (common practice, no source: "</script" inside a script ends it in HTML).
    # read_shard checks each file for "<" and ">" and that it is one statement holding JSON.
    search = hostile.root / "data" / "search"
    index = read_shard(hostile.root / "data" / "search-index.js", "index")
    shards = {p.stem: read_shard(p, p.stem) for p in search.iterdir()}
    assert {p.name for p in search.iterdir()} == {f"{name}.js" for name in shards}
    assert [row[2] for i in range(len(index["rows"])) for row in shards[f"r{i}"]][0] == entry["name"]
    assert any(
        entry["name"] in [e[1] for e in entries] for k in range(index["keys"]) for entries in shards[f"k{k}"].values()
    )
    # RFC 4287 via xml.etree: the feed parses and its text comes back as written.
    feed = ET.parse(hostile.root / "feed.xml").getroot()
    first = feed.find(f"{ATOM}entry")
    assert first is not None
    assert first.findtext(f"{ATOM}author/{ATOM}name") == cycle["provenance"]["found_by"]
    assert entry["name"] in (first.findtext(f"{ATOM}title") or "")


# Any text XML 1.0 allows (section 2.2: tab, newline, carriage return, and from U+0020 on, surrogates and
# U+FFFE/U+FFFF excluded).
_XML_TEXT = st.text(
    st.characters(blacklist_categories=("Cs",), blacklist_characters="\ufffe\uffff", min_codepoint=0x20)
    | st.sampled_from("\t\n\r&<>\"'")
)


@given(_XML_TEXT)
def test_feed_text_and_attributes_read_back_as_written(text: str) -> None:
    # The feed and the sitemaps write text and attribute values with their own escaping; an XML parser
    # (the standard library's expat, through xml.etree) must read back exactly what was written.  In
    # character data a parser turns a carriage return into a newline (XML 1.0, section 2.11); an
    # attribute value keeps it, written as a character reference (section 3.3.3).
    element = ET.fromstring(f"<a b={exports._xml_attribute(text)}>{exports._xml_text(text)}</a>")
    assert element.get("b") == text
    assert (element.text or "") == text.replace("\r\n", "\n").replace("\r", "\n")


def test_notes_are_sanitised_whatever_the_markdown() -> None:
    # Each case is a hostile note; the dangerous part must be gone and the harmless text kept.
    cases = {
        "<script>alert(1)</script>kept": "kept",
        "<img src=x onerror=alert(1)>kept": "kept",
        "[x](javascript:alert(1)) kept": "kept",
        '<a href="JaVaScRiPt:alert(1)">kept</a>': "kept",
        '<a href="data:text/html,<b>x</b>">kept</a>': "kept",
        "<iframe src=https://example.com></iframe>kept": "kept",
        '<p style="color:red">kept</p>': "kept",
        "<style>p{}</style>kept": "kept",
        # Foreign content (MathML, SVG) is dropped whole by the cleaner, text and all.
        "<math><mi>gone</mi></math>kept": "kept",
        "<svg onload=alert(1)><text>gone</text></svg>kept": "kept",
    }
    for note, text in cases.items():
        html = str(render_notes(note))
        soup = BeautifulSoup(html, "html.parser")
        assert text in soup.get_text(), (note, html)
        assert not soup.find(["script", "img", "iframe", "style", "math", "svg"]), (note, html)
        assert "alert" not in html and "gone" not in html, (note, html)
        for tag in soup.find_all(True):
            assert not any(EVENT_ATTRIBUTE.match(a) or a == "style" for a in tag.attrs), (note, html)
            assert not str(tag.get("href", "")).lower().startswith(SCRIPT_SCHEMES), (note, html)


def test_note_headings_never_skip_a_level() -> None:
    # Common practice, no source: WCAG 2 "Info and Relationships" (1.3.1). Notes sit under an h2, so
    # their headings must start at h3 and go down one level at a time, whatever levels they use.
    for note in ("### deep first\n\ntext", "## second\n\n#### fourth", "# one\n\n### three", "<h4>raw</h4>"):
        soup = BeautifulSoup(f"<h2>section</h2>{render_notes(note)}", "html.parser")
        levels = [int(h.name[1]) for h in soup.find_all(re.compile(r"^h[1-6]$"))]
        assert levels[1] == 3, (note, levels)
        assert all(b <= a + 1 for a, b in zip(levels, levels[1:], strict=False)), (note, levels)


def test_a_reference_url_with_a_script_scheme_is_refused(catalogue, cli) -> None:
    cat = catalogue(
        files={
            "references.yaml": (VALID / "references.yaml").read_text(encoding="utf-8")
            + "bad-url:\n  authors: [X]\n  title: T\n  venue: V\n  year: 2024\n  url: javascript:alert(1)\n"
        }
    )
    run = cli("verify", str(cat))
    assert run.code == 1
    # The references.yaml appended above ends with the url line: line 25, after "  url: " (column 8).
    assert f"{cat / 'references.yaml'}:25:8: error: bad-url.url: expected an http or https address" in run.out


def test_ids_that_try_to_leave_the_site_are_refused(catalogue, cli, tmp_path: Path) -> None:
    provenance = (
        "provenance:\n  found_by: Periplus test suite\n  found_on: 2024-05-01\n  method: constructed in the test\n"
    )
    cat = catalogue(
        files={
            # Common practice, no source: the cycle 1 -> 2 of 3x+1 (Lagarias 1985 via literature.md),
            # placed where its map field and its folder try to name paths.
            "cycles/3x-plus-1/escape.yaml": "map: ../../etc\nstart: 1\n" + provenance,
            "cycles/a.b/escape.yaml": "map: ../../etc\nstart: 1\n" + provenance,
        }
    )
    before = listing(tmp_path)
    out = tmp_path / "out" / "site"
    run = cli("build", str(cat), "--out", str(out))
    assert run.code == 1
    positioned = [line for line in run.lines if re.match(r".*cycles/3x-plus-1/escape\.yaml:1:6: error: map: ", line)]
    assert positioned and "'../../etc'" in positioned[0], run.out
    assert any(re.match(r".*cycles/a\.b: error: ", line) for line in run.lines), run.out
    assert run.lines[-1] == f"nothing was written; {out} is as it was"
    # Nothing new anywhere, not even the parent of DIR, but the verification cache beside the catalogue.
    assert {p for p in listing(tmp_path) if not p.startswith(".periplus-cache")} == before
    verify = cli("verify", str(cat))
    assert verify.code == 1
    assert verify.lines == run.lines[:-1]  # the same diagnostics as verify


def test_render_refuses_a_path_outside_the_site(tmp_path: Path) -> None:
    # The second line of defence in builder/render.py: even a view whose path leaves the folder.
    report = verify_catalogue(VALID, Limits())
    assert report.ok
    views = build_views(report.catalogue)
    page = not_found_pages(views.site)[0]
    escaping = Page("../escaped.html", page.template, "Escaped", "", page.context)
    views.units.append(Unit("site:escaping", 1, lambda site: [escaping]))
    out = tmp_path / "inner" / "site"
    out.mkdir(parents=True)
    with pytest.raises(AssertionError, match="outside the site"):
        render_site(views, out)
    assert not (tmp_path / "inner" / "escaped.html").exists()
    assert not (tmp_path / "escaped.html").exists()


@pytest.mark.parametrize(
    "path", ["../x.html", "a/../../x.html", "/etc/x", "a//b.html", "./x.html", "a\\..\\x", "", "a/", "a/.", "x\x00y"]
)
def test_the_writer_refuses_every_address_that_could_leave_the_site(tmp_path: Path, path: str) -> None:
    with Writer(tmp_path) as writer, pytest.raises(AssertionError, match="outside the site"):
        writer.text(path, "x")
    assert list(tmp_path.iterdir()) == []


# --- 6. atomicity and safety ---------------------------------------------------------------------


@pytest.fixture
def previous(tmp_path: Path) -> Path:
    """A site built from the valid fixture, in tmp_path/out/site."""
    out = tmp_path / "out" / "site"
    assert build_site(VALID, out).pages > 0
    return out


def test_a_failed_build_leaves_the_previous_site_untouched(previous: Path, cli, tmp_path: Path) -> None:
    before = tree_hashes(previous)
    siblings = listing(previous.parent)
    cat = broken_copy("wrong-length", tmp_path / "broken")
    run = cli("build", str(cat), "--out", str(previous), cwd=cat)
    assert run.code == 1
    # The diagnostics are exactly those of verify (tests/fixtures/broken/wrong-length/expected.txt,
    # whose paths are relative to the catalogue, the working directory here).
    verify = cli("verify", str(cat), cwd=cat)
    assert run.lines[:-1] == verify.lines
    assert [line for line in run.lines if ": error: " in line]
    assert expected_output("wrong-length").splitlines()[-1] == run.lines[-2]
    assert tree_hashes(previous) == before
    assert listing(previous.parent) == siblings


def interrupt_after(monkeypatch: pytest.MonkeyPatch, writes: int, exc: BaseException) -> list[str]:
    """Make builder.site.render.Writer.text raise ``exc`` after ``writes`` files were written (by this
    process: a forked worker counts its own)."""
    real = builder.site.render.Writer.text
    written: list[str] = []

    def write(self: Writer, relative: str, text: str) -> None:
        if len(written) == writes:
            raise exc
        real(self, relative, text)
        written.append(relative)

    monkeypatch.setattr(builder.site.render.Writer, "text", write)
    return written


@pytest.mark.parametrize("exc", [KeyboardInterrupt(), OSError(28, "No space left on device")])
def test_an_interrupted_build_leaves_the_previous_site_untouched(
    previous: Path, monkeypatch: pytest.MonkeyPatch, exc: BaseException
) -> None:
    before = tree_hashes(previous)
    siblings = listing(previous.parent)
    written = interrupt_after(monkeypatch, 5, exc)
    with pytest.raises(type(exc)):
        build_site(HOSTILE, previous, jobs=1)
    assert len(written) == 5  # the interruption came partway through the writing
    assert tree_hashes(previous) == before
    assert listing(previous.parent) == siblings  # no staging folder left behind


@pytest.mark.parametrize("exc", [KeyboardInterrupt(), OSError(28, "No space left on device")])
def test_a_build_interrupted_in_a_worker_process_leaves_the_previous_site_untouched(
    previous: Path, monkeypatch: pytest.MonkeyPatch, exc: BaseException
) -> None:
    # The workers are forked after the patch, so each stops after its own fifth file; the build
    # raises what stopped them (a KeyboardInterrupt too, which must not leave it waiting).
    before = tree_hashes(previous)
    siblings = listing(previous.parent)
    interrupt_after(monkeypatch, 5, exc)
    with pytest.raises(type(exc)):
        build_site(VALID, previous, jobs=2)
    assert tree_hashes(previous) == before
    assert listing(previous.parent) == siblings


def test_an_interrupted_build_through_the_cli(previous: Path, monkeypatch: pytest.MonkeyPatch, cli) -> None:
    before = tree_hashes(previous)
    interrupt_after(monkeypatch, 3, KeyboardInterrupt())
    run = cli("build", str(HOSTILE), "--out", str(previous), "--jobs", "1")
    assert run.code == 130  # common practice, no source: 128 + SIGINT
    assert "interrupted" in run.err
    assert tree_hashes(previous) == before
    assert sorted(p.name for p in previous.parent.iterdir()) == ["site"]


def test_the_next_build_removes_what_a_killed_build_left(previous: Path) -> None:
    # A build killed outright (no handler runs) leaves its staging folder, or a retired old site.
    parent = previous.parent
    for leftover in (".site.building-abc123", ".site.old-def456"):
        write_files(parent / leftover, {"index.html": "<p>half a site</p>", "maps/x/index.html": "x"})
    unrelated = parent / "notes.txt"
    unrelated.write_text("someone else's file\n", encoding="utf-8")
    assert build_site(HOSTILE, previous).pages > 0
    assert sorted(p.name for p in parent.iterdir()) == ["notes.txt", "site"]
    assert unrelated.read_text(encoding="utf-8") == "someone else's file\n"
    assert (previous / "maps" / "hostile" / "index.html").is_file()


def test_leftovers_are_removed_whatever_the_folder_name(tmp_path: Path) -> None:
    # Common practice, no source: a name with glob characters is still a plain name.
    out = tmp_path / "site[1]"
    assert build_site(VALID, out).pages > 0
    write_files(tmp_path / ".site[1].building-abc123", {"index.html": "<p>half a site</p>"})
    assert build_site(VALID, out).pages > 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["site[1]"]


def test_a_rebuild_replaces_the_whole_site(previous: Path) -> None:
    assert (previous / "maps" / "3x-plus-1" / "index.html").is_file()
    assert build_site(HOSTILE, previous).pages > 0
    assert not (previous / "maps" / "3x-plus-1").exists()  # nothing of the old site lingers
    assert (previous / "maps" / "hostile" / "1" / "index.html").is_file()
    assert sorted(p.name for p in previous.parent.iterdir()) == ["site"]


def test_the_swap_without_renameat2(previous: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # Where the atomic exchange is unavailable the build falls back to two renames.
    monkeypatch.setattr(builder.site.build, "_exchange", lambda a, b: False)
    assert build_site(HOSTILE, previous).pages > 0
    assert (previous / "maps" / "hostile" / "index.html").is_file()
    assert sorted(p.name for p in previous.parent.iterdir()) == ["site"]


def test_a_failed_swap_without_renameat2_keeps_the_previous_site(
    previous: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # If the second of the two renames fails, the previous site must come back, not be discarded.
    before = tree_hashes(previous)
    monkeypatch.setattr(builder.site.build, "_exchange", lambda a, b: False)
    real_rename = Path.rename

    def rename(self: Path, target: str | os.PathLike[str]) -> Path:
        if self.name.startswith(".site.building-") and Path(target) == previous:
            raise OSError(5, "Input/output error")
        return real_rename(self, target)

    monkeypatch.setattr(Path, "rename", rename)
    with pytest.raises(OSError):
        build_site(HOSTILE, previous)
    monkeypatch.undo()
    assert tree_hashes(previous) == before
    assert sorted(p.name for p in previous.parent.iterdir()) == ["site"]


def test_build_refuses_a_folder_that_is_not_a_site(cli, tmp_path: Path) -> None:
    out = tmp_path / "thesis"
    write_files(out, {"chapter1.tex": "precious\n", "figures/plot.pdf": b"%PDF-1.4\n"})
    before = tree_hashes(out)
    run = cli("build", str(VALID), "--out", str(out))
    assert run.code == 2
    assert str(out) in run.err and "--out" in run.err
    assert tree_hashes(out) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["thesis"]
    # A file, and a symbolic link, are refused the same way.
    target = tmp_path / "thesis" / "chapter1.tex"
    link = tmp_path / "link"
    link.symlink_to(out, target_is_directory=True)
    for path in (target, link):
        run = cli("build", str(VALID), "--out", str(path))
        assert run.code == 2 and str(path) in run.err
    assert tree_hashes(out) == before
    # An empty folder is fine.
    empty = tmp_path / "empty"
    empty.mkdir()
    assert cli("build", str(VALID), "--out", str(empty)).code == 0
    assert (empty / "index.html").is_file()


def test_two_builds_give_the_same_bytes(tmp_path: Path) -> None:
    # Common practice, no source: a reproducible build gives the same bytes for the same input.
    a, b = tmp_path / "a" / "site", tmp_path / "elsewhere" / "b"
    for out in (a, b):
        assert build_site(SHIPPED, out, base_url="https://example.org/record/").pages > 0
    ha, hb = tree_hashes(a), tree_hashes(b)
    assert sorted(ha) == sorted(hb)
    assert ha == hb
    assert len(ha) > 800


def test_two_builds_of_the_hostile_catalogue_give_the_same_bytes(tmp_path: Path) -> None:
    # Two copies outside any repository (inside one, the edition names the commit, which is the point).
    one, two = tmp_path / "a" / "copy", tmp_path / "b" / "copy"
    shutil.copytree(HOSTILE, one)
    shutil.copytree(HOSTILE, two)
    assert build_site(one, tmp_path / "one").pages > 0
    assert build_site(two, tmp_path / "two").pages > 0
    assert tree_hashes(tmp_path / "one") == tree_hashes(tmp_path / "two")


# --- ids chosen by entries must not collide with the page's own -------------------------------------


@pytest.mark.parametrize("key", ["main", "lagarias-1985-h"])
def test_reference_keys_cannot_repeat_an_id(catalogue, tmp_path: Path, key: str) -> None:
    refs = (VALID / "references.yaml").read_text(encoding="utf-8")
    # Hostile-fixture data: a reference that makes no bibliographic claim, with a key that is a valid id.
    cat = catalogue(
        files={"references.yaml": refs + f"{key}:\n  authors: [X. Y]\n  title: T\n  venue: V\n  year: 2024\n"}
    )
    out = tmp_path / "site"
    assert build_site(cat, out).pages > 0
    site = parse_site(out)
    check_structure("references/index.html", site.page("references/index.html"))


def test_the_csv_comment_line_starts_no_formula(tmp_path: Path) -> None:
    # OWASP, "CSV Injection": a cell that starts with = + - @ is a formula in spreadsheets. The comment
    # line holds the record's title and is read as cells split at commas (Python's csv module, the
    # reference reader here), so no cell of it may start a formula, quoted or not.
    catalogue = tmp_path / "catalogue"
    shutil.copytree(VALID, catalogue)
    record = catalogue / "record.yaml"
    title = 'Cycles, =HYPERLINK("https://example.org"),"=1+2", +3, -4, @SUM(A1)'
    text = record.read_text(encoding="utf-8")
    record.write_text(re.sub(r"(?m)^title: .*$", "title: " + json.dumps(title), text), encoding="utf-8")
    result = build_site(catalogue, tmp_path / "site")
    assert result.report.ok, [str(p) for p in result.report.problems]
    first = (tmp_path / "site" / "data" / "cycles.csv").read_text(encoding="utf-8").split("\n", 1)[0]
    assert first.startswith("# Cycles,")
    (cells,) = csv.reader([first])
    assert len(cells) >= 6
    for cell in cells:
        assert cell.lstrip(' "')[:1] not in ("=", "+", "-", "@"), cell


# --- builds into one folder take turns (issue 12, item 1) ------------------------------------------


def _hold_lock(site: Path) -> int:
    """Take the build lock of ``site`` as another build would (flock(2), exclusive); return its descriptor."""
    import fcntl

    fd = os.open(site.parent / f".{site.name}.lock", os.O_RDWR | os.O_CREAT, 0o644)
    fcntl.flock(fd, fcntl.LOCK_EX)
    return fd


def test_a_build_that_may_not_wait_is_refused_while_another_writes(previous: Path, cli) -> None:
    before = tree_hashes(previous)
    fd = _hold_lock(previous)
    try:
        with pytest.raises(UsageError, match="another build is writing this site"):
            build_site(VALID, previous, wait=False)
        run = cli("build", str(VALID), "--out", str(previous), "--no-wait")
        assert run.code == 2  # common practice, no source: a usage error
        assert (
            run.err
            == f"periplus: error: {previous.absolute()}: another build is writing this site; try again once it is done\n"
        )
    finally:
        os.close(fd)
    assert tree_hashes(previous) == before


def test_a_build_waits_for_the_one_writing_then_writes(previous: Path) -> None:
    import threading

    fd = _hold_lock(previous)
    done: list[int] = []
    builder_thread = threading.Thread(target=lambda: done.append(build_site(VALID, previous).pages))
    builder_thread.start()
    builder_thread.join(timeout=1)
    assert builder_thread.is_alive() and not done  # waiting for the lock, not writing
    os.close(fd)  # the other build is done
    builder_thread.join(timeout=120)
    assert done and done[0] > 0
    assert sorted(p.name for p in previous.parent.iterdir()) == ["site"]


def test_two_builds_into_one_folder_at_once_both_publish_a_whole_site(tmp_path: Path) -> None:
    # The finding: a build removed the staging folder of another running at the same moment, which then
    # published a partial site. With builds taking turns, every run ends with the whole site.
    reference = tmp_path / "reference"
    assert build_site(VALID, reference).pages > 0
    expected = tree_hashes(reference)
    out = tmp_path / "shared" / "site"
    command = [sys.executable, "-m", "builder", "build", str(VALID), "--out", str(out)]
    for _ in range(3):
        procs = [
            subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True) for _ in range(2)
        ]
        errors = [p.communicate(timeout=300)[1] for p in procs]
        assert [p.returncode for p in procs] == [0, 0], errors
        assert tree_hashes(out) == expected
        # The command removes a replaced site in a process of its own: wait for it.
        assert settled_listing(out.parent) == ["site"]


def settled_listing(parent: Path, timeout_s: float = 60.0) -> list[str]:
    """The names in ``parent`` once no replaced site is still being removed (or after ``timeout_s``)."""
    deadline = time.monotonic() + timeout_s
    while True:
        names = sorted(p.name for p in parent.iterdir())
        if not any(".building-" in n or ".old-" in n for n in names) or time.monotonic() > deadline:
            return names
        time.sleep(0.05)


def test_the_command_removes_the_replaced_site_after_it_is_done(previous: Path, cli) -> None:
    # Issue 13: removing a big site's folders can take longer than building it incrementally, so the
    # command leaves that to a process of its own; the new site is whole at once.
    before = tree_hashes(previous)
    run = cli("build", str(HOSTILE), "--out", str(previous))
    assert run.code == 0
    assert tree_hashes(previous) != before and (previous / "maps" / "hostile" / "index.html").is_file()
    assert settled_listing(previous.parent) == ["site"]


def test_the_site_does_not_depend_on_how_many_processes_wrote_it(tmp_path: Path) -> None:
    # Issue 13: pages are shared among worker processes; the bytes must not depend on it
    # (common practice, no source: reproducible builds).
    one, two, three = tmp_path / "one", tmp_path / "two", tmp_path / "three"
    assert build_site(REPO / "catalogue", one, jobs=1).pages > 700
    assert build_site(REPO / "catalogue", two, jobs=2).pages > 700
    assert build_site(REPO / "catalogue", three, jobs=3).pages > 700
    assert tree_hashes(one) == tree_hashes(two) == tree_hashes(three)


def test_one_note_leaves_nothing_behind_for_the_next() -> None:
    # One converter serves every note (reset between them): a link defined by reference in one note
    # (Markdown's reference-style links: common practice, no source) means nothing in the next.
    first = render_notes("See [the table][t].\n\n[t]: https://example.org/table")
    assert 'href="https://example.org/table"' in first
    second = render_notes("See [the table][t].")
    assert "href" not in second and "[the table][t]" in second
