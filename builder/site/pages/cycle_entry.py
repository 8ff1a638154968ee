"""Each cycle's page: members, word, cycle equation, orbit, provenance, related cycles, how to cite it.

Long cycles show their first and last members and the start of their word (the map's data
file has every one); the equation is shown in MathML and in plain text.
"""

from __future__ import annotations

import functools
import operator
import posixpath
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, fields
from urllib.parse import quote

from markupsafe import Markup

from builder.arith.dynamics import standard_form
from builder.arith.integers import show, to_decimal
from builder.catalogue.model import Cycle, MapEntry, Provenance
from builder.catalogue.relations import CycleKey
from builder.site.escaping import escape_output
from builder.site.markdown import render_notes
from builder.site.mathml import cycle_equation_mathml
from builder.site.numbers import grouped, grouped_ints
from builder.site.pages.common import Link, Page, PageKind
from builder.site.pages.context import SiteContext, counts_text
from builder.site.pages.maps_index import MAPS_CRUMBS, SECTION
from builder.site.paths import cycle_url, length_url, map_url
from builder.site.records import CycleRecord
from builder.site.svg import orbit_plot, word_strip

__all__ = ["KIND", "MEMBERS_ON_PAGE", "RelatedGroup"]

#: Cycles up to this length show every member on their page; longer ones their first and last.
MEMBERS_ON_PAGE = 1000
HEAD_MEMBERS, TAIL_MEMBERS = 500, 100
WORD_ON_PAGE = 4000
SAME_WORD_SHOWN = 12
SEARCHED_WORD = 400  # longest word a link searches for (its address stays short); longer ones link their length
#: The way back to the site's root from a cycle's page (maps/MAP/CYCLE/index.html), which its links start with.
CYCLE_ROOT = "../../../"


@dataclass(frozen=True, slots=True)
class RelatedGroup:
    """Cycles related to this one in one way (its mirror, scaled copies, the same word elsewhere): the kind,
    and the list items of its links (built here rather than link by link in the template: a page links up to
    fifteen cycles, and as a loop of the template they took a tenth of the time a cycle page takes)."""

    kind: str
    items: Markup


def _items(links: Sequence[Link], root: str) -> str:
    """The list items of ``links`` on a page ``root`` away from the site's root, each text escaped."""
    return "".join(
        [
            f'<li><a href="{root}{escape_output(link.url)}">{escape_output(link.label)}</a>'
            + (f" ({escape_output(link.note)})</li>" if link.note else "</li>")
            for link in links
        ]
    )


def _factors(entry: MapEntry, cycle: Cycle) -> list[tuple[int, int]]:
    """A = product of a_r^count_r, with equal multipliers merged, in order of residue."""
    merged: dict[int, int] = {}
    for (a, _), count in zip(entry.branches, cycle.residue_counts, strict=True):
        if count:
            merged[a] = merged.get(a, 0) + count
    return list(merged.items())


def _shortcut_target(entry: MapEntry, cycle: Cycle) -> dict[str, object] | None:
    """For a map in standard form (n/2, q n + d), the target of the same cycle in the shortcut form.

    Each odd step q n + d is followed by a halving, so the cycle's k steps, x of them odd, are k - x shortcut
    steps, and 2^k - (2q)^x = 2^x (2^(k-x) - q^x): the shortcut target, the one the literature writes
    (2^11 - 3^7 for the 3x+1 cycle through -17), times 2^x.
    """
    form = standard_form(entry.dynamics)
    if form is None:
        return None
    q, x = form[0], cycle.residue_counts[1]
    k = cycle.length - x
    target = 2**k - q**x
    assert cycle.equation.target == 2**x * target, "a standard form's target is 2^x times its shortcut's"
    d = form[1]
    odd = f"{grouped(q)}n {'+' if d > 0 else '−'} {grouped(abs(d))}"
    return {"q": q, "x": x, "k": k, "target": target, "odd": odd}


