"""The site's tables, labels and numbers as the built pages give them: one format for every integer a
reader reads, a label that says what its column holds, table wrappers labelled apart, stacked rows
labelled cell by cell, and the "Coprime to d" column only where it means something.

The shipped catalogue's site is built once for the module; each page is parsed with BeautifulSoup's
lxml.  The facts each check uses are named beside it.
"""

from __future__ import annotations

import json
import re
import subprocess
from collections import Counter
from pathlib import Path

import pytest
from bs4 import BeautifulSoup, Tag
from conftest import NODE, REPO

from builder.site.build import build_site
from builder.site.numbers import grouped, grouped_ints

SHIPPED = REPO / "catalogue"
SORT_JS = REPO / "templates" / "static" / "sort.js"
BASE_URL = "https://example.org/record/"
# The five cycles of 3x+1 on the integers, by their member of least |n|: J. C. Lagarias, "The 3x+1 problem
# and its generalizations", Amer. Math. Monthly 92 (1985), via /work/shared/literature.md (status memory).
THREE_X_PLUS_ONE = ["0", "1", "-1", "-5", "-17"]


class Pages(dict[str, BeautifulSoup]):
    """The built pages by path, each parsed when first read."""

    def __init__(self, root: Path) -> None:
        super().__init__()
        self.root = root
        self.paths = sorted(p.relative_to(root).as_posix() for p in root.rglob("*.html"))

    def __missing__(self, rel: str) -> BeautifulSoup:
        soup = self[rel] = BeautifulSoup((self.root / rel).read_text(encoding="utf-8"), "lxml")
        return soup


class Built:
    def __init__(self, root: Path) -> None:
        self.root = root
        self.pages = Pages(root)

    def table_pages(self) -> list[tuple[str, BeautifulSoup]]:
        """The pages whose tables and numbers this part of the site writes: the home page, the maps,
        families and lengths pages, and every map page; of the 702 cycle pages, every fifth."""
        chosen = []
        for i, rel in enumerate(self.pages.paths):
            if not TABLE_PAGES.match(rel):
                continue
            if rel.count("/") == 3 and rel.startswith("maps/") and i % 5:  # maps/<map>/<cycle>/index.html
                continue
            chosen.append((rel, self.pages[rel]))
        return chosen


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> Built:
    out = tmp_path_factory.mktemp("tables") / "site"
    result = build_site(SHIPPED, out, base_url=BASE_URL)
    assert result.report.ok, [str(p) for p in result.report.problems]
    return Built(out)


def text_of(tag: Tag) -> str:
    return " ".join(tag.get_text(" ").split())


def headers_of(table: Tag) -> list[str]:
    return [text_of(th) for th in table.select("thead th")]


def column(table: Tag, header: str) -> list[Tag]:
    index = headers_of(table).index(header)
    return [row.find_all("td", recursive=False)[index] for row in table.select("tbody tr")]


# The pages whose tables this part of the site writes (other pages have tables of their own).
TABLE_PAGES = re.compile(r"^(index\.html|maps/.*|families/.*|lengths/.*)$")


# --- one format for numbers ----------------------------------------------------------------------


@pytest.mark.parametrize(
    "n",
    [0, 7, -7, 999, -999, 1000, -1000, 2363, -6593, 100_000, 1_000_000, -1_234_567_890, 10**30 + 7, -(10**200)],
)
def test_grouped_writes_what_python_s_own_format_writes(n: int) -> None:
    # Python's format specification mini-language: the "," option groups by thousands with commas
    # (reference library: the Python Library Reference, "Format Specification Mini-Language").
    assert grouped(n) == format(n, ",")
    assert grouped(str(n)) == format(n, ",")
    assert grouped_ints([n, -n, n]) == [format(n, ","), format(-n, ","), format(n, ",")]  # a page's members at once


