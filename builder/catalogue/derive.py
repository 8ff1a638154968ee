"""Deriving a cycle exactly from what its entry claims, and comparing every claim with what was derived.

A cycle is accepted only when exact iteration from its start returns to the start, the cycle
equation computed independently from the word agrees, and every claim the entry makes (word,
length, members) matches what was derived.  An entry that gives a word without a start has its
start solved from the cycle equation n = B / (m^k - A) (:func:`solve_word`, shared with drafting).
"""

from __future__ import annotations

from dataclasses import dataclass

from builder.arith.dynamics import (
    AffineMap,
    CycleFound,
    EntersCycle,
    Equation,
    Unresolved,
    canonical_index,
    cycle_equation,
    shortcut_form,
    standard_form,
    trace,
)
from builder.arith.fingerprint import cycle_fingerprint
from builder.arith.integers import show
from builder.arith.words import is_rotation, least_period, word_text
from builder.catalogue.files import RawFile
from builder.catalogue.limits import Limits
from builder.catalogue.model import Cycle, MapEntry, Provenance
from builder.catalogue.nodes import Node, SequenceNode
from builder.catalogue.reader import EntryReader, short
from builder.errors import KeyPath
from builder.wording import count

__all__ = ["Claims", "WordStart", "derive_cycle", "solve_word"]


@dataclass(frozen=True, slots=True)
class Claims:
    """What a cycle entry states, as read (None where it does not say), and the nodes it wrote them in."""

    start: int | None
    word: tuple[int, ...] | None
    length: int | None
    members: list[int] | None
    nodes: dict[str, Node]


@dataclass(frozen=True, slots=True)
class WordStart:
    """The start the cycle equation gives a word: n = B / (m^k - A), as a reduced fraction.

    ``fraction`` is None when m^k = A, so that the equation fixes no start.
    """

    equation: Equation
    fraction: tuple[int, int] | None

    @property
    def integer(self) -> int | None:
        """The start when it is an integer."""
        return self.fraction[0] if self.fraction is not None and self.fraction[1] == 1 else None


def solve_word(mapping: AffineMap, word: tuple[int, ...]) -> WordStart:
    """Solve the cycle equation of ``word`` for its start."""
    equation = cycle_equation(mapping, word)
    return WordStart(equation, None if equation.target == 0 else equation.start())


def derive_cycle(
    doc: EntryReader, raw: RawFile, entry: MapEntry, claims: Claims, provenance: Provenance, limits: Limits
) -> tuple[Cycle, Node, KeyPath] | None:
    """Re-derive the cycle from its start (or its word) and compare every claim.

    Returns the cycle with the node and key path of its start (or word), or None after
    recording a problem.
    """
    mapping = entry.dynamics
    word = claims.word
    periodic = word is not None and least_period(word) < len(word)
    if periodic and claims.start is None:
        # The word is all there is: a repeated word names no cycle of its own.
        assert word is not None
        _periodic_word(doc, claims.nodes["word"], word, mapping.modulus)
        return None
    field = "start" if "start" in claims.nodes else "word"
    key: KeyPath = (field,)
    start_node = claims.nodes[field]
    start = claims.start if claims.start is not None else _start_of_word(doc, mapping, claims)
    if start is None:
        return None
    outcome = trace(mapping, start, limits.max_steps, limits.max_bits, limits.max_work)
    if not isinstance(outcome, CycleFound):
        _not_a_cycle(doc, outcome, start, start_node, key, limits)
        return None
    equation = cycle_equation(mapping, outcome.word)
    # The equation is derived from the branch constants alone; iteration
    # found a cycle, so disagreement means a bug in Periplus, not bad data.
    if equation.target * start != equation.offset:
        raise AssertionError(f"cycle equation disagrees with iteration for start {show(start)} in {raw.path}")
    _compare_claims(doc, claims, outcome, start, mapping.modulus, periodic)
    if doc.failed:
        return None
    return _cycle(raw, entry, start, outcome, equation, provenance), start_node, key


def _start_of_word(doc: EntryReader, mapping: AffineMap, claims: Claims) -> int | None:
    assert claims.word is not None
    node = claims.nodes["word"]
    solved = solve_word(mapping, claims.word)
    equation = solved.equation
    if solved.fraction is None:
        doc.error(
            node, ("word",),
            "the cycle equation does not fix a start for this word (m^k - A = 0); give a start as well",
            "no-integer-cycle",
        )  # fmt: skip
        return None
    if solved.integer is None:
        num, den = solved.fraction
        fraction = f"{show(equation.offset)} / {show(equation.target)}"
        if (num, den) != (equation.offset, equation.target):
            fraction += f" = {show(num)}/{show(den)}"
        doc.error(
            node, ("word",),
            f"expected a word with an integer cycle, got one whose cycle equation gives "
            f"n = B / (m^k - A) = {fraction}, not an integer",
            "no-integer-cycle",
        )  # fmt: skip
        return None
    return solved.integer