def _equation_text(entry: MapEntry, cycle: Cycle) -> str:
    """The cycle equation in plain text, for print and for readers without MathML."""
    eq = cycle.equation
    powers = [
        f"({show(a)})^{c}" if a < 0 else (f"{show(a)}^{c}" if c > 1 else show(a))
        for a, c in _factors(entry, cycle)
        if a != 1
    ]
    product = " · ".join(powers) or "1"
    head = f"n = B / ({entry.modulus}^{cycle.length} − {product})"
    if eq.target == 0:
        return f"{head}: here {entry.modulus}^k = A and B = 0, so every start following the word is periodic"
    return f"{head} = {show(eq.offset)} / {show(eq.target)} = {show(cycle.canonical)}"


#: The characters BibTeX and LaTeX treat specially, and how each is written.
_BIBTEX = str.maketrans(
    {"{": "\\{", "}": "\\}", "\\": "\\textbackslash{}", **{c: "\\" + c for c in "%&#$_"}, "^": "\\^{}", "~": "\\~{}"}
)


@functools.lru_cache(maxsize=4096)  # the record's title, its maintainers, finders...: the same on many pages
def _bibtex(text: str) -> str:
    """Escape the characters BibTeX and LaTeX treat specially."""
    return text.translate(_BIBTEX)


def _member_items(members: Sequence[int]) -> Markup:
    """The list items of members, built here rather than item by item in the template (a long cycle
    has thousands): grouped integers, digits, commas and minus signs, with nothing to escape."""
    if not members:
        return Markup("")
    return Markup("<li>" + "</li>\n<li>".join(grouped_ints(members)) + "</li>\n")


@dataclass(frozen=True, slots=True)
class _Kin:
    """The cycles related to one cycle, as keys: all that its related links are made from (besides each
    linked cycle's map name and least member, and the cycle's length)."""

    mirror: CycleKey | None
    scaled: tuple[int, CycleKey] | None  # the factor and the cycle it is a scaled copy of
    copies: tuple[tuple[int, CycleKey], ...]  # its scaled copies, with their factors
    same: tuple[CycleKey, ...]  # the first cycles of other maps with its word, those above left out
    more: int  # how many other cycles with its word are not among ``same`` (nor above)


def _kin(site: SiteContext, key: CycleKey) -> _Kin | None:
    """The cycle's mirror, what it is a scaled copy of, its scaled copies, and the same word in other maps."""
    rel = site.rel
    mirror = rel.mirror.get(key)
    scaled = rel.scaled_from.get(key)
    copies = rel.scaled_to.get(key, ())
    group = rel.word_group.get(key)
    if mirror is None and scaled is None and not copies and group is None:
        return None
    listed = {k for k in (mirror, scaled.base if scaled else None, *(s.copy for s in copies)) if k is not None}
    same: tuple[CycleKey, ...] = ()
    more = 0
    if group is not None:
        # The listed cycles that share the word are shown above, not again (a group is one shared tuple).
        count = rel.same_word_count(key) - sum(1 for k in listed if rel.word_group.get(k) is group)
        same = tuple(rel.same_word(key, SAME_WORD_SHOWN, listed))
        more = count - len(same)
    return _Kin(
        mirror,
        (scaled.factor, scaled.base) if scaled else None,
        tuple((s.factor, s.copy) for s in copies),
        same,
        more,
    )


