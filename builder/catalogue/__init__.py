"""The catalogue stage: YAML files to a verified record, with every problem positioned.

Files are read from a source (:mod:`files`) into positioned nodes (:mod:`nodes`); each kind of entry
is checked against the field table (:mod:`fields`, :mod:`reader`, :mod:`record`, :mod:`references`,
:mod:`maps`, :mod:`cycles`); cycles are derived exactly (:mod:`derive`) and coverage claims re-run
(:mod:`coverage`); :mod:`verify` assembles the verified model (:mod:`model`), which keeps every entry
as written (:mod:`written`).  Relations between cycles, drafting entries and writing them are here too.
"""

from builder.catalogue.files import FolderSource, TreeSource, scan_catalogue
from builder.catalogue.limits import DEFAULT_MAX_STEPS, DEFAULT_RECHECK_UP_TO, Limits
from builder.catalogue.model import Catalogue, Coverage, Cycle, MapEntry, Provenance, Record, Reference, Report
from builder.catalogue.verify import verify_catalogue, verify_raw, verify_source

__all__ = [
    "DEFAULT_MAX_STEPS",
    "DEFAULT_RECHECK_UP_TO",
    "Catalogue",
    "Coverage",
    "Cycle",
    "FolderSource",
    "Limits",
    "MapEntry",
    "Provenance",
    "Record",
    "Reference",
    "Report",
    "TreeSource",
    "scan_catalogue",
    "verify_catalogue",
    "verify_raw",
    "verify_source",
]
