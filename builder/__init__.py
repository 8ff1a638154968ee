"""Periplus: verify a record of cycles of Collatz-type maps exactly, and publish it.

The stages are separate modules: ``load`` (YAML to positioned nodes),
``verify`` (fields, exact re-derivation, the model), with the number theory
in ``dynamics`` and ``words`` (which import neither YAML nor Jinja).
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