def _related(site: SiteContext, kin: _Kin | None, length: int, word: str) -> list[RelatedGroup]:
    """The groups of related links that ``kin`` makes; the cycle's ``word`` as the catalogue writes it."""
    related: list[RelatedGroup] = []
    if kin is None:
        return related

    def group(kind: str, items: str) -> None:
        related.append(RelatedGroup(kind, Markup(items)))  # every text escaped by _items

    if kin.mirror is not None:
        group("Mirror", _items([site.cycle_link(kin.mirror, "the negated cycle of the mirror map")], CYCLE_ROOT))
    if kin.scaled is not None:
        factor, base = kin.scaled
        group("Scaled copy of", _items([site.cycle_link(base, f"times {to_decimal(factor)}")], CYCLE_ROOT))
    if kin.copies:
        links = [site.cycle_link(copy, f"times {to_decimal(factor)}") for factor, copy in kin.copies]
        group("Scaled copies", _items(links, CYCLE_ROOT))
    if kin.same:
        items = _items([site.cycle_link(k) for k in kin.same], CYCLE_ROOT)
        if kin.more > 0:
            # The search for the whole word at this length lists exactly the cycles whose word is one of its
            # rotations (search.js: a fragment may run round the word), this one and the listed ones included.
            if len(word) <= SEARCHED_WORD:
                search = f"search/index.html?length={length}&word={quote(word, safe=',')}"
                more = Link(f"{grouped(kin.more)} more: every cycle with this word, in the search", search)
            else:
                more = Link(f"Every cycle of length {grouped(length)}, of any word", length_url(length))
            items += _items([more], CYCLE_ROOT)
        group("Same word in other maps", items)
    return related


def _kin_of(site: SiteContext, map_id: str, cycles: Sequence[Cycle]) -> dict[str, _Kin | None]:
    """The related cycles of each of ``cycles`` of the map, as keys (made once for their pages and the
    digest of their inputs)."""

    def make() -> dict[str, _Kin | None]:
        return {c.id: _kin(site, (map_id, c.id)) for c in cycles}

    return site.made_once("kin", (map_id, len(cycles), cycles[0].id if cycles else ""), make)


def _citations(site: SiteContext, entry: MapEntry, cycle: Cycle, title: str, path: str) -> tuple[str, str]:
    """The entry's citation as a line of text and as a BibTeX entry (with a url only when the record has a
    published address)."""
    prov = cycle.provenance
    record, edition = site.record, site.edition
    where = f"entry {entry.id}/{cycle.id}, fingerprint {cycle.fingerprint}"
    cite = (
        f"{title} (length {cycle.length}). {record.title}, {edition.shown}, {where}, "
        f"{site.cited_address(path)}. Found by {prov.found_by}, {prov.found_on.isoformat()}. "
        f"Data licence: {record.licence}."
    )
    bibtex = (
        f"@misc{{periplus:{entry.id}/{cycle.id},\n"
        f"  title        = {{{_bibtex(title)}}},\n"
        f"  howpublished = {{{_bibtex(record.title)}, {_bibtex(edition.shown)}, {_bibtex(where)}}},\n"
        f"  author       = {{{{{_bibtex(record.maintainers)}}}}},\n"
        f"  note         = {{Cycle of length {cycle.length}; found by {_bibtex(prov.found_by)}, "
        f"{prov.found_on.isoformat()}; data licence {_bibtex(record.licence)}}},\n"
        + (f"  url          = {{{_bibtex(site.permalink(path))}}},\n" if site.base_url is not None else "")
        + f"  year         = {{{prov.found_on.year}}}\n}}"
    )
    return cite, bibtex


def _members(r: CycleRecord, members: tuple[int, ...]) -> dict[str, object]:
    """The members the page lists (``members``, from the canonical one): all of them, or the first and the
    last with a count of those left out."""
    tail: tuple[int, ...] = ()
    if len(members) <= MEMBERS_ON_PAGE:
        head, hidden = members, 0
    else:
        head, tail = members[:HEAD_MEMBERS], members[-TAIL_MEMBERS:]
        hidden = len(members) - HEAD_MEMBERS - TAIL_MEMBERS
    word = r.word if len(r.word) <= WORD_ON_PAGE else r.word[:WORD_ON_PAGE]
    return {
        "head": _member_items(head),
        "tail": _member_items(tail),
        "hidden": hidden,
        "tail_start": len(members) - len(tail) + 1,
        "word": word,
        "word_cut": len(r.word) - len(word),
    }


