"""Exact arithmetic of residue-class maps: iteration, cycles and the cycle equation.

A map has a modulus m >= 2 and one affine branch per residue class:
T(n) = (a_i * n + b_i) / m when n = i (mod m), with a_i != 0 and
a_i * i + b_i = 0 (mod m) so that T sends integers to integers.  It acts on
all of Z.

Following a word i_1 .. i_k from n gives T^k(n) = (A n + B) / m^k with
A = a_{i_1} ... a_{i_k}; a cycle with that word therefore starts at
n = B / (m^k - A) (J. C. Lagarias, Acta Arith. 56 (1990) 33-53, Thm 2.1,
for 3x+1; the general affine form is the same composition).

All decisions are made in exact integer arithmetic: Python ints for small
values, gmpy2 mpz once members grow past a few thousand bits, where GMP's
arithmetic is measurably faster.  This module imports neither YAML nor Jinja.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import NamedTuple

import gmpy2

from builder.arith.integers import MPZ_BITS, show

__all__ = [
    "AffineMap",
    "CycleFound",
    "DEFAULT_MAX_WORK",
    "EntersCycle",
    "Equation",
    "STEP_FLOOR_BITS",
    "StepCost",
    "TRACE_BASE_BITS",
    "TraceOutcome",
    "Unresolved",
    "Walk",
    "branch_defects",
    "canonical_index",
    "cycle_entry",
    "cycle_equation",
    "default_max_bits",
    "from_canonical",
    "shortcut_form",
    "standard_form",
    "trace",
    "walk",
]

# Check the magnitude (and switch to mpz) every this many steps: checking
# every step would cost more than the step itself for small values.
_CHECK_EVERY = 256
# Stop keeping members of a long orbit once they would take this many bits
# in all; they are recomputed if the orbit turns out to be a cycle.
_MEMBER_BITS_BUDGET = 1 << 28
#: The base of a trace's default magnitude bound, in bits (``default_max_bits`` adds to it).
TRACE_BASE_BITS = 65536

# --- the work budget ---------------------------------------------------------------------------
# Steps and bits alone do not bound the time an orbit takes: a map whose multiplier has 20,000
# digits makes every member huge within a few steps.  So every orbit followed also has a budget
# of work, counted in bit-operations by one formula (StepCost) that tracks the time a step takes:
# a step reads its member and the map's constants once, so it costs their bit lengths added up;
# multiplying by a constant beyond one machine word costs a further log factor (GMP multiplies
# near-linearly, M(n) ~ n log n); and a step on a member of fewer than STEP_FLOOR_BITS bits is
# charged as if it had that many, since there the interpreter's own work per step, not the
# arithmetic, is what costs.  Measured on one core (common practice, no source: timings of this
# code): 0.1 to 0.3 ns per bit-operation, so DEFAULT_MAX_WORK is one to three seconds.

#: A step is charged as if its member had at least this many bits (the interpreter's cost of a step).
STEP_FLOOR_BITS = 4096
#: The default work budget of one orbit, in bit-operations (one to three seconds on one core).
DEFAULT_MAX_WORK = 10**10


@dataclass(frozen=True, slots=True)
class StepCost:
    """The work of one step of a map, in bit-operations, as a function of the member's bit length."""

    constant_bits: int  # the bit length of the map's largest multiplier or increment
    weight: int  # 1 for constants within a 64-bit word, plus one per doubling beyond it

    @classmethod
    def of_constants(cls, constant_bits: int) -> StepCost:
        return cls(constant_bits, 1 + max(0, (constant_bits - 1).bit_length() - 6))

    def __call__(self, bits: int) -> int:
        """The work of a step whose new member has ``bits`` bits."""
        return (max(bits, STEP_FLOOR_BITS) + self.constant_bits) * self.weight

    @property
    def least(self) -> int:
        """The work of a step on a member of at most STEP_FLOOR_BITS bits."""
        return (STEP_FLOOR_BITS + self.constant_bits) * self.weight


