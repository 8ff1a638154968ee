"""The compiled kernel, its sieve and the multi-word follower, each against the exact definition.

The reference is builder.search.definition (settle, hunt): the definition applied literally with
Python integers.  The sieve's claim is the one proved in builder.search.kernel's docstring; the
parity-vector fact it rests on (the first j parities of s depend only on s mod 2^j) is R. Terras,
Acta Arith. 30 (1976) 241-252, for 3x+1, and common practice for (qn+d)/2.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from builder.arith.dynamics import DEFAULT_MAX_WORK, AffineMap
from builder.search.definition import hunt, settle_counted
from builder.search.engine import hunt_range, int64_bound
from builder.search.kernel import decide, sieve_applies, sieve_of
from builder.search.wide import follow, follows


def shortcut(q: int, d: int) -> AffineMap:
    return AffineMap(2, ((1, 0), (q, d)))


@pytest.mark.parametrize("q, d", [(3, 1), (3, -1), (3, 5), (3, 97), (5, 1), (7, -3), (181, 1)])
def test_every_sieved_class_falls_below_itself_at_its_step_and_no_earlier(q: int, d: int) -> None:
    # The sieve's claim (builder.search.kernel), checked start by start against the definition: for
    # every class r mod 2^depth it marks, the two starts of least magnitude at or above its threshold,
    # of each sign, are resolved by event (b) exactly at the marked step.
    mapping = shortcut(q, d)
    sieve = sieve_of(mapping)
    assert sieve is not None
    size = 1 << sieve.depth
    marked = 0
    for r in range(size):
        step = int(sieve.step[r])
        if not step:
            continue
        marked += 1
        least = int(sieve.threshold[r])
        positive = least + (r - least) % size  # the least s >= threshold with s = r
        negative = least + (-r - least) % size  # the least m >= threshold with -m = r
        for start in (positive, positive + size, -negative, -negative - size):
            assert start % size == r and abs(start) >= least
            fate, _, at = settle_counted(mapping, start, 10**5, 4096, DEFAULT_MAX_WORK)
            assert fate is None and at == step, (q, d, r, start)
    assert marked > 0


def test_the_sieve_marks_most_classes_of_3x_plus_1() -> None:
    # Common practice, no source: at depth 16 most residue classes of 3x+1 fall below themselves;
    # the only classes that never do within j steps are those whose x_i stays >= i log_3 2.
    sieve = sieve_of(shortcut(3, 1))
    assert sieve is not None and sieve.depth == 16
    assert (sieve.step > 0).mean() > 0.9
    # s even falls to s/2 at step 1; s = 1 mod 4 to (3s + 1)/4 at step 2 (common practice, no source)
    assert sieve.step[0] == 1 and sieve.step[1] == 2


def test_maps_without_a_sieve() -> None:
    assert sieve_of(AffineMap(3, ((2, 0), (4, -1), (4, 1)))) is None  # not of the form n/2, (qn+d)/2
    assert sieve_of(AffineMap(2, ((1, 0), (1, 1)))) is None  # q = 1: no class falls by a factor


def test_the_sieve_is_refused_where_values_could_leave_int64() -> None:
    mapping = shortcut(3, 1)
    sieve = sieve_of(mapping)
    assert sieve is not None
    bound = int64_bound(mapping)
    assert sieve_applies(sieve, 10**12, 4096, bound)
    assert not sieve_applies(sieve, bound, 4096, bound)
    assert not sieve_applies(sieve, 10**6, sieve.depth - 1, bound)  # fewer steps than the sieve's depth


@settings(max_examples=60, deadline=None)
@given(
    q=st.sampled_from([3, 5, 7, 9, 11]),
    d=st.integers(-301, 301).filter(lambda v: v % 2),
    low=st.integers(0, 3000),
    span=st.integers(0, 600),
    max_steps=st.sampled_from([3, 40, 500, 5000]),
    max_bits=st.sampled_from([20, 63, 100, 400]),
)
def test_sieved_and_unsieved_hunts_equal_the_definition(
    q: int, d: int, low: int, span: int, max_steps: int, max_bits: int
) -> None:
    # The rule checked: hunt_range decides every start as builder.search.definition does, in the
    # compiled kernel with its sieve or without it, or with numpy, and its total stopping time (HuntResult.steps) is the definition's.
    mapping = shortcut(q, d)
    high = low + span
    reference = hunt(mapping, high, max_steps, max_bits, low=low)
    for sieve, compiled in ((True, True), (False, True), (True, False)):
        got = hunt_range(mapping, low, high, max_steps, max_bits, sieve=sieve, batch=257, compiled=compiled)
        assert got == reference
        assert got.steps == reference.steps


@settings(max_examples=40, deadline=None)
@given(
    modulus=st.sampled_from([2, 3, 4, 5]),
    seed=st.integers(0, 10**6),
    max_bits=st.sampled_from([62, 64, 90, 300]),
    max_steps=st.sampled_from([50, 700, 3000]),
)
def test_orbits_past_64_bits_are_decided_as_the_definition_decides_them(
    modulus: int, seed: int, max_bits: int, max_steps: int
) -> None:
    # The rule checked (builder.search.wide): a start the follower marks is left unresolved by the
    # definition for "magnitude"; the others it leaves to the exact path, whatever their fate.
    import random

    rng = random.Random(seed)
    branches = []
    for i in range(modulus):
        a = rng.choice([1, 2, 3, 4, 5, 7, -3, 9, 13]) * rng.choice([1, modulus])
        b = (-a * i) % modulus + modulus * rng.randint(-3, 3)
        branches.append((a, b))
    mapping = AffineMap(modulus, tuple(branches))
    limit = int64_bound(mapping)
    if not follows(mapping, max_bits) or limit < 300:
        return
    decided = decide(mapping, 0, 300, min(max_steps, 4096), limit, 0, True)
    marked = follow(mapping, decided.escaped, max_steps, DEFAULT_MAX_WORK, max_bits)
    for (start, _, _), magnitude in zip(decided.escaped.tolist(), marked.tolist(), strict=True):
        fate, _, _ = settle_counted(mapping, start, max_steps, max_bits, DEFAULT_MAX_WORK)
        if magnitude:
            assert fate is not None and getattr(fate, "reason", None) == "magnitude", (mapping, start)


def test_the_follower_decides_the_divergent_orbits_of_5x_plus_1() -> None:
    # 5x+1: most orbits grow without bound (heuristic of the trade: the mean growth per step is
    # (log 5/2 + log 1/2) / 2 > 0; common practice, no source); its starts 7 and 9 are among them
    # at 512 bits (the shipped catalogue's claim for 5x+1 lists them unresolved).
    mapping = shortcut(5, 1)
    decided = decide(mapping, 0, 50, 4096, int64_bound(mapping), 0, True)
    marked = follow(mapping, decided.escaped, 10_000, DEFAULT_MAX_WORK, 512)
    starts = {int(s) for s, m in zip(decided.escaped[:, 0].tolist(), marked.tolist(), strict=True) if m}
    assert {7, 9, -9} <= starts
    assert hunt_range(mapping, 0, 50, 10_000, 512) == hunt(mapping, 50, 10_000, 512)


def test_a_small_hunt_does_without_numba() -> None:
    # numba's compiler costs every process that loads it about 100 MB and 0.6 s of CPU (measured with
    # bench/hunt_speed.py); a build's coverage rechecks of small bounds must not pay it (common practice,
    # no source: load a heavy dependency only where it pays).
    import subprocess
    import sys

    probe = (
        "import sys\n"
        "from builder.arith.dynamics import AffineMap\n"
        "from builder.search.engine import hunt_range\n"
        "hunt_range(AffineMap(2, ((1, 0), (3, 5))), 0, 1000, 10_000, 512)\n"
        "assert 'numba' not in sys.modules\n"
        "hunt_range(AffineMap(2, ((1, 0), (3, 5))), 0, 70_000, 10_000, 512)\n"
        "assert 'numba' in sys.modules\n"
    )
    subprocess.run([sys.executable, "-c", probe], check=True)


def test_a_kernel_loads_numba_without_its_linear_algebra_probe() -> None:
    # numba.np.arraymath imports scipy.linalg.cython_blas at import to learn whether np.dot compiles
    # (numba/np/linalg.py, ensure_blas; read in the installed numba 0.6x); builder.search.jit loads it with
    # that module marked missing, so a kernel does not pay for SciPy's linear algebra, and a process that
    # imported SciPy's linear algebra first keeps numba's own answer.
    import subprocess
    import sys

    probe = (
        "import sys\n"
        "from builder.arith.dynamics import AffineMap\n"
        "from builder.search.engine import hunt_range\n"
        "result = hunt_range(AffineMap(2, ((1, 0), (3, 1))), 0, 100, 10_000, 512, compiled=True)\n"
        "assert sorted(result.cycles) == [-17, -5, -1, 0, 1], sorted(result.cycles)\n"  # the integer cycles of 3x+1
        # through 0, 1, -1, -5 and -17 (common practice, no source)
        "assert 'numba' in sys.modules and 'scipy.linalg' not in sys.modules\n"
        "assert sys.modules.get('scipy.linalg.cython_blas', 'absent') == 'absent'\n"
        "import scipy.linalg.cython_blas\n"  # SciPy still imports afterwards
    )
    subprocess.run([sys.executable, "-c", probe], check=True)
    first = (
        "import scipy.linalg.cython_blas, numba.np.arraymath as a\n"
        "from builder.search import jit\n"
        "assert a._HAVE_BLAS\n"
    )
    subprocess.run([sys.executable, "-c", first], check=True)
