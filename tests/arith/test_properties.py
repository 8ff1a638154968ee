"""Property tests (hypothesis) for the number-theory core.

Each test quotes, in its docstring, the rule it checks.  Random maps have a
modulus 2..6, nonzero multipliers and increments chosen so that
a_i * i + b_i = 0 (mod m), which is exactly what makes T send integers to
integers (builder.arith.dynamics.branch_defects).
"""

from __future__ import annotations

from fractions import Fraction

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from builder.arith.dynamics import AffineMap, CycleFound, EntersCycle, cycle_equation, trace
from builder.arith.words import is_rotation, least_period, least_rotation_index, rotate

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def maps(draw: st.DrawFn, units_only: bool = False, max_multiplier: int = 40) -> AffineMap:
    """A random well-defined map; with units_only every multiplier is prime to the modulus."""
    m = draw(st.integers(2, 6))
    pool = [a for a in range(-max_multiplier, max_multiplier + 1) if a and (not units_only or _gcd(a, m) == 1)]
    branches = []
    for i in range(m):
        a = draw(st.sampled_from(pool))
        t = draw(st.integers(-6, 6))
        branches.append((a, -a * i + m * t))  # a * i + b = m * t = 0 (mod m)
    return AffineMap(m, tuple(branches))


def _gcd(a: int, b: int) -> int:
    while b:
        a, b = b, a % b
    return abs(a)


def _iterate(mapping: AffineMap, n: int, k: int) -> tuple[int, list[int]]:
    """Plain iteration, independent of builder.arith.dynamics.trace: (T^k(n), residues on the way)."""
    m = mapping.modulus
    residues = []
    for _ in range(k):
        r = n % m
        residues.append(r)
        a, b = mapping.branches[r]
        assert (a * n + b) % m == 0
        n = (a * n + b) // m
    return n, residues


@st.composite
def realizable(draw: st.DrawFn, mapping: AffineMap, max_len: int) -> tuple[tuple[int, ...], int]:
    """A random word and an integer n that follows it.

    Built letter by letter: if n follows w[:j], so does n + m^j s for every s, and
    T^j(n + m^j s) = T^j(n) + A_j s with A_j the product of the multipliers so far.  The
    next letter is drawn among the residues that some s reaches (all of them when the
    multipliers are prime to m).  The result is re-checked by plain iteration.
    """
    m = mapping.modulus
    k = draw(st.integers(0, max_len))
    n = draw(st.integers(0, m - 1)) if k else draw(st.integers(-1000, 1000))
    word: list[int] = []
    y, a_j = n, 1  # y = T^j(n), a_j = A_j
    for j in range(k):
        reachable = sorted({(y + a_j * s) % m for s in range(m)})
        letter = draw(st.sampled_from(reachable))
        s = next(s for s in range(m) if (y + a_j * s) % m == letter)
        n += m**j * s
        y += a_j * s
        word.append(letter)
        a, b = mapping.branches[letter]
        y, a_j = (a * y + b) // m, a_j * a
    if k:
        n += m**k * draw(st.integers(-(10**6), 10**6))  # any lift follows the word too
    _, residues = _iterate(mapping, n, k)
    assert residues == word
    return tuple(word), n


@SETTINGS
@given(st.data())
def test_cycle_equation_agrees_with_exact_iteration(data: st.DataObject) -> None:
    """Rule: if n follows the word i_1..i_k, then T^k(n) = (A n + B) / m^k (Lagarias 1990 Thm 2.1,
    generalised to affine branches), where (A, B, m^k) = cycle_equation(map, word)."""
    mapping = data.draw(maps())
    word, n = data.draw(realizable(mapping, 150))  # > 64 letters exercises the product tree
    value, _ = _iterate(mapping, n, len(word))
    equation = cycle_equation(mapping, word)
    assert equation.denominator == mapping.modulus ** len(word)
    product = 1
    for r in word:
        product *= mapping.branches[r][0]
    assert equation.multiplier == product
    assert equation.multiplier * n + equation.offset == value * equation.denominator