def branch_defects(modulus: int, branches: Sequence[tuple[int, int]]) -> list[tuple[int, str]]:
    """Return (residue, reason) for every branch that makes the map ill defined.

    The map is well defined when there are exactly ``modulus`` branches, every
    multiplier is nonzero and a_i * i + b_i = 0 (mod m).  A residue of -1
    means the problem concerns the branch list as a whole.
    """
    if modulus < 2:
        return [(-1, f"expected a modulus of at least 2, got {show(modulus)}")]
    if len(branches) != modulus:
        return [
            (-1, f"expected {show(modulus)} branches (one per residue 0..{show(modulus - 1)}), got {len(branches)}")
        ]
    defects = []
    for i, (a, b) in enumerate(branches):
        if a == 0:
            defects.append((i, "expected a nonzero multiplier, got 0"))
        elif (a * i + b) % modulus:
            defects.append(
                (
                    i,
                    f"expected multiplier * {i} + increment to be divisible by {show(modulus)}, "
                    f"got {show(a)} * {i} + {show(b)} = {show(a * i + b)}, so T would not send integers to integers",
                )
            )
    return defects


@dataclass(frozen=True, slots=True)
class AffineMap:
    """A well-defined residue-class map T(n) = (a_i n + b_i) / m for n = i (mod m)."""

    modulus: int
    branches: tuple[tuple[int, int], ...]
    #: What a step costs (derived from the branches).
    cost: StepCost = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        defects = branch_defects(self.modulus, self.branches)
        if defects:
            raise ValueError(f"ill-defined map: {defects[0][1]}")
        object.__setattr__(self, "cost", StepCost.of_constants(self.max_constant_bits()))

    def __call__(self, n: int) -> int:
        a, b = self.branches[n % self.modulus]
        return (a * n + b) // self.modulus

    def mirror(self) -> AffineMap:
        """Return the conjugate map n -> -T(-n) (3x+1 mirrors to 3x-1)."""
        m = self.modulus
        return AffineMap(m, tuple((self.branches[-i % m][0], -self.branches[-i % m][1]) for i in range(m)))

    def max_constant_bits(self) -> int:
        """Return the largest bit length among the multipliers and increments."""
        return max(max(abs(a).bit_length(), abs(b).bit_length()) for a, b in self.branches)


@dataclass(frozen=True, slots=True)
class CycleFound:
    """The orbit of ``members[0]`` returns to it after ``len(members)`` steps."""

    members: tuple[int, ...]
    word: tuple[int, ...]


@dataclass(frozen=True, slots=True)
class EntersCycle:
    """The start is not periodic: after ``steps`` steps its orbit reaches ``cycle``."""

    steps: int
    cycle: CycleFound


@dataclass(frozen=True, slots=True)
class Unresolved:
    """The orbit neither returned nor repeated within the limits."""

    steps: int
    reason: str  # "steps", "magnitude" or "work"
    bits: int  # bit length of the last member computed


#: What ``trace`` says of an orbit.
TraceOutcome = CycleFound | EntersCycle | Unresolved


def canonical_index(members: Sequence[int]) -> int:
    """Index of the canonical member: least absolute value, the positive one on a tie."""
    least = min(map(abs, members))
    return members.index(least) if least in members else members.index(-least)


def from_canonical(cycle: CycleFound) -> CycleFound:
    """The same cycle read from its canonical member."""
    i = canonical_index(cycle.members)
    return CycleFound(cycle.members[i:] + cycle.members[:i], cycle.word[i:] + cycle.word[:i])


def shortcut_form(mapping: AffineMap) -> tuple[int, int] | None:
    """(q, d) when ``mapping`` is n/2 on even n and (q n + d)/2 on odd n with q and d odd, else None.

    These are the maps the literature calls qx+d in their shortcut form (3x+1 is q = 3, d = 1).
    """
    if mapping.modulus != 2 or mapping.branches[0] != (1, 0):
        return None
    q, d = mapping.branches[1]
    return (q, d) if q % 2 and d % 2 else None


