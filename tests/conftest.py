"""Shared helpers: fixture catalogues on disk, copies of them, and running the command line.

Fixture layout (tests/fixtures):

- valid/                 a small catalogue of real cycles of 3x+1 and 3x-1 (sources in its YAML comments);
- broken/<case>/overlay/ files written over a copy of valid/ to make one kind of false claim or malformed input;
- broken/<case>/expected.txt  the exact output of ``periplus verify .`` run inside that copy; lines starting
  with "#" name the source of the fact that makes the claim false and are not part of the output.
"""

from __future__ import annotations

import os
import shutil
import sys
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path

import gmpy2
import pytest

from builder.commands import main

FIXTURES = Path(__file__).parent / "fixtures"
VALID = FIXTURES / "valid"
BROKEN = FIXTURES / "broken"
BROKEN_CASES = sorted(p.name for p in BROKEN.iterdir() if p.is_dir())
REPO = Path(__file__).resolve().parent.parent
SCHEMAS = REPO / "catalogue" / "schema"

# The valid fixture's own contents (counted from the files in tests/fixtures/valid).
VALID_SUMMARY = "verified 2 maps, 8 cycles and 2 references in 12 files: every claim holds"

# Common practice, no source: a provenance block for entries written by the tests themselves.
PROVENANCE = "provenance:\n  found_by: Periplus test suite\n  found_on: 2024-05-01\n  method: constructed in the test\n"


@dataclass(frozen=True)
class Run:
    code: int
    out: str
    err: str

    @property
    def lines(self) -> list[str]:
        return self.out.splitlines()


def write_files(root: Path, files: Mapping[str, str | bytes]) -> None:
    """Write {relative path: text or bytes} under root, making folders as needed."""
    for rel, content in files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")


def copy_valid(dest: Path) -> Path:
    shutil.copytree(VALID, dest)
    return dest


def broken_copy(case: str, dest: Path) -> Path:
    """A copy of the valid catalogue with the files of broken/<case>/overlay written over it."""
    copy_valid(dest)
    shutil.copytree(BROKEN / case / "overlay", dest, dirs_exist_ok=True)
    return dest


def overlay_files(case: str) -> list[str]:
    """Relative paths of the files a broken case writes."""
    overlay = BROKEN / case / "overlay"
    return sorted(str(p.relative_to(overlay)) for p in overlay.rglob("*") if p.is_file())


def expected_output(case: str) -> str:
    text = (BROKEN / case / "expected.txt").read_text(encoding="utf-8")
    return "".join(line for line in text.splitlines(keepends=True) if not line.startswith("#"))


NODE = shutil.which("node")  # runs the site's scripts (search.js, sort.js) in the tests that need it


@pytest.fixture
def needs_node() -> None:
    """The tests that run one of the site's scripts under node: a missing node fails them, so they never pass
    unrun (.ci/run installs Debian's nodejs)."""
    if NODE is None:
        pytest.fail("node is not installed: the site's scripts cannot be run (.ci/run installs nodejs)", pytrace=False)


@pytest.fixture(autouse=True, scope="session")
def _own_signing_key(tmp_path_factory: pytest.TempPathFactory) -> Iterator[None]:
    """The verification cache's signing key lives in a folder of the test run, not in the user's own."""
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("XDG_CACHE_HOME", str(tmp_path_factory.mktemp("user-cache")))
        yield


@pytest.fixture
def catalogue(tmp_path: Path) -> Callable[..., Path]:
    """Make a catalogue under tmp_path: a copy of the valid fixture (or of a broken case), plus extra files."""
    counter = iter(range(1000))

    def make(case: str | None = None, files: Mapping[str, str | bytes] | None = None, empty: bool = False) -> Path:
        dest = tmp_path / f"catalogue-{next(counter)}"
        if empty:  # no entries, but the record's description, which every catalogue needs
            (dest / "maps").mkdir(parents=True)
            shutil.copyfile(VALID / "record.yaml", dest / "record.yaml")
        elif case is None:
            copy_valid(dest)
        else:
            broken_copy(case, dest)
        if files:
            write_files(dest, files)
        return dest

    return make


