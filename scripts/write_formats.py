"""Write the catalogue format's JSON Schemas and README field tables from the field table.

    python scripts/write_formats.py [CATALOGUE]

The fields of every kind of entry are declared once, in builder/catalogue/fields.py.  This
rewrites CATALOGUE/schema/<kind>.schema.json and the marked tables of CATALOGUE/README.md
(default: the shipped catalogue) from it; tests/catalogue/test_schema.py fails when they differ.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.catalogue.fields import DOCUMENTS, json_schema_text, with_tables  # noqa: E402


def main() -> None:
    catalogue = Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "catalogue"
    for document in DOCUMENTS:
        path = catalogue / "schema" / f"{document.kind}.schema.json"
        path.write_text(json_schema_text(document), encoding="utf-8")
        print(f"wrote {path}")
    readme = catalogue / "README.md"
    readme.write_text(with_tables(readme.read_text(encoding="utf-8")), encoding="utf-8")
    print(f"wrote the field tables of {readme}")


if __name__ == "__main__":
    main()
