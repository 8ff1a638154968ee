"""The field table: every field of every kind of entry, declared once.

Each kind of mapping a catalogue file holds (the record, a map, a branch, a coverage claim, a cycle,
its provenance, a reference) is a :class:`Shape`: its fields in the order the format lists them, each
with whether it is required, its JSON Schema and a one-line meaning.  Everything else follows from
this table: the entry reader's allowed and required keys (:mod:`builder.catalogue.reader`), the order
in which a review lists changed fields (:func:`field_order`), the JSON Schemas shipped in
``catalogue/schema/`` (:func:`json_schema`) and the field tables of ``catalogue/README.md``
(:func:`markdown_table`).  ``scripts/write_formats.py`` rewrites those two files; a test checks
that the shipped copies equal what the table gives.
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from enum import StrEnum, auto
from typing import Any

__all__ = [
    "BASIN",
    "BASIN_LIMIT",
    "BRANCH",
    "CENSUS",
    "CENSUS_MAX_LENGTH",
    "COVERAGE",
    "COVERAGE_KINDS",
    "LINE_MAX_CHARACTERS",
    "MAX_LIMIT",
    "MAX_MODULUS",
    "NOTES_MAX_CHARACTERS",
    "NOTES_MAX_OPEN_BRACKETS",
    "CYCLE",
    "DOCUMENTS",
    "MAP",
    "PROVENANCE",
    "RECORD",
    "REFERENCE",
    "REFERENCE_STATUSES",
    "Reads",
    "SHAPES",
    "Document",
    "Field",
    "Shape",
    "field_order",
    "json_schema",
    "json_schema_text",
    "markdown_table",
    "with_tables",
]

COVERAGE_KINDS = ("all-starts",)
#: The longest census claim: every build decides each length's classes again (builder.search.census_map).
CENSUS_MAX_LENGTH = 10_000
#: The largest bound a claim may give basins for: builder.search.basins.BASIN_LIMIT (2^22), which counts them in
#: memory, written here too so that reading a map file needs no numerical library (tests/catalogue check both agree).
BASIN_LIMIT = 1 << 22
#: One-line text (names, summaries, titles...) is shown on many pages; a real record stays far below this.
LINE_MAX_CHARACTERS = 1_000
#: Every branch is shown on the map's page; a real record stays far below this.
MAX_MODULUS = 10_000
#: A claim's step and bit limits are written into the JSON exports as numbers: at most 2^53 - 1, the
#: largest integer every JSON reader keeps exactly (RFC 8259, section 6).
MAX_LIMIT = 2**53 - 1
#: Notes are rendered as Markdown on every build; these bounds keep that fast whatever a note holds.
NOTES_MAX_CHARACTERS = 50_000
#: Each "[", "(" or tag-like "<" that nothing closes makes the Markdown renderer scan the rest of the note again.
NOTES_MAX_OPEN_BRACKETS = 20
NOTES_LIMITS = (
    f"at most {NOTES_MAX_CHARACTERS:,} characters, and at most {NOTES_MAX_OPEN_BRACKETS} `[`, `(` or `<` (before "
    "a non-space character) that nothing closes; write `\\[`, `\\(` or `\\<` for a bracket meant as text"
)
REFERENCE_STATUSES = ("read", "secondary", "memory")

# Value types shared by several fields (JSON Schema $defs).
DEFS: Mapping[str, Mapping[str, Any]] = {
    "id": {"type": "string", "pattern": "^[a-z0-9][a-z0-9-]*$"},
    "text": {"type": "string", "pattern": "\\S"},
    "line": {"type": "string", "pattern": "^\\s*\\S([^\\n]*\\S)?\\s*$", "maxLength": LINE_MAX_CHARACTERS},
    "date": {
        "$comment": "An unquoted YYYY-MM-DD is a YAML timestamp, which yaml.safe_load turns into a datetime.date: "
        "a value of no JSON type, admitted by the second branch. A quoted date is a string.",
        "anyOf": [
            {"type": "string", "pattern": "^[0-9]{4}-[0-9]{2}-[0-9]{2}$"},
            {"not": {"type": ["null", "boolean", "object", "array", "number", "string"]}},
        ],
    },
}
LINE, TEXT, ID, DATE = ({"$ref": f"#/$defs/{name}"} for name in ("line", "text", "id", "date"))
IDS = {"type": "array", "items": ID}


class Reads(StrEnum):
    """How the entry reader reads a field's value; OWN for fields whose kind's check reads them itself."""

    LINE = auto()
    TEXT = auto()
    NOTES = auto()
    DATE = auto()
    INTEGER = auto()
    INTEGERS = auto()
    ID = auto()
    KEYS = auto()
    LINES = auto()
    OWN = auto()


@dataclass(frozen=True, slots=True)
class Field:
    name: str
    schema: Mapping[str, Any]
    meaning: str
    required: bool = False
    required_note: str | None = None  # the README's "required" cell when it is more than yes or no
    reads: Reads = Reads.OWN


@dataclass(frozen=True, slots=True)
class Shape:
    """A mapping of fields, as one kind of entry (or a part of one) is written."""

    what: str  # how messages name it: "a map entry"
    fields: tuple[Field, ...]
    rules: Mapping[str, Any] = field(default_factory=dict)  # JSON Schema keywords beyond the fields
    # Derived once from ``fields`` (the reader consults them for every mapping of every file).
    names: tuple[str, ...] = field(init=False)
    required: tuple[str, ...] = field(init=False)
    optional: tuple[str, ...] = field(init=False)
    typed: tuple[Field, ...] = field(init=False)  # the fields the reader reads by their ``reads``

    def __post_init__(self) -> None:
        derived = {
            "names": tuple(f.name for f in self.fields),
            "required": tuple(f.name for f in self.fields if f.required),
            "optional": tuple(f.name for f in self.fields if not f.required),
            "typed": tuple(f for f in self.fields if f.reads is not Reads.OWN),
        }
        for name, value in derived.items():
            object.__setattr__(self, name, value)

    def schema(self) -> dict[str, Any]:
        return {
            "type": "object",
            "additionalProperties": False,
            "required": list(self.required),
            **self.rules,
            "properties": {f.name: dict(f.schema) for f in self.fields},
        }


RECORD = Shape("the record's description", (
    Field("title", LINE, "one line, the record's name in citations", True, reads=Reads.LINE),
    Field("description", TEXT, "one paragraph (folded to one line)", True, reads=Reads.TEXT),
    Field("maintainers", LINE, "one line: the group that keeps the record, named as the author in citations", True, reads=Reads.LINE),
    Field(
        "licence", {"type": "string", "pattern": "^[A-Za-z0-9][A-Za-z0-9.+-]*$"},
        "the data licence as an identifier of the SPDX License List (https://spdx.org/licenses/), written as the "
        "list writes it: `CC-BY-4.0`, `CC0-1.0`, `ODbL-1.0`. Unknown, deprecated or differently cased identifiers "
        "are errors. An identifier newer than Citation File Format 1.2.0's licence list is written into "
        "`CITATION.cff` as `license-url` (its SPDX page)",
        True,
    ),
    Field(
        "base_url",
        {"type": "string", "pattern": "^https?://[A-Za-z0-9.-]+(:[0-9]{1,5})?(/[A-Za-z0-9._~%!$&'()*+,;=:@/-]*)?$"},
        "the `http` or `https` address the site is published at, without query or fragment; a final `/` is added. "
        "Links in the feed, the sitemap, `robots.txt`, the dataset description and the citations are absolute "
        "from here. Missing, or still an address under a name reserved for examples (RFC 2606, such as "
        "`example.org`), it is a warning: the site then gives relative permalinks, says the record has no "
        "published address yet, and has no `sitemap.xml`",
    ),
    Field(
        "version",
        {"type": "string", "pattern": "^[0-9A-Za-z]([0-9A-Za-z._-]*[0-9A-Za-z])?$", "not": {"pattern": "\\.\\."}},
        "the release the catalogue is at or heading for, quoted (`\"1.10\"`, not `1.10`, which YAML reads as the "
        "number 1.1): letters, digits, `.`, `-` and `_`, starting and ending with a letter or digit",
        True,
    ),
    Field(
        "credit_committers", {"type": "boolean"},
        "`true` to name the committer beside each date in entry histories; by default only dates and commits "
        "are shown",
    ),
))  # fmt: skip

BRANCH = Shape("a branch", (
    Field("residue", {"type": "integer", "minimum": 0}, "i, the residue class 0..m-1 the branch applies to", True, reads=Reads.INTEGER),
    Field("multiplier", {"type": "integer", "not": {"const": 0}}, "a_i, a nonzero integer", True, reads=Reads.INTEGER),
    Field("increment", {"type": "integer"}, "b_i, with a_i i + b_i divisible by m", True, reads=Reads.INTEGER),
))  # fmt: skip


def _claim_limit(name: str, what: str) -> Field:
    """A claim's step or bit limit: a positive integer a JSON reader keeps exactly."""
    schema = {"type": "integer", "minimum": 1, "maximum": MAX_LIMIT}
    return Field(name, schema, f"{what} (at most 2^53 - 1)", True, reads=Reads.INTEGER)


