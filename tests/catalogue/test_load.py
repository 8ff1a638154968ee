"""The loader: YAML event stream to positioned nodes, and the catalogue layout."""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml
from conftest import VALID, write_files

from builder.catalogue.files import FolderSource, load_catalogue, read_survey, scan_catalogue, scan_source, take_survey
from builder.catalogue.nodes import MAX_DEPTH, MappingNode, Scalar, SequenceNode, parse_yaml
from builder.errors import CatalogueUnreadable

F = Path("f.yaml")


def parse(text: str):
    return parse_yaml(text, F)


def only_problem(text: str):
    root, problems = parse(text)
    assert len(problems) == 1, problems
    return root, problems[0]


# --- nodes and positions -----------------------------------------------------------


def test_scalars_keep_their_text_and_whether_they_were_plain():
    root, problems = parse('a: 0110\nb: "0110"\nc: |\n  text\nd: yes\n')
    assert problems == []
    assert isinstance(root, MappingNode)
    values = {k: v for k, (_, v) in root.entries.items()}
    assert all(isinstance(v, Scalar) for v in values.values())
    # YAML 1.2 section 7.3 / 8.1 (open standard): quoted and block scalars are not plain.
    assert [(v.value, v.plain) for v in values.values()] == [
        ("0110", True),
        ("0110", False),
        ("text\n", False),
        ("yes", True),
    ]


def test_positions_are_one_based_lines_and_columns():
    root, _ = parse("map: x\nmembers:\n  - 1\n  - [2, 3]\n")
    key, members = root.entries["members"]
    assert (key.line, key.column) == (2, 1)
    assert isinstance(members, SequenceNode)
    one, pair = members.items
    assert (one.line, one.column) == (3, 5)
    assert isinstance(pair, SequenceNode) and (pair.line, pair.column) == (4, 5)
    assert [(n.value, n.line, n.column) for n in pair.items] == [("2", 4, 6), ("3", 4, 9)]


def test_mapping_keeps_document_order():
    root, _ = parse("z: 1\na: 2\nm: 3\n")
    assert list(root.entries) == ["z", "a", "m"]


def test_empty_document_has_no_root_and_no_problem_of_its_own():
    # The loader reports nothing; verify reports the empty file (tests/commands/test_cli.py, case empty-file).
    assert parse("") == (None, [])
    assert parse("# only a comment\n") == (None, [])


# --- refused YAML ------------------------------------------------------------------


def test_duplicate_key_is_an_error_at_the_second_key():
    # YAML 1.2 section 3.2.1.1 (open standard): keys of a mapping are unique.
    root, p = only_problem("start: 1\nlength: 2\nstart: 3\n")
    assert (p.position.line, p.position.column, p.code) == (3, 1, "duplicate-key")
    assert p.message == "duplicate key 'start' (first given at line 1)"
    assert root.entries["start"][1].value == "1"


def test_alias_and_anchor_are_refused_and_leave_no_tree():
    text = 'a: &a ["lol", "lol"]\nb: [*a, *a]\n'
    root, problems = parse(text)
    assert root is None
    assert [(p.position.line, p.position.column) for p in problems] == [(1, 4), (2, 5), (2, 9)]
    assert problems[0].message == "anchor &a is not allowed in catalogue files"
    assert (
        problems[1].message
        == "expected a value, got the alias *a; anchors and aliases are not allowed in catalogue files"
    )


def test_billion_laughs_is_refused_cheaply():
    # The classic entity-expansion shape with YAML anchors: 9 levels of 9 aliases each.
    lines = ['l0: &l0 "lol"']
    for i in range(1, 10):
        lines.append(f"l{i}: &l{i} [" + ", ".join([f"*l{i - 1}"] * 9) + "]")
    root, problems = parse("\n".join(lines) + "\n")
    assert root is None
    assert len(problems) == 10 + 9 * 9  # each anchor and each alias once, nothing expanded
    assert all(p.position.line >= 1 for p in problems)


def test_anchor_without_alias_is_refused_but_the_tree_is_kept():
    root, p = only_problem("start: &s 5\n")
    assert (p.position.line, p.position.column) == (1, 8)
    assert root.entries["start"][1].value == "5"


