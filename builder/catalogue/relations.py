"""Relations between verified cycles: the same word elsewhere, mirrors, scaled copies.

All of it is derived from the verified model, never from the entries' text:

- *same word*: cycles of maps with the same modulus whose words are
  rotations of one another (one Lyndon word, J. Berstel and D. Perrin,
  "The origins of combinatorics on words", Eur. J. Comb. 28 (2007)).
- *mirror*: the map n -> -T(-n) sends each cycle of T to the negated cycle;
  where the mirror map is catalogued (3x+1 and 3x-1), the two cycles link.
- *scaled copy*: for a map n/2, (q n + d)/2 with q, d odd and g | d, g odd,
  n -> g n sends the cycles of q x + d/g onto cycles of q x + d whose members
  are all divisible by g.  Counts of 3x+d cycles in the literature usually
  list only cycles whose members are coprime to d (see the map notes).
"""

from __future__ import annotations

import hashlib
from collections.abc import Collection, Iterator
from dataclasses import dataclass, field
from math import gcd

from builder.arith.dynamics import AffineMap, shortcut_form
from builder.arith.words import rotation_key
from builder.catalogue.cache import VerifyCache, definition_digest
from builder.catalogue.model import Catalogue, Cycle, MapEntry

__all__ = ["Relations", "find_relations", "natural_order", "qx_plus_d", "relations_key"]

CycleKey = tuple[str, str]  # (map id, cycle id)


def qx_plus_d(entry: MapEntry) -> tuple[int, int] | None:
    """(q, d) when the map is n/2 for even n and (q n + d)/2 for odd n with q, d odd."""
    return shortcut_form(entry.dynamics)


def natural_order(entry: MapEntry) -> tuple[int, int, bool, int, bool, str, str]:
    """The key of the natural order of maps, in which every list of maps is given: qx+d maps by |q| (q before
    -q), then |d| (d before -d: 3x+1, 3x-1, 3x+5, 3x-5, 3x+7, ..., 3x-11), then every other map by name;
    the id last."""
    form = shortcut_form(entry.dynamics)
    if form is None:
        return (1, 0, False, 0, False, entry.name, entry.id)
    q, d = form
    return (0, abs(q), q < 0, abs(d), d < 0, entry.name, entry.id)


def _members_gcd(cycle: Cycle) -> int:
    g = 0
    for n in cycle.members:
        g = gcd(g, n)
        if g == 1:
            break
    return g


@dataclass(frozen=True, slots=True)
class Scaling:
    """``copy`` is ``factor`` times ``base`` (members multiplied by factor)."""

    factor: int
    base: CycleKey
    copy: CycleKey


@dataclass(slots=True)
class Relations:
    """Every relation found, keyed by (map id, cycle id)."""

    # Every cycle with the same word (in other maps, since one map has one cycle per word), the cycle
    # itself included, in the natural order of maps: one tuple shared by the whole group, so a word shared
    # by thousands of maps (the fixed point 0 of every qx+d map) costs its size once, not its square.  Read
    # it with ``same_word``.
    word_group: dict[CycleKey, tuple[CycleKey, ...]] = field(default_factory=dict)
    mirror: dict[CycleKey, CycleKey] = field(default_factory=dict)
    mirror_map: dict[str, str] = field(default_factory=dict)  # map id -> its catalogued mirror map
    scaled_from: dict[CycleKey, Scaling] = field(default_factory=dict)  # copy -> how it is scaled
    scaled_to: dict[CycleKey, tuple[Scaling, ...]] = field(default_factory=dict)  # base -> its copies
    # For qx+d maps: the common factor of a cycle's members with d (1: coprime to d).
    shared_factor: dict[CycleKey, int] = field(default_factory=dict)
    # Every cycle's key, in catalogue order: the one tuple that every table here holds for the cycle (and
    # that the site's tables can hold too), instead of a tuple of its own in each of 50,000-entry tables.
    keys: dict[CycleKey, CycleKey] = field(default_factory=dict)

    def same_word(self, key: CycleKey, first: int, leaving: Collection[CycleKey] = ()) -> list[CycleKey]:
        """The first ``first`` cycles of other maps with the word of ``key``, in the natural order of maps
        (natural_order), but those of ``leaving``."""
        # One map has one cycle per word: of the group's first first + 1 + len(leaving), at most
        # 1 + len(leaving) are the cycle's own or left out.
        head = self.word_group.get(key, ())[: first + 1 + len(leaving)]
        return [k for k in head if k[0] != key[0] and k not in leaving][:first]

    def same_word_count(self, key: CycleKey) -> int:
        group = self.word_group.get(key, ())
        return len(group) - 1 if group else 0


def negated_canonical(members: Collection[int], canonical: int) -> int:
    """The canonical member (least |n|, positive on a tie) of the cycle of negated ``members``, whose own is
    ``canonical``: -canonical, or canonical itself when it and its negation are both members (a tie it won)."""
    return canonical if canonical > 0 and -canonical in members else -canonical