def standard_form(mapping: AffineMap) -> tuple[int, int] | None:
    """(q, d) when ``mapping`` is n/2 on even n and q n + d on odd n with q and d odd (written (2q n + 2d)/2), else None.

    Its cycles are those of the shortcut form (shortcut_form): q n + d is even, so each odd step is followed by a
    halving, and a cycle of k steps, x of them odd, is one of k - x shortcut steps.
    """
    if mapping.modulus != 2 or mapping.branches[0] != (1, 0):
        return None
    a, b = mapping.branches[1]
    return (a // 2, b // 2) if a % 4 == 2 and b % 4 == 2 else None


def default_max_bits(mapping: AffineMap, start: int) -> int:
    """Return the default magnitude bound (bits) for tracing ``start`` under ``mapping``.

    It grows with the size of the data so that a catalogued cycle of huge
    members is never rejected merely for being large.
    """
    return TRACE_BASE_BITS + 8 * max(abs(start).bit_length(), mapping.cost.constant_bits)


class Walk(NamedTuple):
    """``steps`` steps of an orbit: the members v_0 .. v_(steps-1), their residues, and v_steps."""

    members: tuple[int, ...]
    word: tuple[int, ...]
    end: int


def walk(mapping: AffineMap, start: int, steps: int, *, record: bool = True) -> Walk:
    """Follow the orbit of ``start`` for ``steps`` steps exactly; the one orbit walker of Periplus.

    With ``record`` false only ``end`` is kept (members and word are empty).
    """
    m = mapping.modulus
    br = mapping.branches
    members: list[int] = []
    word: list[int] = []
    n = gmpy2.mpz(start) if abs(start).bit_length() > MPZ_BITS else start
    for _ in range(steps):
        r = int(n % m)
        if record:
            members.append(int(n))
            word.append(r)
        a, b = br[r]
        n = (a * n + b) // m
    return Walk(tuple(members), tuple(word), int(n))


def cycle_entry(mapping: AffineMap, start: int, period: int) -> tuple[int, int]:
    """Where the orbit of ``start`` enters the cycle of length ``period`` it reaches: (steps before, member)."""
    lead = walk(mapping, start, period, record=False).end
    trail = start
    steps = 0
    while trail != lead:
        trail = mapping(trail)
        lead = mapping(lead)
        steps += 1
    return steps, trail


def trace(
    mapping: AffineMap, start: int, max_steps: int, max_bits: int | None = None, max_work: int = DEFAULT_MAX_WORK
) -> TraceOutcome:
    """Iterate T exactly from ``start`` and classify its orbit.

    Returns CycleFound if the orbit returns to ``start`` within ``max_steps``
    steps, EntersCycle if it repeats without returning (Brent's cycle
    detection, R. P. Brent, BIT 20 (1980) 176-184), and Unresolved if
    neither happens within ``max_steps`` steps, before a member exceeds
    ``max_bits`` bits, or before the work passes ``max_work`` bit-operations.
    Sizes and work are checked every step once members or constants are
    large, and every ``_CHECK_EVERY`` steps while they are small (a step
    then adds at most 65 bits).  Never loops without bound.
    """
    if max_bits is None:
        max_bits = default_max_bits(mapping, start)
    cost = mapping.cost
    every = _CHECK_EVERY if cost.constant_bits <= 64 and abs(start).bit_length() <= MPZ_BITS else 1
    work = 0
    m = mapping.modulus
    br = mapping.branches
    n = start
    tortoise = start
    tortoise_at = 0
    power = 1
    members: list[int] | None = [start]
    word: bytearray | list[int] = bytearray() if m <= 256 else []
    budget = _MEMBER_BITS_BUDGET
    big = False
    step = 0
    while step < max_steps:
        r = n % m
        a, b = br[r]
        n = (a * n + b) // m
        step += 1
        word.append(r)
        if n == start:
            kept = walk(mapping, start, step).members if members is None else tuple(map(int, members))
            return CycleFound(kept, tuple(word))
        if n == tortoise:
            return _enters(mapping, start, step - tortoise_at)
        if members is not None:
            members.append(n)
        if step == power:
            tortoise = n
            tortoise_at = step
            power <<= 1
        if not step % every:
            bits = n.bit_length()
            if bits > max_bits:
                return Unresolved(step, "magnitude", bits)
            work += cost(bits) * every
            if work > max_work:
                return Unresolved(step, "work", bits)
            if not big and (bits > MPZ_BITS or every == 1):
                big = True
                every = 1
                n = gmpy2.mpz(n)
                br = tuple((gmpy2.mpz(a), gmpy2.mpz(b)) for a, b in br)
            if members is not None:
                budget -= bits * every
                if budget < 0:
                    members = None
    return Unresolved(step, "steps", n.bit_length())


def _enters(mapping: AffineMap, start: int, period: int) -> EntersCycle:
    """Locate where the orbit of ``start`` enters its cycle of the given period."""
    steps, entry = cycle_entry(mapping, start, period)
    cycle = walk(mapping, entry, period)
    return EntersCycle(steps, CycleFound(cycle.members, cycle.word))


@dataclass(frozen=True, slots=True)
class Equation:
    """T^k(n) = (multiplier * n + offset) / denominator along a word of length k.

    ``target`` is denominator - multiplier (m^k - A); a periodic point
    following the word satisfies target * n = offset.
    """

    multiplier: int  # A, the product of the branch multipliers
    offset: int  # B
    denominator: int  # m^k

    @property
    def target(self) -> int:
        return self.denominator - self.multiplier

    def start(self) -> tuple[int, int]:
        """Return the fixed point B / (m^k - A) as a reduced fraction (numerator, denominator > 0).

        Raises ZeroDivisionError when m^k = A (the equation does not fix a start).
        """
        t = self.target
        if t == 0:
            raise ZeroDivisionError("m^k - A = 0")
        g = gmpy2.gcd(self.offset, t)
        num, den = self.offset // g, t // g
        if den < 0:
            num, den = -num, -den
        return int(num), int(den)


_TREE_LEAF = 64


def cycle_equation(mapping: AffineMap, word: Sequence[int]) -> Equation:
    """Return A, B, m^k with T^k(n) = (A n + B) / m^k for every n following ``word``.

    Computed from the branch constants alone, independently of iteration:
    composing (A1 n + B1)/M1 then (A2 n + B2)/M2 gives
    (A2 A1 n + A2 B1 + B2 M1) / (M1 M2).  Long words are combined as a
    balanced product tree so that big-integer cost stays near-linear.
    """
    m = mapping.modulus
    br = mapping.branches
    for r in word:
        if not 0 <= r < m:
            raise ValueError(f"residue {show(r)} is outside 0..{show(m - 1)}")

    a_total, b_total, m_total = _combined(br, m, word, 0, len(word))
    return Equation(a_total, b_total, m_total)


# The product tree of cycle_equation, as functions of the module: a nested function that calls itself
# makes a reference cycle on every call, which only the cycle collector frees (a checking process
# pauses it, builder.processes.no_cycle_collection).


def _leaf(br: tuple[tuple[int, int], ...], m: int, word: Sequence[int], lo: int, hi: int) -> tuple[int, int, int]:
    a_total, b_total, m_total = 1, 0, 1
    for r in word[lo:hi]:
        a, b = br[r]
        a_total, b_total, m_total = a * a_total, a * b_total + b * m_total, m * m_total
    return a_total, b_total, m_total


def _combined(br: tuple[tuple[int, int], ...], m: int, word: Sequence[int], lo: int, hi: int) -> tuple[int, int, int]:
    if hi - lo <= _TREE_LEAF:
        return _leaf(br, m, word, lo, hi)
    mid = (lo + hi) // 2
    a1, b1, m1 = _combined(br, m, word, lo, mid)
    a2, b2, m2 = _combined(br, m, word, mid, hi)
    if max(a1.bit_length(), b1.bit_length()) > MPZ_BITS:
        a1, b1, m1 = gmpy2.mpz(a1), gmpy2.mpz(b1), gmpy2.mpz(m1)
    return int(a2 * a1), int(a2 * b1 + b2 * m1), int(m1 * m2)