def _not_a_cycle(
    doc: EntryReader, outcome: EntersCycle | Unresolved, start: int, node: Node, key: KeyPath, limits: Limits
) -> None:
    """Say why the orbit of the start is not a cycle through it."""
    if isinstance(outcome, EntersCycle):
        found = outcome.cycle
        canonical = found.members[canonical_index(found.members)]
        if key == ("start",):
            doc.error(
                node, key,
                f"expected a member of a cycle, got {show(start)}, whose orbit enters the cycle through "
                f"{show(canonical)} (length {len(found.members)}) after {outcome.steps} steps",
                "not-periodic",
            )  # fmt: skip
        else:
            doc.error(
                node, key,
                f"the cycle equation gives n = {show(start)}, but its orbit does not follow the word: it enters the "
                f"cycle through {show(canonical)} after {outcome.steps} steps",
                "no-integer-cycle",
            )  # fmt: skip
        return
    if outcome.reason == "steps":
        steps = count(limits.max_steps, "step")
        why = f"did not return or repeat within {steps} (raise --max-steps to look further)"
    elif outcome.reason == "work":
        why = (
            f"did not return within the work budget of {limits.max_work:,} bit-operations: "
            f"{count(outcome.steps, 'step')}, reaching {outcome.bits:,} bits (raise --max-work to look further)"
        )
    else:
        why = (
            f"grew past {outcome.bits} bits after {outcome.steps} steps without returning "
            "(raise --max-bits to look further)"
        )
    doc.error(node, key, f"expected a member of a cycle, got {show(start)}, whose orbit {why}", "unresolved")


def _compare_claims(
    doc: EntryReader, claims: Claims, outcome: CycleFound, start: int, modulus: int, periodic: bool
) -> None:
    """Compare the word, length and members the entry gives with the derived cycle."""
    word, derived = claims.word, outcome.word
    k = len(derived)
    if periodic and word != derived:
        # A primitive cycle's word is aperiodic except for maps whose composed
        # slope is -1 (T(n) = -n on a class gives the 2-cycle 2, -2 with word 00),
        # so a repeated word is refused only when it is not what the orbit gives.
        assert word is not None
        _periodic_word(doc, claims.nodes["word"], word, modulus)
    elif word is not None and word != derived:
        hint = " (a rotation of it: the word is read from the start)" if is_rotation(word, derived) else ""
        doc.error(
            claims.nodes["word"], ("word",),
            f"expected {short(word_text(derived, modulus))} (the residues along the orbit of {show(start)}), "
            f"got {short(word_text(word, modulus))}{hint}",
            "wrong-word",
        )  # fmt: skip
    length = claims.length
    if length is not None and length != k:
        hint = " (a cycle's length is its least period)" if length % k == 0 else ""
        doc.error(
            claims.nodes["length"], ("length",),
            f"expected {k} (the steps until the orbit of {show(start)} returns), got {show(length)}{hint}",
            "wrong-length",
        )  # fmt: skip
    members = claims.members
    if members is None or tuple(members) == outcome.members:
        return
    node = claims.nodes["members"]
    assert isinstance(node, SequenceNode)
    if len(members) != k:
        message = f"expected {k} members (the cycle of {show(start)}), got {len(members)}"
        doc.error(node, ("members",), message, "wrong-members")
        return
    i = next(i for i in range(k) if members[i] != outcome.members[i])
    doc.error(
        node.items[i], ("members", i),
        f"expected {show(outcome.members[i])} (step {i} of the orbit of {show(start)}), got {show(members[i])}",
        "wrong-members",
    )  # fmt: skip


def _cycle(
    raw: RawFile, entry: MapEntry, start: int, outcome: CycleFound, equation: Equation, provenance: Provenance
) -> Cycle:
    """The verified cycle, with everything later stages read from it derived once."""
    mapping = entry.dynamics
    word = outcome.word
    index = canonical_index(outcome.members)
    counts = [0] * mapping.modulus
    for r in word:
        counts[r] += 1
    return Cycle(
        id=raw.id,
        map_id=entry.id,
        path=raw.path,
        start=start,
        members=outcome.members,
        word=word,
        canonical_index=index,
        equation=_rotated(equation, outcome.members[index]) if index else equation,
        residue_counts=tuple(counts),
        standard_length=_standard_length(mapping, len(word), counts),
        provenance=provenance,
        fingerprint=cycle_fingerprint(mapping.modulus, mapping.branches, outcome.members[index]),
    )


def _rotated(equation: Equation, member: int) -> Equation:
    """The cycle equation along the word read from ``member``, another member of the cycle of ``equation``.

    Rotating the word permutes the branches composed, so the product A of the multipliers and the
    denominator m^k stay; and the periodic point ``member`` satisfies T^k(n) = (A n + B') / m^k = n
    along its own word, so B' = (m^k - A) * member.
    """
    return Equation(equation.multiplier, equation.target * member, equation.denominator)


def _periodic_word(doc: EntryReader, node: Node, word: tuple[int, ...], modulus: int) -> None:
    period = least_period(word)
    unit = word_text(word[:period], modulus)
    doc.error(
        node,
        ("word",),
        f"expected an aperiodic word (a cycle's word is its least period), got {short(word_text(word, modulus))}, "
        f"which is {short(unit)} repeated {len(word) // period} times; write {short(unit)}",
        "periodic-word",
    )


def _standard_length(mapping: AffineMap, k: int, counts: list[int]) -> int | None:
    """Length counting n -> q n + d and the halving after it as two steps, for n/2 maps.

    Applies to 2-branch maps whose even branch is n/2: the shortcut form
    (q n + d)/2 with q, d odd takes k + x standard steps (x odd steps); the
    standard form q n + d itself takes k.  Elsewhere there is no such convention.
    """
    if shortcut_form(mapping) is not None:
        return k + counts[1]
    return k if standard_form(mapping) is not None else None