def cycle_page(site: SiteContext, entry: MapEntry, cycle: Cycle, kin: _Kin | None, crumbs: tuple[Link, ...]) -> Page:
    key = (entry.id, cycle.id)
    r = site.records[key]
    title = f"{entry.name}: cycle through {grouped(cycle.canonical)}"
    svg_id = f"c-{entry.id}-{cycle.id}"
    # The pretty address (absolute with a base URL); links on the page use index.html.
    path = posixpath.dirname(r.url) + "/"
    cite, bibtex = _citations(site, entry, cycle, title, path)
    eq = cycle.equation
    members = cycle.canonical_members
    context = {
        "map": entry,
        "map_url": map_url(entry.id),
        "record": r,
        "cycle": cycle,  # its numbers as integers, which the template groups (record has them as decimal text)
        **_members(r, members),
        "export": f"data/maps/{entry.id}.json",
        "word_svg": word_strip(cycle.canonical_word, entry.modulus, f"Word of {title}", svg_id + "-w", entry.branches),
        "plot_svg": orbit_plot(members, f"Orbit of {title}", svg_id + "-p"),
        "equation": cycle_equation_mathml(
            entry.modulus, cycle.length, _factors(entry, cycle), eq.offset, eq.target, cycle.canonical
        ),
        "equation_text": _equation_text(entry, cycle),
        "shortcut": _shortcut_target(entry, cycle),
        "counts_text": counts_text(entry, cycle),
        "length_url": length_url(cycle.length),
        "notes": render_notes(cycle.provenance.notes),
        "references": site.reference_links(cycle.provenance.references),
        "related": _related(site, kin, cycle.length, r.word),
        "marks": site.marks(key),
        "cite": cite,
        "bibtex": bibtex,
        "permalink": site.permalink(path),
        "published": site.base_url is not None,
        "history": site.history_view(r.history),
    }
    page = Page(cycle_url(entry.id, cycle.id), "cycle.html", title, SECTION, context, crumbs, in_site_map=False)
    assert page.root == CYCLE_ROOT, "every cycle page is as deep as CYCLE_ROOT says"
    return page


def cycle_pages(site: SiteContext, map_id: str, cycles: Sequence[Cycle]) -> Iterator[Page]:
    entry = site.cat.maps[map_id]
    kin = _kin_of(site, map_id, cycles)
    crumbs = (*MAPS_CRUMBS, Link(entry.name, map_url(entry.id)))  # the same on every cycle page of the map
    return (cycle_page(site, entry, cycle, kin[cycle.id], crumbs) for cycle in cycles)


#: Every field of a cycle's provenance, read as one tuple (in C; as a dataclass, a digest reads it in Python).
_provenance = operator.attrgetter(*(f.name for f in fields(Provenance)))


def cycle_inputs(site: SiteContext, map_id: str, cycles: Sequence[Cycle]) -> object:
    """What the map's cycle pages show: each entry as written and verified (the fingerprint fixes the
    map's definition and the members, word and equation), its history, relations and sources.

    The related cycles are given as numbers in a table of the cycles the map's pages link to, each with
    what its link shows (its map's name and least member): the first cycles of a word that thousands
    of maps share are linked from most of their cycles."""
    out = []
    kin_of = _kin_of(site, map_id, cycles)
    linked: dict[CycleKey, int] = {}

    def at(key: CycleKey) -> int:
        return linked.setdefault(key, len(linked))

    for c in cycles:
        key = (map_id, c.id)
        kin = kin_of[c.id]
        related = None
        if kin is not None:
            related = (
                None if kin.mirror is None else at(kin.mirror),
                None if kin.scaled is None else (kin.scaled[0], at(kin.scaled[1])),
                tuple((factor, at(copy)) for factor, copy in kin.copies),
                tuple(at(k) for k in kin.same),
                kin.more,
            )
        out.append(
            (
                c.id,
                c.fingerprint,
                c.start,
                _provenance(c.provenance),
                site.records[key].history,
                related,
                site.reference_links(c.provenance.references),
                site.marks(key),
            )
        )
    links = [(key, site.cat.maps[key[0]].name, site.records[key].canonical) for key in linked]
    return (site.cat.maps[map_id].name, out, links)


KIND = PageKind("cycle", map_pages=cycle_pages, map_inputs=cycle_inputs, per_cycle=True)
