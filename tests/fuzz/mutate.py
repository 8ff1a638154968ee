"""Seeded mutants of the valid fixture catalogue (tests/fixtures/valid) for the fuzz campaign of issue 12.

Each seed picks one kind of mutation (``KINDS[seed % len(KINDS)]``) and ``random.Random(seed)`` picks
the rest, so a seed always makes the same catalogue.  A kind either breaks a rule of the catalogue format
with every mutant it makes, or is marked ``may_stay_valid``.

Reproduce a mutant with one command, from the repository's top folder::

    python -m tests.fuzz.mutate SEED OUT_DIR

which writes the mutant catalogue into OUT_DIR (a new folder), prints what was changed and the commands
the campaign runs on it (test_campaign.py's ``LIMIT_ARGS``); or rerun its test::

    python -m pytest "tests/fuzz/test_campaign.py::test_mutant[SEED]"
"""

from __future__ import annotations

import random
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path

if __package__:  # run as ``python -m tests.fuzz.mutate``: the sibling modules are imported by their plain names
    sys.path.insert(0, str(Path(__file__).resolve().parent))

from catalogue_files import Catalogue
from mutations import KINDS_BY_NAME, Kind

__all__ = ["KINDS", "VALID", "Kind", "Mutant", "make_mutant", "main"]

VALID = Path(__file__).resolve().parent.parent / "fixtures" / "valid"
KINDS: tuple[Kind, ...] = tuple(KINDS_BY_NAME.values())


@dataclass(frozen=True)
class Mutant:
    seed: int
    kind: Kind
    root: Path
    changes: tuple[str, ...]

    def describe(self) -> str:
        valid = "may stay valid" if self.kind.may_stay_valid else "breaks a rule"
        lines = [f"seed {self.seed}, kind {self.kind.name} ({valid}): {self.kind.what}"]
        lines += [f"  - {change}" for change in self.changes]
        return "\n".join(lines)


def make_mutant(seed: int, root: Path) -> Mutant:
    """Copy the valid fixture to ``root`` (which must not exist) and apply the mutation of ``seed``."""
    shutil.copytree(VALID, root)
    kind = KINDS[seed % len(KINDS)]
    rng = random.Random(seed)
    changes = kind.apply(Catalogue(root), rng)
    return Mutant(seed, kind, root, tuple(changes))


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    if len(args) != 2 or not args[0].isdigit():
        print("usage: python -m tests.fuzz.mutate SEED OUT_DIR", file=sys.stderr)
        return 2
    seed, out = int(args[0]), Path(args[1])
    if out.exists():
        print(f"{out} exists; give a new folder", file=sys.stderr)
        return 2
    mutant = make_mutant(seed, out)
    print(mutant.describe())
    from test_campaign import LIMIT_ARGS  # the limits the campaign passes (imported late: it imports pytest)

    limits = " ".join(LIMIT_ARGS)
    print(f"verify: python -m builder verify {out} {limits}")
    print(f"build:  python -m builder build {out} --out {out}-site {limits}")
    print(f"test:   python -m pytest 'tests/fuzz/test_campaign.py::test_mutant[{seed}]'")
    return 0


if __name__ == "__main__":
    sys.exit(main())