@pytest.mark.parametrize(
    ("text", "tag"),
    [
        ("start: !!python/object/apply:os.system [ls]\n", "tag:yaml.org,2002:python/object/apply:os.system"),
        ("start: !!int 5\n", "tag:yaml.org,2002:int"),
        ("!local\nstart: 5\n", "!local"),
    ],
)
def test_explicit_tags_are_refused(text, tag):
    _, p = only_problem(text)
    assert p.message == f"explicit tag {tag} is not allowed in catalogue files"
    assert p.position.line == 1


def test_several_documents_are_refused_at_the_second():
    _, p = only_problem("a: 1\n---\nb: 2\n")
    assert (p.position.line, p.message) == (2, "expected one YAML document, got several")


@pytest.mark.parametrize(
    ("text", "line"),
    [
        ("a: [1, 2\n", 2),
        ("a: 'unterminated\n", 2),
        ("a: 1\n b: 2\n", 2),
        ("- a\nb: c\n", 2),
        ("a: b: c\n", 1),
        ("{a: 1\n", 2),
    ],
)
def test_syntax_errors_are_positioned(text, line):
    root, p = only_problem(text)
    assert root is None
    assert p.code == "yaml"
    assert p.message.startswith("YAML syntax: ")
    assert p.position.line == line and p.position.column >= 1
    assert "\n" not in p.message


def test_tab_indentation_is_positioned_and_named():
    # YAML 1.2 section 6.1 (open standard): tabs are not allowed in indentation.
    root, p = only_problem("map: x\nprovenance:\n\tfound_by: me\n")
    assert root is None
    assert (p.position.line, p.position.column) == (3, 1)
    assert "tab" in p.message


@pytest.mark.parametrize("char", ["\x00", "\x07", "\x1b", "\x7f", "\ufffe"])
def test_non_printable_characters_are_positioned(char):
    # YAML 1.2 section 5.1 (open standard): the printable set excludes C0 controls other than TAB, LF, CR,
    # DEL, and U+FFFE.
    root, p = only_problem(f"a: 1\nname: ab{char}c\n")
    assert root is None
    assert (p.position.line, p.position.column) == (2, 9)
    assert p.message == f"expected printable text, got the non-printable character U+{ord(char):04X}"


def test_printable_characters_outside_ascii_are_accepted():
    # YAML 1.2 section 5.1: U+00A0 and above (but for surrogates, U+FFFE, U+FFFF) and astral characters
    # are printable.
    root, problems = parse("name: \u00e9\u00a0\u2014\U0001f600\n")
    assert problems == []
    assert root.entries["name"][1].value.startswith("\u00e9")


def test_a_complex_key_is_refused():
    root, p = only_problem("? [a, b]\n: 1\nc: 2\n")
    assert p.message == "expected a plain text key, got a list"
    assert list(root.entries) == ["c"]


def test_nesting_up_to_the_limit_is_accepted_and_one_more_level_is_not():
    # A mapping holding MAX_DEPTH - 1 nested lists is MAX_DEPTH levels in all.
    inner = "[" * (MAX_DEPTH - 1) + "]" * (MAX_DEPTH - 1)
    root, problems = parse("a: " + inner + "\n")
    assert problems == []
    levels, node = 0, root
    while node is not None:
        levels += 1
        node = node.entries["a"][1] if isinstance(node, MappingNode) else (node.items or [None])[0]
    assert levels == MAX_DEPTH
    _, p = only_problem("a: [" + inner + "]\n")
    assert (p.position.line, p.position.column) == (1, 4 + MAX_DEPTH - 1)


@pytest.mark.parametrize(
    "text",
    [
        "[" * 10_000,
        "[" * 10_000 + "]" * 10_000,
        "{a: " * 10_000,
        "".join(" " * i + "- \n" for i in range(0, 2 * 200, 2)),
    ],
    ids=["open-flow", "closed-flow", "flow-mappings", "block"],
)
def test_deep_nesting_is_refused_without_recursion(text):
    root, p = only_problem(text)
    assert root is None
    assert p.message == f"expected at most {MAX_DEPTH} levels of nesting, got more"
    assert p.position.line >= 1


