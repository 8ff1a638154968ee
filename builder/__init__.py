"""Periplus: verify a record of cycles of Collatz-type maps exactly, and publish it.

One subpackage per stage, lowest first: ``arith`` (exact integers, words, maps and the cycle
equation), ``search`` (exhaustive hunts), ``catalogue`` (YAML files to the verified record),
``diff`` (comparing two verified catalogues), ``history`` (git: releases, entry history, the
changelog), ``site`` (pages and exports) and ``commands`` (the ``periplus`` command line).
This module re-exports the names most scripts need.
"""

__version__ = "0.1.0"

from builder.arith.dynamics import AffineMap, CycleFound, EntersCycle, Equation, Unresolved, cycle_equation, trace
from builder.arith.words import aperiodic_necklace_count, least_period
from builder.catalogue.model import Catalogue, Cycle, MapEntry, Provenance, Reference, Report
from builder.catalogue.verify import Limits, verify_catalogue
from builder.errors import CatalogueUnreadable, PeriplusError, Position, Problem, UsageError

__all__ = [
    "AffineMap",
    "Catalogue",
    "CatalogueUnreadable",
    "Cycle",
    "CycleFound",
    "EntersCycle",
    "Equation",
    "Limits",
    "MapEntry",
    "PeriplusError",
    "Position",
    "Problem",
    "Provenance",
    "Reference",
    "Report",
    "Unresolved",
    "UsageError",
    "__version__",
    "aperiodic_necklace_count",
    "cycle_equation",
    "least_period",
    "trace",
    "verify_catalogue",
]