def _all_cycles(catalogue: Catalogue) -> Iterator[tuple[MapEntry, Cycle]]:
    for map_id, cycles in catalogue.cycles.items():
        entry = catalogue.maps[map_id]
        for cycle in cycles:
            yield entry, cycle


def relations_key(catalogue: Catalogue) -> bytes:
    """A digest of all that the relations are found from: each map's id and definition, and each cycle's
    map, id and least member (which, with the map's definition, fix the cycle's members and its word up
    to rotation), in catalogue order.  Catalogues with the same key have the same relations."""
    h = hashlib.sha256(b"periplus relations 2\0")
    for map_id, entry in catalogue.maps.items():  # the name too: it places the map in the natural order
        h.update(f"{map_id}\0{definition_digest(entry.dynamics)}\0{entry.name}\n".encode())
    for map_id, cycles in catalogue.cycles.items():
        h.update(f"{map_id}\0{len(cycles)}\n".encode())
        # Hexadecimal, which has no limit of digits (decimal text refuses integers of more than 4,300).
        h.update("\0".join(f"{c.id}\1{c.canonical:x}" for c in cycles).encode())
    return h.digest()


def find_relations(catalogue: Catalogue, cache: VerifyCache | None = None, key: bytes | None = None) -> Relations:
    """Every relation among the catalogue's cycles (deterministic order); with a ``cache``, kept there under
    :func:`relations_key` (``key``, if the caller has it already), and taken from it when the key is the same."""
    if cache is None:
        return _find_relations(catalogue)
    key = b"relations:" + (key if key is not None else relations_key(catalogue))
    kept = cache.worked_out(key)
    if isinstance(kept, Relations):
        return kept
    rel = _find_relations(catalogue)
    cache.keep_worked_out(key, rel)
    return rel


def _find_relations(catalogue: Catalogue) -> Relations:
    rel = Relations()
    key_of = rel.keys
    for map_id, cycles in catalogue.cycles.items():
        for cycle in cycles:
            key = (map_id, cycle.id)
            key_of[key] = key
    by_branches = {entry.dynamics: map_id for map_id, entry in catalogue.maps.items()}
    by_canonical = {(map_id, cycle.canonical): cycle for map_id, cycles in catalogue.cycles.items() for cycle in cycles}

    # Same word: group by modulus and least rotation of the word.
    groups: dict[tuple[int, bytes | tuple[int, ...]], list[CycleKey]] = {}
    for entry, cycle in _all_cycles(catalogue):
        groups.setdefault((entry.modulus, rotation_key(cycle.word)), []).append(key_of[(entry.id, cycle.id)])
    order = {map_id: natural_order(entry) for map_id, entry in catalogue.maps.items()}
    for keys in groups.values():
        if len(keys) > 1:
            group = tuple(sorted(keys, key=lambda k: order[k[0]]))  # one map has one cycle per word
            assert len({k[0] for k in group}) == len(group), "one map has one cycle per word (the cycle equation)"
            for key in group:
                rel.word_group[key] = group

    # Mirrors: n -> -T(-n).
    for map_id, entry in catalogue.maps.items():
        mirror_id = by_branches.get(entry.dynamics.mirror())
        if mirror_id is None:
            continue
        rel.mirror_map[map_id] = mirror_id
        for cycle in catalogue.cycles.get(map_id, ()):
            twin = by_canonical.get((mirror_id, negated_canonical(cycle.members, cycle.canonical)))
            if twin is not None and (mirror_id, twin.id) != (map_id, cycle.id):
                rel.mirror[key_of[(map_id, cycle.id)]] = key_of[(mirror_id, twin.id)]

    # Scaled copies among qx+d maps.
    scaled_to: dict[CycleKey, list[Scaling]] = {}
    base_maps: dict[tuple[int, int], str | None] = {}  # (q, d) -> the map n/2, (qn+d)/2 if catalogued
    for map_id, cycles in catalogue.cycles.items():
        form = qx_plus_d(catalogue.maps[map_id])
        if form is None:
            continue
        q, d = form
        for cycle in cycles:
            key = key_of[(map_id, cycle.id)]
            g = gcd(_members_gcd(cycle), d)
            rel.shared_factor[key] = g
            if g == 1:
                continue
            base_form = (q, d // g)
            if base_form not in base_maps:
                base_maps[base_form] = by_branches.get(_shortcut(*base_form))
            base_map = base_maps[base_form]
            if base_map is None:
                continue
            base = by_canonical.get((base_map, cycle.canonical // g))
            if base is None:
                continue
            scaling = Scaling(g, key_of[(base_map, base.id)], key)
            rel.scaled_from[key] = scaling
            scaled_to.setdefault(scaling.base, []).append(scaling)
    rel.scaled_to = {k: tuple(sorted(v, key=lambda s: (s.factor, s.copy))) for k, v in sorted(scaled_to.items())}
    return rel


def _shortcut(q: int, d: int) -> AffineMap:
    return AffineMap(2, ((1, 0), (q, d)))