@SETTINGS
@given(st.data())
def test_cycle_equation_composes(data: st.DataObject) -> None:
    """Rule: composing (A1 n + B1)/M1 then (A2 n + B2)/M2 gives (A2 A1 n + A2 B1 + B2 M1)/(M1 M2),
    so the equation of u + v is that of v applied after u."""
    mapping = data.draw(maps())
    m = mapping.modulus
    u = data.draw(st.lists(st.integers(0, m - 1), max_size=90))
    v = data.draw(st.lists(st.integers(0, m - 1), max_size=90))
    e1, e2, e = cycle_equation(mapping, u), cycle_equation(mapping, v), cycle_equation(mapping, u + v)
    assert e.multiplier == e2.multiplier * e1.multiplier
    assert e.offset == e2.multiplier * e1.offset + e2.offset * e1.denominator
    assert e.denominator == e1.denominator * e2.denominator


def _primitive_root(word: tuple[int, ...]) -> tuple[int, ...]:
    """The shortest u with word = u^j, by brute force (definition)."""
    n = len(word)
    p = next(p for p in range(1, n + 1) if n % p == 0 and word == word[p:] + word[:p])
    return word[:p]


def _integer_cycle_for(mapping: AffineMap, word: tuple[int, ...]) -> tuple[AffineMap, int]:
    """Scale the increments so that the rational cycle point of ``word`` becomes an integer.

    With multipliers prime to m the point x0 = B / (m^k - A) follows the word m-adically
    (its denominator is prime to m).  For D = den * (den^-1 mod m) = 1 (mod m) the map with
    increments D b_i is still well defined and S(D x) = D T(x), so D x0 is an integer
    periodic point of S following the word.
    """
    m = mapping.modulus
    num, den = cycle_equation(mapping, word).start()
    assert _gcd(den, m) == 1
    inverse = pow(den, -1, m)
    scale = den * inverse
    assert scale % m == 1 % m
    scaled = AffineMap(m, tuple((a, scale * b) for a, b in mapping.branches))
    return scaled, num * inverse


@st.composite
def primitive_words(draw: st.DrawFn, m: int, max_len: int = 9) -> tuple[int, ...]:
    word = tuple(draw(st.lists(st.integers(0, m - 1), min_size=1, max_size=max_len)))
    return _primitive_root(word)


@SETTINGS
@given(st.data())
def test_rotating_the_word_rotates_the_cycle(data: st.DataObject) -> None:
    """Rule: rotating a word rotates the cycle: the cycle traced from its r-th member has the word
    rotated by r, and that member is B / (m^k - A) for the rotated word."""
    mapping = data.draw(maps(units_only=True, max_multiplier=12))
    word = data.draw(primitive_words(mapping.modulus))
    scaled, n0 = _integer_cycle_for(mapping, word)
    outcome = trace(scaled, n0, len(word))
    assert isinstance(outcome, CycleFound)
    assert outcome.word == word
    k = len(word)
    for r in range(k):
        again = trace(scaled, outcome.members[r], k)
        assert again == CycleFound(rotate(outcome.members, r), rotate(word, r))
        assert is_rotation(again.word, word)
        assert cycle_equation(scaled, rotate(word, r)).start() == (outcome.members[r], 1)


@SETTINGS
@given(st.data())
def test_periodic_word_is_not_a_primitive_cycle(data: st.DataObject) -> None:
    """Rule: a periodic word u^j (j >= 2) is never a primitive cycle's word: least_period(u^j) = |u|,
    and where the slope A_u / m^|u| is not 1 in absolute value the cycle traced from
    B / (m^k - A) of u^j is the cycle of u, of length |u|."""
    mapping = data.draw(maps(units_only=True, max_multiplier=12))
    u = data.draw(primitive_words(mapping.modulus, 6))
    j = data.draw(st.integers(2, 4))
    power = u * j
    assert least_period(power) == len(u)
    assert least_period(u) == len(u)
    assert cycle_equation(mapping, power).start() == cycle_equation(mapping, u).start()
    scaled, n0 = _integer_cycle_for(mapping, power)
    outcome = trace(scaled, n0, len(power))
    assert isinstance(outcome, CycleFound)
    assert len(outcome.members) == len(u)
    assert outcome.word == u