def test_grouped_writes_numbers_too_long_for_int_conversion() -> None:
    # CPython refuses str(n) beyond 4,300 digits by default (the Python Library Reference, "Integer
    # string conversion length limitation"); a member may be longer.  Groups of three from the units.
    digits = "1" + "0" * 9000
    text = grouped("-" + digits)
    assert text.startswith("-1,000,000,") and text.endswith(",000")  # 9,001 digits: 1 before the first comma
    assert text.replace(",", "") == "-" + digits
    assert all(len(group) == 3 for group in text.split(",")[1:])
    assert grouped_ints([7, -(10**9000)]) == ["7", text]  # too long for format: each grouped apart


@pytest.mark.parametrize("bad", ["", "-", "1,000", "+5", "1_000", " 12", "١٢", "1e3", "0x10", "007"])
def test_grouped_refuses_what_is_not_a_decimal_integer(bad: str) -> None:
    with pytest.raises(ValueError):
        grouped(bad)


# Numbers a reader reads: runs of digits in the text of a page, outside code, equations, charts and
# scripts (which keep plain digits to be copied), outside links to other sites (DOIs), and outside the
# catalogue's own prose (notes, methods).
NUMBER = re.compile(r"(?<![\w.,/\-])-?\d[\d,]*(?![\w.])")


def reader_numbers(soup: BeautifulSoup) -> list[str]:
    copy = BeautifulSoup(str(soup.find("main")), "lxml")
    for tag in copy.select("pre, code, math, svg, script, .notes, .cite, a[href^='http']"):  # DOIs, addresses
        tag.decompose()
    for dt in copy.select("dt"):
        if text_of(dt) == "Method":
            dt.find_next_sibling("dd").decompose()
    for p in copy.select("p"):
        # "Claimed on <date>: <the claim's method, as its entry words it>"; the cycle equation in plain
        # text, to be copied into a program.
        if text_of(p).startswith(("Claimed on", "In plain text")):
            p.decompose()
    return [m.group().rstrip(",") for m in NUMBER.finditer(copy.get_text(" "))]


def is_year(text: str) -> bool:
    # A year (1900 to 2100) is a name, not a count: it is written without a comma (common practice, no source).
    return re.fullmatch(r"(19|20)\d\d|2100", text) is not None


def test_every_page_writes_its_numbers_in_one_format(site: Built) -> None:
    # The rule (issue 14): every integer a reader reads is grouped by commas in threes; 1000000 beside
    # 1,000,000 was the fault.  Each number found must be exactly what grouped() makes of its digits.
    checked = Counter[str]()
    for rel, soup in site.table_pages():
        for text in reader_numbers(soup):
            if is_year(text):
                continue
            plain = text.replace(",", "")
            assert text == grouped(plain), f"{rel}: {text!r} is not written as {grouped(plain)!r}"
            checked["grouped" if "," in text else "short"] += 1
    assert checked["grouped"] > 100 and checked["short"] > 1000  # the check saw both kinds


def test_the_pages_that_mixed_formats_now_use_commas(site: Built) -> None:
    # The 3x+1 map has completeness claims to 10^5 and 10^6 (README.md, "Starter catalogue"): its headings
    # read 100,000 and 1,000,000, as the claims' own methods do.
    page = site.pages["maps/3x-plus-1/index.html"]
    headings = [text_of(h) for h in page.select("section.coverage h3")]
    assert headings[0].startswith("Starts with |n| ≤ 100,000")
    assert headings[1].startswith("Starts with |n| ≤ 1,000,000")
    assert not re.search(r"\b100000\b|\b1000000\b", text_of(page.find("main")).replace("100,000", ""))


def test_numbers_in_tables_are_written_for_readers_and_sorted_by_plain_digits(site: Built) -> None:
    # A number cell is written grouped by commas; sort.js reads its key back from that text (its
    # parseDecimal drops the commas), unless a data-value gives another key, in plain digits.
    seen = 0
    for rel, soup in site.table_pages():
        for cell in soup.select("table.data td.num"):
            text = text_of(cell)
            if cell.has_attr("data-value"):
                value = str(cell["data-value"])
                if re.fullmatch(r"-?\d+", value) and not text.endswith(("odd", "even")) and ":" not in text:
                    assert text == grouped(value), f"{rel}: {cell}"
                    seen += 1
            elif re.fullmatch(r"-?[\d,]+", text):
                assert text == grouped(text.replace(",", "")), f"{rel}: {cell}"
                seen += 1
    assert seen > 2000


