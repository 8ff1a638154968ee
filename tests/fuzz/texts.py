"""Texts for the fuzz campaign: pathological Markdown, control characters and bytes that are not UTF-8.

The limits come from the catalogue format as documented (catalogue/README.md): one-line fields (names,
summaries, titles...) hold at most 1,000 characters; notes hold at most 50,000 characters and at most 20
``[``, ``(`` or ``<`` (before a non-space character) that nothing closes, a backslash escaping the next
character.  A text of :func:`notes_within` keeps inside them, a text of :func:`notes_beyond` breaks one.
"""

from __future__ import annotations

import random

__all__ = [
    "BAD_BYTES",
    "FORGED",
    "LINE_MAX",
    "MARKER",
    "NAME_CHARACTERS",
    "NOTES_MAX",
    "OPEN_MAX",
    "RAW_FORBIDDEN",
    "SURROGATES",
    "VALUE_CHARACTERS",
    "line_beyond",
    "line_within",
    "notes_beyond",
    "notes_within",
    "quote",
]

LINE_MAX = 1_000  # catalogue/README.md, "General rules": one-line fields
NOTES_MAX = 50_000  # catalogue/README.md, the `notes` rows of the map and provenance tables
OPEN_MAX = 20  # catalogue/README.md, the same rows: unclosed '[', '(' or tag-like '<'

#: The name a hostile note's script calls: no built page may hold it inside a live tag.
MARKER = "fuzzMarker"
#: Text put after every injected newline: no line of a command's output may start with it (a forged line).
FORGED = "fuzz-forged:1:1: error: forged"

# Units repeated to make a note: none leaves a '[', '(' or '<' open, so any number of them stays within
# the bracket limit (each one counted by hand against the README's rule; common practice, no source).
_CLOSED_UNITS = (
    "*",
    "_",
    "`",
    "~",
    "#",
    "|",
    "\\",
    "&",
    "!",
    "-",
    "=",
    " ",
    "\n",
    "> ",
    "*a",
    "**a",
    "_a",
    "``a",
    "\\[",
    "\\(",
    "\\<",
    "[x]",
    "[x](y)",
    "(x)",
    "<b>",
    "< ",
    "- ",
    "1. ",
    "    ",
    "&#0;",
    "&#x110000;",
    "<!-- x -->",
    "```\n",
    "$$",
    "![x](y)",
    "[x]: http://example.org\n",
    f"<script>{MARKER}()</script>\n",
    f"<img src=x onerror={MARKER}()>",
    f'<a href="javascript:{MARKER}()">x</a>',
    f"[x](javascript:{MARKER}())",
)
# Units that leave one '[', '(' or tag-like '<' open each.
_OPEN_UNITS = ("[", "(", "<a", "<http://", "[x](", "![", "<!--")
# Repeat counts: one, a few, many, and as many as the limit allows.
_SCALES = (1, 20, 1_000, None)

#: Characters put into file names (no '/' and no NUL, which POSIX file names cannot hold), each breaking the
#: id rule [a-z0-9][a-z0-9-]* of catalogue/README.md.
NAME_CHARACTERS = (
    "\n" + FORGED,
    "\r",
    "\t",
    "\x1b[31m",
    "\x7f",
    "\x85",
    "\u202e",
    "\u2066",
    "\u200b",
    "\ufeff",
    " ",
    ":",
    "\\",
    "A",
)
#: Byte strings that are not UTF-8 (RFC 3629 section 3: 0xFF and 0xFE never occur, an overlong form,
#: an encoded surrogate, a truncated sequence, a lone continuation byte).
BAD_BYTES = (b"\xff", b"\xfe", b"\xc0\xaf", b"\xed\xa0\x80", b"\xe2\x82", b"\x80")
#: Characters YAML 1.1 refuses when written raw in a file (section 5.1: printable characters are tab, LF,
#: CR, NEL, 0x20-0x7E, 0xA0-0xD7FF, 0xE000-0xFFFD and above; PyYAML's reader applies it to the whole stream).
RAW_FORBIDDEN = (
    "\x00",
    "\x01",
    "\x07",
    "\x08",
    "\x0b",
    "\x0c",
    "\x1b",
    "\x1f",
    "\x7f",
    "\x80",
    "\x9b",
    "\x9f",
    "\uffff",
)
#: Characters put into text values through YAML double-quoted escapes, so YAML reads them: C0 and C1
#: controls, line and paragraph separators, bidirectional controls (the "Trojan Source" set, Boucher and
#: Anderson 2021, from memory), zero-width characters and noncharacters.
VALUE_CHARACTERS = (
    "\x00",
    "\x07",
    "\x08",
    "\t",
    "\n" + FORGED,
    "\r",
    "\r" + FORGED,
    "\x0b",
    "\x1b[2J",
    "\x7f",
    "\x85",
    "\x9b",
    "\u200b",
    "\u200e",
    "\u2028",
    "\u2029",
    "\u202a",
    "\u202e",
    "\u2066",
    "\u2069",
    "\ufeff",
    "\ufffe",
)
#: Lone surrogates, as escapes: YAML 1.1 has no such character, so PyYAML refuses the escape (a YAML error).
SURROGATES = ("\ud800", "\udcff")