@pytest.fixture
def cli(capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> Callable[..., Run]:
    """Run builder.commands.main in-process with captured output; argparse's SystemExit becomes the exit code."""

    def run(*argv: str, cwd: Path | None = None) -> Run:
        if cwd is not None:
            monkeypatch.chdir(cwd)
        capsys.readouterr()
        try:
            code = main(list(argv))
        except SystemExit as exc:  # argparse reports usage errors this way
            code = exc.code if isinstance(exc.code, int) else 2
        captured = capsys.readouterr()
        return Run(code, captured.out, captured.err)

    return run


# --- a cycle with a start of more than 20,000 digits ------------------------------


def decimal(n: int) -> str:
    """Decimal text of n of any size, by GMP (str(n) refuses more than 4,300 digits)."""
    return str(gmpy2.mpz(n))


def cycle_offset(word: str) -> int:
    """B_1(w) = sum_j v_j 3^(v_{j+1}+...+v_{k-1}) 2^j, the numerator of the 3x+1 cycle equation.

    J. C. Lagarias, Acta Arith. 56 (1990) 33-53, Thm 2.1 (via /work/shared/literature.md): a cycle of the
    shortcut 3x+1 map with parity vector v of length k and x odd steps starts at B_1 / (2^k - 3^x).
    """
    return sum(int(v) * 3 ** word[j + 1 :].count("1") * 2**j for j, v in enumerate(word))


@dataclass(frozen=True)
class BigCycle:
    word: str
    d: int  # the map is T(n) = n/2 (n even), (3n + d)/2 (n odd)
    start: int
    members: tuple[int, ...]


def big_cycle(digits: int = 20_000) -> BigCycle:
    """A real cycle of 3x+d whose start has more than ``digits`` digits.

    Along a word w of length k with x odd steps the shortcut 3x+d map sends n to (3^x n + d B_1(w)) / 2^k
    (the Lagarias 1990 composition above with the increment d in place of 1), so n = d B_1(w) / (2^k - 3^x)
    follows w and returns.  With d = c (2^k - 3^x) for an odd c this is n = c B_1(w): the cycle of
    3x+(2^k - 3^x) through B_1(w), scaled by c (T_{cd}(c n) = c T_d(n), and c odd keeps every parity).
    The brief's unscaled d = 2^k - 3^x would need k of about 42,000 to reach 20,000 digits, and the
    cycle's members would then take some 350 MB; scaling keeps the word short (k = 11).
    The word 11110111000 is that of the 3x+1 cycle through -17 (Lagarias 1985 via literature.md), aperiodic.
    """
    word = "11110111000"
    k, x = len(word), word.count("1")
    c = 3 ** (int(digits / 0.4771) + 50)  # odd, with more than ``digits`` digits (log10 3 = 0.4771...)
    d = c * (2**k - 3**x)
    start = c * cycle_offset(word)
    members = []
    n = start
    for _ in range(k):
        members.append(n)
        n = n // 2 if n % 2 == 0 else (3 * n + d) // 2
    assert n == start  # the construction above, checked by plain iteration
    return BigCycle(word, d, start, tuple(members))


def big_cycle_files(big: BigCycle, claims: str = "") -> dict[str, str]:
    """Map and cycle files for the cycle of big_cycle(), with extra claim lines for the cycle entry."""
    map_text = (
        "name: 3x+d with a large d\nmodulus: 2\nbranches:\n"
        "  - {residue: 0, multiplier: 1, increment: 0}\n"
        f"  - {{residue: 1, multiplier: 3, increment: {decimal(big.d)}}}\n"
        "summary: A map built by the test suite around one huge cycle.\n"
    )
    cycle_text = f"map: 3x-plus-big\nstart: {decimal(big.start)}\n" + claims + PROVENANCE
    return {"maps/3x-plus-big.yaml": map_text, "cycles/3x-plus-big/huge.yaml": cycle_text}


@pytest.fixture(scope="session")
def big() -> BigCycle:
    return big_cycle()


def int_limit() -> int:
    return sys.get_int_max_str_digits()


@dataclass(frozen=True)
class BigSite:
    """The big demo catalogue (bench/big_catalogue.py) and its site, built once per session."""

    catalogue: Path
    site: Path
    scale: float
    biggest_map: str
    cycles: int
    maps: int


@pytest.fixture(scope="session")
def big_site(tmp_path_factory: pytest.TempPathFactory) -> BigSite:
    """The site of the big demo catalogue at scale PERIPLUS_SCALE (default 1.0: over 50,000 cycles in
    over 3,000 maps, the size issue 13 asks pages, search and sitemaps to handle), built once."""
    if str(REPO / "bench") not in sys.path:
        sys.path.insert(0, str(REPO / "bench"))
    from big_catalogue import cached_catalogue

    from builder.site.build import build_site

    scale = float(os.environ.get("PERIPLUS_SCALE", "1.0"))
    catalogue = cached_catalogue(scale)
    counts = {folder.name: len(list(folder.glob("*.yaml"))) for folder in (catalogue / "cycles").iterdir()}
    biggest = max(counts, key=lambda map_id: (counts[map_id], map_id))
    maps = len(list((catalogue / "maps").glob("*.yaml")))
    site = tmp_path_factory.mktemp("big") / "site"
    # The demo record has no published address (its base_url is a reserved example name, RFC 2606): the
    # build is given one, as a maintainer would, so that the sitemap and the absolute links are made.
    result = build_site(catalogue, site, base_url="https://demo.example.org/generated/")
    assert result.report.ok and result.pages > 0, [str(p) for p in result.report.errors][:5]
    return BigSite(catalogue, site, scale, biggest, sum(counts.values()), maps)