BASIN = Shape("a basin", (
    Field("cycle", {"type": "integer"}, "the cycle's least \\|member\\| (the positive one on a tie)", True, reads=Reads.INTEGER),
    Field("starts", {"type": "integer", "minimum": 1}, "how many starts with \\|n\\| <= bound end in the cycle", True, reads=Reads.INTEGER),
    Field("first", {"type": "integer"}, "the first of them in the order 0, 1, -1, 2, -2, ...", True, reads=Reads.INTEGER),
))  # fmt: skip

COVERAGE = Shape("a coverage record", (
    Field("kind", {"enum": list(COVERAGE_KINDS)}, "`all-starts`: every start n with \\|n\\| <= bound was followed", True, reads=Reads.TEXT),
    Field("bound", {"type": "integer", "minimum": 0}, "the largest \\|start\\| covered", True, reads=Reads.INTEGER),
    Field("found_on", DATE, "when the search was run", True, reads=Reads.DATE),
    Field("method", TEXT, "how it was run (program, command, machine)", True, reads=Reads.TEXT),
    _claim_limit("max_steps", "the step limit per start"),
    _claim_limit("max_bits", "the size limit per member, in bits"),
    Field(
        "unresolved", {"type": "array", "items": {"type": "integer"}},
        "every start whose orbit was not resolved within the limits (none when left out)", reads=Reads.INTEGERS,
    ),
    Field(
        "basins", {"type": "array", "items": BASIN.schema()},
        f"for a bound up to 2^22 ({BASIN_LIMIT:,}): for each cycle the starts end in, `{{cycle, starts, first}}` "
        "(fields below); each cycle with least \\|member\\| up to the bound must be listed in the catalogue",
    ),
    Field(
        "unknown", {"type": "integer", "minimum": 0},
        "with `basins`: how many starts end in no known cycle (the unresolved ones and those whose orbits reach one; "
        "0 when left out). The basins' `starts` and `unknown` add up to 2 bound + 1",
        reads=Reads.INTEGER,
    ),
))  # fmt: skip