@SETTINGS
@given(st.data())
def test_periodic_word_has_the_same_fixed_point_for_any_multipliers(data: st.DataObject) -> None:
    """Rule: T^(|u| j) along u^j is F_u iterated j times, so when |A_u| != m^|u| (slope not +-1)
    the fixed point B / (m^k - A) of u^j is that of u."""
    mapping = data.draw(maps())
    m = mapping.modulus
    u = data.draw(st.lists(st.integers(0, m - 1), min_size=1, max_size=6).map(tuple))
    j = data.draw(st.integers(2, 4))
    e_u, e_power = cycle_equation(mapping, u), cycle_equation(mapping, u * j)
    assert e_power.multiplier == e_u.multiplier**j
    if abs(e_u.multiplier) != e_u.denominator:
        assert e_power.start() == e_u.start()
        num, den = e_u.start()
        assert Fraction(num, den) == Fraction(e_u.offset, e_u.target)


def test_slope_minus_one_is_the_exception() -> None:
    """Rule (the exception above): with slope -1 a periodic word can be a genuine cycle's word.
    T(n) = -n on even n (branch (-2, 0) mod 2) has the 2-cycle (2, -2) with word 00; the word 0
    has A = -2 = -m, and 00 has m^2 - A = 0, so the cycle equation fixes no start."""
    mapping = AffineMap(2, ((-2, 0), (3, 1)))
    assert trace(mapping, 2, 10) == CycleFound((2, -2), (0, 0))
    assert least_period((0, 0)) == 1
    assert cycle_equation(mapping, (0, 0)).target == 0


@SETTINGS
@given(st.data())
def test_mirror_conjugates(data: st.DataObject) -> None:
    """Rule: AffineMap.mirror is the conjugate n -> -T(-n); it is an involution, and it maps the
    cycle of n to the negated cycle of -n, with residues negated mod m."""
    mapping = data.draw(maps())
    mirror = mapping.mirror()
    m = mapping.modulus
    for n in data.draw(st.lists(st.integers(-(10**30), 10**30), min_size=1, max_size=20)):
        assert mirror(n) == -mapping(-n)
    assert mirror.mirror() == mapping
    start = data.draw(st.integers(-200, 200))
    outcome = trace(mapping, start, 200, 512)
    mirrored = trace(mirror, -start, 200, 512)

    def negated(cycle: CycleFound) -> CycleFound:
        return CycleFound(tuple(-v for v in cycle.members), tuple(-r % m for r in cycle.word))

    if isinstance(outcome, CycleFound):
        assert mirrored == negated(outcome)
    elif isinstance(outcome, EntersCycle):
        assert mirrored == EntersCycle(outcome.steps, negated(outcome.cycle))
    else:
        assert mirrored == outcome


def _brute_period(word: tuple[int, ...]) -> int:
    n = len(word)
    return next((p for p in range(1, n + 1) if n % p == 0 and word == word[p:] + word[:p]), 0)


def _brute_least_rotation(word: tuple[int, ...]) -> int:
    if not word:
        return 0
    rotations = [word[r:] + word[:r] for r in range(len(word))]
    return rotations.index(min(rotations))


@st.composite
def words(draw: st.DrawFn) -> tuple[int, ...]:
    """Random words, often periodic (u repeated), over a small, signed or wide alphabet."""
    alphabet = draw(st.sampled_from([st.integers(0, 1), st.integers(0, 2), st.integers(-3, 3), st.integers(0, 1000)]))
    u = tuple(draw(st.lists(alphabet, max_size=12)))
    return u * draw(st.integers(1, 4))


@settings(max_examples=300, deadline=None)
@given(words())
def test_least_period_matches_brute_force(word: tuple[int, ...]) -> None:
    """Rule: least_period(w) is the least p dividing |w| with w = u^(|w|/p), |u| = p (0 for the empty word)."""
    assert least_period(word) == _brute_period(word)


@settings(max_examples=300, deadline=None)
@given(words())
def test_least_rotation_index_matches_brute_force(word: tuple[int, ...]) -> None:
    """Rule: least_rotation_index(w) is the smallest r at which w[r:] + w[:r] is lexicographically least."""
    r = least_rotation_index(word)
    assert r == _brute_least_rotation(word)
    assert is_rotation(rotate(word, r), word)


@settings(max_examples=200, deadline=None)
@given(words(), st.integers(-50, 50), words())
def test_is_rotation_matches_brute_force(word: tuple[int, ...], r: int, other: tuple[int, ...]) -> None:
    """Rule: u is a rotation of v when u = v[r:] + v[:r] for some r."""
    assert is_rotation(rotate(word, r), word)
    expected = len(other) == len(word) and (not word or any(other == word[s:] + word[:s] for s in range(len(word))))
    assert is_rotation(other, word) == expected