# --- the member of least |n| ----------------------------------------------------------------------


def test_the_least_member_column_says_what_it_holds(site: Built) -> None:
    # The column holds the cycle's member of least absolute value, with its sign: -17 for the 3x+1 cycle
    # through -17, whose least member is -136 (its members by hand from -17: -17, -25, -37, -55, -82,
    # -41, -61, -91, -136, -68, -34; Lagarias 1985 via literature.md, memory).
    page = site.pages["maps/3x-plus-1/index.html"]
    table = page.select_one("table.sortable")
    assert "Member of least |n|" in headers_of(table)
    assert [text_of(c) for c in column(table, "Member of least |n|")] == THREE_X_PLUS_ONE
    assert [text_of(c) for c in column(table, "Least member")][-1] == "-136"
    th = table.select("thead th")[headers_of(table).index("Member of least |n|")]
    assert th["data-type"] == "abs"  # sorted by |n| (sort.js)
    cycle = site.pages["maps/3x-plus-1/minus-17/index.html"]
    facts = {text_of(dt): text_of(dt.find_next_sibling("dd")) for dt in cycle.select("dl.facts dt")}
    assert facts["Member of least |n|"] == "-17" and facts["Least member"] == "-136"
    # No page labels a signed value "Least |member|" any more.
    for rel, soup in site.table_pages():
        labels = [text_of(t) for t in soup.select("th, dt")]
        assert "Least |member|" not in labels, rel


def test_tables_are_first_written_in_order_of_least_absolute_value(site: Built) -> None:
    # The map page's table starts in the record's order: by |n|, the positive member first (1 before -1).
    table = site.pages["maps/3x-plus-1/index.html"].select_one("table.sortable")
    values = [int(text_of(c).replace(",", "")) for c in column(table, "Member of least |n|")]
    assert values == sorted(values, key=lambda n: (abs(n), n < 0))


@pytest.mark.usefixtures("needs_node")
def test_sort_js_orders_by_absolute_value_and_cycles_back_to_the_original_order() -> None:
    # Ordering by absolute value, the positive first on a tie, is arithmetic (common practice, no source);
    # Python's sorted() with that key is the reference for the script's comparison.
    values = ["-17", "1", "0", "-1", "-5", "17", "12345678901234567890123", "-12345678901234567890123", "—"]
    script = (
        f"const s = require({json.dumps(str(SORT_JS))});"
        "const items = JSON.parse(process.argv[1]).map((t, i) => ({text: t, pos: i, key: s.makeKey(t, 'abs')}));"
        "const up = s.sortItems(items, 'abs', 'ascending').map(x => x.text);"
        "const down = s.sortItems(items, 'abs', 'descending').map(x => x.text);"
        "const states = [null, 'ascending', 'descending', 'none'].map(s.nextState);"
        "console.log(JSON.stringify([up, down, states]));"
    )
    assert NODE is not None
    run = subprocess.run([NODE, "-e", script, json.dumps(values)], capture_output=True, text=True, check=True)
    up, down, states = json.loads(run.stdout)
    numbers = [v for v in values if v != "—"]
    expected = sorted(numbers, key=lambda t: (abs(int(t)), int(t) < 0))
    assert up == [*expected, "—"]  # a cell that holds no number sorts last in both directions
    assert down == [*reversed(expected), "—"]
    assert states == ["ascending", "descending", "none", "ascending"]


# --- length pages, the maps' table, the wrappers --------------------------------------------------


def test_a_length_page_leaves_out_the_length_column(site: Built) -> None:
    # Every cycle on the page of length 11 has length 11: the column would repeat one number.  3x+1's
    # cycle through -17 has length 11 (Lagarias 1985 via literature.md, memory).
    page = site.pages["lengths/11/index.html"]
    table = page.select_one("table.sortable")
    assert "Length" not in headers_of(table)
    assert headers_of(table)[:2] == ["Map", "Member of least |n|"]
    rows = [
        (text_of(a), text_of(b))
        for a, b in zip(column(table, "Map"), column(table, "Member of least |n|"), strict=True)
    ]
    assert ("3x+1", "-17") in rows
    assert text_of(page.find("h1")) == "Cycles of length 11"