def test_constructing_yaml_would_accept_what_the_loader_refuses():
    # The refusals above are the loader's policy, not YAML's: PyYAML's safe_load (a reference library)
    # accepts a duplicate key silently, keeping the last value.
    assert yaml.safe_load("start: 1\nstart: 3\n") == {"start": 3}


# --- the catalogue layout ----------------------------------------------------------


def test_valid_fixture_loads_every_file():
    raw = load_catalogue(VALID)
    assert raw.problems == []
    kinds = sorted((f.kind, f.folder or "", f.id) for f in raw.files)
    assert kinds[:2] == [("cycle", "3x-minus-1", "through-1"), ("cycle", "3x-minus-1", "through-17")]
    assert [k for k in kinds if k[0] != "cycle"] == [
        ("map", "", "3x-minus-1"),
        ("map", "", "3x-plus-1"),
        ("record", "", "record"),
        ("references", "", "references"),
    ]
    assert len(raw.files) == 12
    assert all(f.root is not None for f in raw.files)


def test_other_files_in_the_catalogue_root_are_ignored(tmp_path):
    root = tmp_path / "cat"
    write_files(root, {"maps/.gitkeep": "", "schema/map.schema.json": "{}", "README.md": "# notes\n"})
    raw = load_catalogue(root)
    assert (raw.files, raw.problems) == ([], [])


def test_a_catalogue_without_references_or_cycles_loads(tmp_path):
    root = tmp_path / "cat"
    (root / "maps").mkdir(parents=True)
    raw = load_catalogue(root)
    assert (raw.files, raw.problems) == ([], [])


@pytest.mark.parametrize(
    ("files", "path", "message", "code"),
    [
        (
            {"maps/Upper.yaml": "x: 1\n"},
            "maps/Upper.yaml",
            "expected an id of lowercase letters, digits and hyphens ([a-z0-9][a-z0-9-]*), got 'Upper'",
            "bad-id",
        ),
        (
            {"maps/a b.yaml": "x: 1\n"},
            "maps/a b.yaml",
            "expected an id of lowercase letters, digits and hyphens ([a-z0-9][a-z0-9-]*), got 'a b'",
            "bad-id",
        ),
        (
            {"maps/-x.yaml": "x: 1\n"},
            "maps/-x.yaml",
            "expected an id of lowercase letters, digits and hyphens ([a-z0-9][a-z0-9-]*), got '-x'",
            "bad-id",
        ),
        (
            {"maps/x.yml": "x: 1\n"},
            "maps/x.yml",
            "expected a file named <id>.yaml, got 'x.yml' (use the extension .yaml)",
            "layout",
        ),
        ({"maps/README": "x\n"}, "maps/README", "expected a file named <id>.yaml, got 'README'", "layout"),
        ({"maps/sub/x.yaml": "x: 1\n"}, "maps/sub", "expected only map files (<id>.yaml) here, got a folder", "layout"),
        (
            {"cycles/x.yaml": "x: 1\n"},
            "cycles/x.yaml",
            "expected a folder named after a map id, got a file or link",
            "layout",
        ),
        ({"cycles/Big/x.yaml": "x: 1\n"}, "cycles/Big", "expected a folder named after a map id, got 'Big'", "bad-id"),
        (
            {"cycles/m/deeper/x.yaml": "x: 1\n"},
            "cycles/m/deeper",
            "expected only cycle files (<id>.yaml) here, got a folder",
            "layout",
        ),
    ],
)
def test_layout_problems(tmp_path, files, path, message, code):
    root = tmp_path / "cat"
    (root / "maps").mkdir(parents=True)
    write_files(root, files)
    raw = load_catalogue(root)
    (p,) = raw.problems
    assert (p.position.file, p.position.line, p.message, p.code) == (root / path, 0, message, code)
    assert raw.files == []


def test_symbolic_links_are_refused(tmp_path):
    root = tmp_path / "cat"
    write_files(root, {"maps/real.yaml": "x: 1\n", "elsewhere/refs.yaml": "{}\n", "cycles/real/c.yaml": "x: 1\n"})
    (root / "maps" / "link.yaml").symlink_to("real.yaml")
    (root / "references.yaml").symlink_to(Path("elsewhere") / "refs.yaml")
    (root / "cycles" / "alias").symlink_to("real", target_is_directory=True)
    raw = load_catalogue(root)
    assert sorted(str(p.position.file.relative_to(root)) for p in raw.problems) == [
        "cycles/alias",
        "maps/link.yaml",
        "references.yaml",
    ]
    assert sorted(str(f.path.relative_to(root)) for f in raw.files) == ["cycles/real/c.yaml", "maps/real.yaml"]