def quote(text: str) -> str:
    """A YAML double-quoted scalar holding exactly ``text`` (YAML 1.1 section 5.7 escapes)."""
    out = ['"']
    for ch in text:
        if ch in '"\\':
            out.append("\\" + ch)
        elif " " <= ch <= "~":
            out.append(ch)
        elif ord(ch) < 0x10000:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(f"\\U{ord(ch):08x}")
    out.append('"')
    return "".join(out)


def _repeat(rng: random.Random, unit: str, room: int) -> tuple[str, str]:
    """'x' then ``unit`` a chosen number of times, at most ``room`` characters in all."""
    most = max(1, (room - 1) // len(unit))
    scale = rng.choice(_SCALES)
    count = most if scale is None else min(scale, most)
    return f"'x' + {unit!r} * {count}", "x" + unit * count


def _nested_list(rng: random.Random, room: int) -> tuple[str, str]:
    lines, size, depth = [], 0, 0
    while size + 2 * depth + 4 <= room and depth < rng.choice((50, 200, 10_000)):
        line = "  " * depth + "- x\n"
        lines.append(line)
        size += len(line)
        depth += 1
    return f"a list nested {depth} deep", "".join(lines)


def _soup(rng: random.Random, room: int) -> tuple[str, str]:
    alphabet = "*_`~#|\\&!-= \n>x)]"  # no opening bracket, so nothing is left open
    size = rng.choice((100, 5_000, room))
    return f"{size} characters drawn from {alphabet!r}", "x" + "".join(rng.choice(alphabet) for _ in range(size - 1))


def notes_within(rng: random.Random) -> tuple[str, str]:
    """A pathological note inside the documented limits, and what it is."""
    room = NOTES_MAX - 2  # a YAML block scalar adds a final newline
    pick = rng.randrange(10)
    if pick == 0:
        return _nested_list(rng, room)
    if pick == 1:
        return _soup(rng, room)
    if pick == 2:
        opened = rng.randint(1, OPEN_MAX)
        label, text = _repeat(rng, rng.choice(_CLOSED_UNITS), room - opened * 8)
        unit = rng.choice(_OPEN_UNITS)
        return f"{unit!r} * {opened} + {label}", unit * opened + text
    return _repeat(rng, rng.choice(_CLOSED_UNITS), room)


def notes_beyond(rng: random.Random) -> tuple[str, str]:
    """A pathological note that breaks a documented limit, and what it is."""
    if rng.random() < 0.5:
        unit = rng.choice(_OPEN_UNITS)
        count = rng.choice((OPEN_MAX + 1, 1_000, 16_000, NOTES_MAX // len(unit)))
        return f"{unit!r} * {count} ({count} left open)", unit * count
    unit = rng.choice(_CLOSED_UNITS)
    size = NOTES_MAX + rng.choice((1, 1_000, 50_000))
    count = size // len(unit) + 1
    return f"{unit!r} * {count} (more than {NOTES_MAX:,} characters)", unit * count


def line_within(rng: random.Random) -> tuple[str, str]:
    """A one-line text inside the documented limit."""
    unit = rng.choice([u for u in _CLOSED_UNITS + _OPEN_UNITS if "\n" not in u])
    return _repeat(rng, unit, LINE_MAX - 1)


def line_beyond(rng: random.Random) -> tuple[str, str]:
    """A one-line field's text that breaks the rule: too long, or more than one line."""
    if rng.random() < 0.5:
        count = LINE_MAX + rng.choice((1, 1_000, 100_000))
        return f"'x' * {count}", "x" * count
    return "two lines", "first line\n" + FORGED
