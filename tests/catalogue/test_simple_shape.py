"""The simple shape (builder.catalogue.nodes._parse_simple) gives the very tree libyaml's event stream gives.

The reference is libyaml (PyYAML's C parser), read through the event stream as every other file is
(nodes._parse_events): for each document the simple reader accepts, both trees must agree in every
node's kind, text, plainness, line and column, and the event stream must find nothing wrong.  The
documents are every catalogue file at hand and documents generated around the simple shape, with
the characters YAML gives meaning to put in at random.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import FIXTURES, REPO
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from builder.catalogue.nodes import MappingNode, Node, Scalar, SequenceNode, _Loader, _parse_events, _parse_simple


def same(a: Node | None, b: Node | None) -> bool:
    """Whether two trees agree in every node's kind, value, plainness and position."""
    if a is None or b is None:
        return a is b
    if type(a) is not type(b) or (a.line, a.column) != (b.line, b.column):
        return False
    if isinstance(a, Scalar):
        assert isinstance(b, Scalar)
        return (a.value, a.plain) == (b.value, b.plain)
    if isinstance(a, SequenceNode):
        assert isinstance(b, SequenceNode)
        return len(a.items) == len(b.items) and all(same(x, y) for x, y in zip(a.items, b.items, strict=True))
    assert isinstance(a, MappingNode) and isinstance(b, MappingNode)
    return list(a.entries) == list(b.entries) and all(
        same(a.entries[k][0], b.entries[k][0]) and same(a.entries[k][1], b.entries[k][1]) for k in a.entries
    )


def agrees(text: str) -> bool | None:
    """None when the simple reader declines ``text``; else whether its tree is the event stream's, unfaulted."""
    simple = _parse_simple(text)
    if simple is None:
        return None
    reference, problems = _parse_events(text, Path("doc.yaml"), _Loader, [])
    return not problems and same(simple, reference)


def catalogue_texts() -> list[tuple[str, str]]:
    out = []
    for root in (REPO / "catalogue", FIXTURES):
        for path in sorted(root.rglob("*.yaml")):
            try:
                out.append((path.relative_to(REPO).as_posix(), path.read_bytes().decode("utf-8-sig")))
            except UnicodeDecodeError:
                continue  # a fixture of bad encoding: never parsed
    return out


def test_every_catalogue_file_at_hand_reads_the_same_or_is_declined() -> None:
    results = {name: agrees(text) for name, text in catalogue_texts()}
    assert [name for name, ok in results.items() if ok is False] == []
    # Most shipped cycle entries are in the simple shape (so the comparison above is not empty).
    shipped = [ok for name, ok in results.items() if name.startswith("catalogue/cycles/")]
    assert sum(ok is True for ok in shipped) > 0.9 * len(shipped)


SIMPLE = (
    "# a comment\n"
    "map: 3x-plus-1\n"
    "start: -17\n"
    'word: "11110111000"\n'
    "members: [-17, -25, -37]\n"
    "\n"
    "provenance:\n"
    "  found_by: 'someone'\n"
    "  found_on: 2024-05-01\n"
    "  references: [lagarias-1985, a-b]\n"
)


@pytest.mark.parametrize(
    "text",
    [
        SIMPLE,
        "a: 1\n",
        "a: []\n",
        "a:\n  b: c\nd: e\n",
        '  # indented comment\na: "x: y # not a comment [z]"\n',
        "a: 'it is'\n",
    ],
)
def test_documents_of_the_simple_shape_are_read_by_it(text: str) -> None:
    assert agrees(text) is True


@pytest.mark.parametrize(
    "text",
    [
        SIMPLE.replace("\n", "\r\n"),  # another line break
        SIMPLE.rstrip("\n"),  # no final line break
        "a: 1\na: 2\n",  # a repeated key: the event stream names it
        "a:\n  b: 1\n  b: 2\n",
        "a:\nb: 1\n",  # a key with nothing under it
        "a:\n",
        "a: 1 \n",  # a trailing space
        "a: 1 # comment\n",
        "a:\n    b: 1\n",  # another indent
        "a: b\n  c\n",  # a plain scalar continued on the next line
        'a: "x\\ty"\n',  # an escape
        "a: 'it''s'\n",  # a doubled quote
        'a: "x\u2028y"\n',  # a line separator inside quotes
        "a: [1,2]\n",
        "a: [1, [2]]\n",
        "a: &x 1\n",
        "a: !tag 1\n",
        "- a\n",
        "---\na: 1\n",
        "a: |\n  text\n",
        "\ufeffa: 1\n",
        "# only a comment\n",
        "",
    ],
)
def test_documents_outside_the_simple_shape_are_declined(text: str) -> None:
    assert _parse_simple(text) is None


#: Characters YAML gives meaning to, and others that are harmless, put into simple documents at random.
NOISE = st.sampled_from(list(" \t\n\r#:-?,[]{}&*!|>'\"%@`\\\u2028\ufeffé0a_.+"))


@settings(max_examples=600, suppress_health_check=[HealthCheck.too_slow], deadline=None)
@given(st.lists(st.tuples(st.integers(0, len(SIMPLE)), NOISE, st.booleans()), max_size=4))
def test_documents_near_the_simple_shape_are_read_the_same_or_declined(edits: list[tuple[int, str, bool]]) -> None:
    text = SIMPLE
    for at, char, replace in edits:
        at = min(at, len(text))
        text = text[:at] + char + text[at + 1 if replace else at :]
    assert agrees(text) is not False, repr(text)