def test_a_survey_taken_ahead_lists_and_stamps_as_the_folder_does(tmp_path, monkeypatch):
    # A build's helper lists and stamps the files ahead (builder.catalogue.files.take_survey); the scan that
    # reads its survey finds the same files and the same layout problems, and the same stamps, as one that
    # looks at the folder itself (common practice, no source: a cache must not change what is found).
    monkeypatch.setattr("builder.catalogue.files.SETTLE_NS", 0)
    root = tmp_path / "cat"
    write_files(
        root,
        {
            "maps/m.yaml": "x: 1\n",
            "maps/x.yml": "x: 1\n",
            "maps/sub/x.yaml": "x: 1\n",
            "cycles/m/a.yaml": "x: 1\n",
            "cycles/m/B.yaml": "x: 1\n",
            "cycles/m/deeper/x.yaml": "x: 1\n",
            "cycles/Big/x.yaml": "x: 1\n",
            "cycles/x.yaml": "x: 1\n",
            "cycles/n/.gitkeep": "",
            "record.yaml": "x: 1\n",
        },
    )
    (root / "maps" / "link.yaml").symlink_to("m.yaml")
    (root / "cycles" / "alias").symlink_to("m", target_is_directory=True)
    surveyed = scan_source(FolderSource(root, read_survey(take_survey(root))))
    plain = scan_catalogue(root)

    def files(raw):
        return [(f.rel, f.kind, f.id, f.folder, f.path) for f in raw.files]

    assert files(surveyed) == files(plain) and len(plain.files) == 3
    assert surveyed.layout_problems == plain.layout_problems and len(plain.layout_problems) == 8
    rels = [f.rel for f in plain.files if f.kind != "record"]  # those the survey stamped
    assert surveyed.source.stamps(rels) == plain.source.stamps(rels) == [plain.source.stamp(r) for r in rels]
    assert [surveyed.source.stamp(r) for r in rels] == plain.source.stamps(rels)
    assert len(rels) == 2 and all(stamp is not None for stamp in plain.source.stamps(rels))


def test_a_symbolic_link_as_maps_folder_makes_the_catalogue_unreadable(tmp_path):
    (tmp_path / "real-maps").mkdir()
    root = tmp_path / "cat"
    root.mkdir()
    (root / "maps").symlink_to(tmp_path / "real-maps", target_is_directory=True)
    with pytest.raises(CatalogueUnreadable):
        load_catalogue(root)


def test_non_utf8_bytes_are_positioned(tmp_path):
    root = tmp_path / "cat"
    write_files(root, {"maps/m.yaml": b"name: ok\nsummary: caf\xe9\n"})
    raw = load_catalogue(root)
    (p,) = raw.problems
    assert (p.position.line, p.position.column, p.code) == (2, 13, "encoding")
    assert p.message == "expected UTF-8 text, got the byte 0xe9"
    assert raw.files[0].root is None


def test_a_byte_order_mark_is_accepted(tmp_path):
    # Unicode Standard, section 23.8 (open standard): U+FEFF at the start of UTF-8 text is a byte order mark.
    root = tmp_path / "cat"
    write_files(root, {"maps/m.yaml": "\ufeffname: ok\n".encode()})
    raw = load_catalogue(root)
    assert raw.problems == []
    assert list(raw.files[0].root.entries) == ["name"]


@pytest.mark.parametrize("what", ["missing", "file", "no-maps", "maps-file"])
def test_not_a_catalogue(tmp_path, what):
    target = tmp_path / "target"
    if what == "file":
        target.write_text("x\n", encoding="utf-8")
    elif what == "no-maps":
        target.mkdir()
    elif what == "maps-file":
        write_files(target, {"maps": "x\n"})
    with pytest.raises(CatalogueUnreadable) as info:
        load_catalogue(target)
    assert info.value.path == target
    assert info.value.exit_code == 2