CENSUS = Shape("a census record", (
    Field(
        "up_to", {"type": "integer", "minimum": 1, "maximum": CENSUS_MAX_LENGTH},
        f"every cycle of at most this many steps is listed (1 to {CENSUS_MAX_LENGTH:,})", True, reads=Reads.INTEGER,
    ),
    Field("found_on", DATE, "when the census was taken", True, reads=Reads.DATE),
    Field("method", TEXT, "how it was taken (program, command, machine)", True, reads=Reads.TEXT),
))  # fmt: skip

MAP = Shape("a map entry", (
    Field("name", LINE, "display name, one line", True, reads=Reads.LINE),
    Field(
        "modulus", {"type": "integer", "minimum": 2, "maximum": MAX_MODULUS},
        f"m, an integer from 2 to {MAX_MODULUS:,} (the map's page shows every branch)", True, reads=Reads.INTEGER,
    ),
    Field(
        "branches", {"type": "array", "minItems": 2, "items": BRANCH.schema()},
        "one item per residue 0..m-1: `{residue, multiplier, increment}`", True,
    ),
    Field("summary", LINE, "one line saying what the map is", True, reads=Reads.LINE),
    Field("notes", TEXT, f"Markdown: what is known, how the cycles were searched ({NOTES_LIMITS})", reads=Reads.NOTES),
    Field("references", IDS, "list of keys of `references.yaml`", reads=Reads.KEYS),
    Field(
        "coverage",
        {
            "description": "Completeness claims: every start n with |n| <= bound was followed under the stated "
            "limits; every cycle whose least |member| is at most bound is listed, and unresolved lists exactly the "
            "starts whose orbits were not resolved within the limits.",
            "type": "array",
            "items": COVERAGE.schema(),
        },
        "list of completeness claims (fields below), rechecked by every build up to `--recheck-up-to`",
    ),
    Field(
        "census",
        {
            "description": "Completeness claims by length, for maps n/2, (qn+d)/2 with q and d odd: every cycle of "
            "at most up_to steps is listed. Each build proves it again from the necklaces of each length and the "
            "rechecked coverage bound, within its census budget.",
            "type": "array",
            "items": CENSUS.schema(),
        },
        "list of census claims (fields below), for maps n/2, (qn+d)/2 with q, d odd; rechecked by every build "
        "within `--census-words`",
    ),
))  # fmt: skip