def row_of(table: Tag, name: str) -> dict[str, str]:
    heads = headers_of(table)
    for row in table.select("tbody tr"):
        cells = [text_of(td) for td in row.find_all("td", recursive=False)]
        if cells[0] == name:
            return dict(zip(heads, cells, strict=True))
    raise AssertionError(f"no row for {name}")


def test_coprime_to_d_is_explained_and_shown_only_where_it_applies(site: Built) -> None:
    page = site.pages["maps/index.html"]
    table = page.select_one("table.sortable")
    assert "Coprime to d" in headers_of(table)
    note = page.select_one("#every-map ~ p.note")
    assert note is not None and text_of(note).startswith("Coprime to d:") and "(qn + d)/2" in text_of(note)
    # 3x+5: the positive cycles with members coprime to 5 have least members 1, 19, 23, 187, 347 (Belaga and
    # Mignotte 2006, Table 1, via literature.md, secondary), and 3x+d has d times each of 3x+1's five cycles
    # (literature.md): 5 of the 10 cycles are coprime to 5.
    assert row_of(table, "3x+5")["Cycles"] == "10"
    assert row_of(table, "3x+5")["Coprime to d"] == "5"
    # 3x+1: every integer is coprime to 1 (common practice, no source), so all five cycles count.
    assert row_of(table, "3x+1")["Coprime to d"] == "5" == row_of(table, "3x+1")["Cycles"]
    # No cell of the column is blank: a map of another form shows a dash, which the note explains.
    cells = [text_of(c) for c in column(table, "Coprime to d")]
    assert "" not in cells and "—" in cells
    assert "a dash marks a map of another form" in text_of(note)
    # A family of maps none of which is of the form qx+d has no such column at all.
    family = site.pages["families/mod-3/index.html"]
    assert "Coprime to d" not in headers_of(family.select_one("table.sortable"))
    assert family.select_one("p.note") is None or "Coprime" not in text_of(family.select_one("p.note"))


def test_every_table_wrapper_has_a_label_of_its_own(site: Built) -> None:
    # axe-core's rule landmark-unique (from memory): two regions of one page may not share a label; the
    # generic "Scrollable table" was given to every wrapper.
    seen = 0
    for rel, soup in site.table_pages():
        labels = [str(w.get("aria-label", "")) for w in soup.select(".table-wrap")]
        assert all(labels), f"{rel}: a wrapper without a label"
        assert "Scrollable table" not in labels, rel
        assert len(set(labels)) == len(labels), f"{rel}: labels used twice: {labels}"
        seen += len(labels)
    assert seen > 100
    labels = [w["aria-label"] for w in site.pages["maps/3x-plus-1/index.html"].select(".table-wrap")]
    assert labels == [
        "Branches of 3x+1",
        "Basins of the starts with |n| ≤ 100,000, claim 1",
        "Basins of the starts with |n| ≤ 1,000,000, claim 2",
        "Cycles of 3x+1",
    ]


def test_every_cell_of_a_stacked_table_carries_its_column_s_label(site: Built) -> None:
    # On a phone a stacked table draws each cell's data-label before it: it must be the column's heading.
    # Tables of cycles (up to 1,000 rows a page) are labelled by sort.js instead ("stack-later"): their cells
    # carry no label, and every row has one cell per heading (tests/browser/test_tables.py sees the labels).
    seen = later = 0
    for rel, soup in site.table_pages():
        for table in soup.select("table.stack"):
            heads = headers_of(table)
            for row in table.select("tbody tr"):
                cells = row.find_all(["th", "td"], recursive=False)  # a row's header cell is labelled too
                assert [str(td.get("data-label")) for td in cells] == heads, f"{rel}: {row}"
                seen += 1
        for table in soup.select("table.stack-later"):
            heads = headers_of(table)
            for row in table.select("tbody tr"):
                cells = row.find_all("td", recursive=False)
                assert len(cells) == len(heads) and not any(td.has_attr("data-label") for td in cells), rel
                later += 1
    assert seen > 50 and later > 700