PROVENANCE = Shape("the provenance", (
    Field("found_by", LINE, "one line: a person, group or program", True, reads=Reads.LINE),
    Field("found_on", DATE, "a date", True, reads=Reads.DATE),
    Field("method", TEXT, "how it was found", True, reads=Reads.TEXT),
    Field("references", IDS, "keys of `references.yaml`", reads=Reads.KEYS),
    Field("notes", TEXT, f"Markdown ({NOTES_LIMITS})", reads=Reads.NOTES),
))  # fmt: skip

CYCLE = Shape(
    "a cycle entry",
    (
        Field("map", ID, "the map's id; must be the folder the file is in", True, reads=Reads.ID),
        Field("start", {"type": "integer"}, "any member of the cycle", required_note="one of `start`, `word`", reads=Reads.INTEGER),
        Field(
            "word",
            {
                "anyOf": [
                    {"type": "string", "pattern": "^[0-9]+$"},
                    {"type": "array", "minItems": 1, "items": {"type": "integer", "minimum": 0}},
                ]
            },
            "the residues of the members, in order from `start`",
            required_note="one of `start`, `word`",
        ),
        Field("length", {"type": "integer", "minimum": 1}, "the number of steps of the cycle", reads=Reads.INTEGER),
        Field(
            "members", {"type": "array", "minItems": 1, "items": {"type": "integer"}},
            "the members, in order from `start`", reads=Reads.INTEGERS,
        ),
        Field("provenance", PROVENANCE.schema(), "see below", True),
    ),
    {"anyOf": [{"required": ["start"]}, {"required": ["word"]}]},
)  # fmt: skip

REFERENCE = Shape("a reference", (
    Field("authors", {"type": "array", "minItems": 1, "items": LINE}, "list of names", True, reads=Reads.LINES),
    Field("title", LINE, "one line", True, reads=Reads.LINE),
    Field("venue", LINE, "journal, volume and pages, publisher or archive", True, reads=Reads.LINE),
    Field("year", {"type": "integer", "minimum": 1000, "maximum": 9999}, "four-digit integer", True, reads=Reads.INTEGER),
    Field("doi", {"type": "string", "pattern": "^10\\.[0-9]{4,9}/\\S+$"}, "a DOI such as `10.2307/2322189`", reads=Reads.LINE),
    Field("url", {"type": "string", "pattern": "^[Hh][Tt][Tt][Pp][Ss]?://[^\\s/$.?#]\\S*$"}, "an `http` or `https` address", reads=Reads.LINE),
    Field(
        "status", {"enum": list(REFERENCE_STATUSES)},
        "how sure the record is of what it cites: `read`, `secondary` or `memory`", reads=Reads.TEXT,
    ),
    Field("note", TEXT, "one remark", reads=Reads.TEXT),
))  # fmt: skip

SHAPES: Mapping[str, Shape] = {
    "record": RECORD,
    "map": MAP,
    "branch": BRANCH,
    "coverage": COVERAGE,
    "census": CENSUS,
    "basin": BASIN,
    "cycle": CYCLE,
    "provenance": PROVENANCE,
    "reference": REFERENCE,
}


@dataclass(frozen=True, slots=True)
class Document:
    """One kind of file and its JSON Schema's title and description."""

    kind: str  # "record", "map", "cycle" or "references"
    title: str
    description: str


DOCUMENTS = (
    Document(
        "record",
        "Periplus record description",
        "catalogue/record.yaml as yaml.safe_load reads it: the record's title, description, maintainers, data "
        "licence, published address and release version. The licence must also be an identifier of the SPDX "
        "License List (https://spdx.org/licenses/), which periplus verify checks and a pattern cannot.",
    ),
    Document(
        "map",
        "Periplus map entry",
        "catalogue/maps/<map-id>.yaml as yaml.safe_load reads it. T(n) = (multiplier * n + increment) / modulus "
        "for n = residue (mod modulus). periplus verify also checks what a schema cannot: one branch per residue "
        "0..modulus-1, multiplier * residue + increment divisible by modulus, reference keys present in "
        "references.yaml, integers written plainly in decimal.",
    ),
    Document(
        "cycle",
        "Periplus cycle entry",
        "catalogue/cycles/<map-id>/<cycle-id>.yaml as yaml.safe_load reads it. Integers may have any number of "
        "digits. periplus verify also checks what a schema cannot: that map names the folder and an existing map, "
        "that the word is quoted digits when the modulus is at most 10 and residues below the modulus, and every "
        "claim, re-derived exactly.",
    ),
    Document(
        "references",
        "Periplus references",
        "catalogue/references.yaml as yaml.safe_load reads it: reference keys mapped to bibliographic records.",
    ),
)


def _refs(value: Any) -> set[str]:
    """The names of the $defs a schema fragment refers to."""
    if isinstance(value, Mapping):
        found = {value["$ref"].rpartition("/")[2]} if "$ref" in value else set()
        for item in value.values():
            found |= _refs(item)
        return found
    if isinstance(value, list):
        return set().union(*map(_refs, value)) if value else set()
    return set()


def json_schema(document: Document) -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of one kind of file, from the field table."""
    head = {"$schema": "https://json-schema.org/draft/2020-12/schema", "title": document.title}
    head["description"] = document.description
    if document.kind == "references":
        body: dict[str, Any] = {
            "type": "object",
            "propertyNames": {"pattern": DEFS["id"]["pattern"]},
            "additionalProperties": REFERENCE.schema(),
        }
    else:
        body = SHAPES[document.kind].schema()
    used = _refs(body)
    return {**head, **body, "$defs": {name: dict(DEFS[name]) for name in DEFS if name in used}}


def json_schema_text(document: Document) -> str:
    """The schema as the file ``catalogue/schema/<kind>.schema.json`` holds it."""
    return json.dumps(json_schema(document), indent=2, ensure_ascii=False) + "\n"


def markdown_table(shape: Shape) -> str:
    """The shape's fields as the Markdown table of catalogue/README.md."""
    rows = ["| field | required | meaning |", "| --- | --- | --- |"]
    for f in shape.fields:
        required = f.required_note or ("yes" if f.required else "no")
        rows.append(f"| `{f.name}` | {required} | {f.meaning} |")
    return "\n".join(rows) + "\n"


def field_order() -> tuple[str, ...]:
    """Top-level field names in the order the format lists them (record, cycle, map, reference), once each."""
    names: dict[str, None] = {}
    for shape in (RECORD, CYCLE, MAP, REFERENCE):
        names.update(dict.fromkeys(shape.names))
    return tuple(names)


_TABLE = re.compile(r"(<!-- fields: (?P<shape>[a-z]+) -->\n)(?P<table>.*?)(<!-- end of fields -->)", re.DOTALL)


def with_tables(text: str) -> str:
    """``text`` (catalogue/README.md) with every marked field table written anew from the table.

    A table sits between ``<!-- fields: SHAPE -->`` and ``<!-- end of fields -->`` lines, SHAPE a
    key of :data:`SHAPES`.
    """
    return _TABLE.sub(lambda m: m[1] + markdown_table(SHAPES[m["shape"]]) + m[4], text)
