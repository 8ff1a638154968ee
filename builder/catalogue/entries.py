"""Writing catalogue entries: the one writer behind draft, hunt --drafts and the starter catalogue.

Every text value is written as a double-quoted YAML scalar (``yaml_string``) that YAML reads back as
exactly that text, whatever characters it holds.
"""

from __future__ import annotations

from builder.arith.dynamics import CycleFound
from builder.arith.integers import to_decimal
from builder.arith.words import word_text

__all__ = ["MEMBERS_IN_ENTRY", "cycle_file_id", "entry_text", "yaml_string"]


def _yaml_char(ch: str) -> str:
    code = ord(ch)
    if ch == '"' or ch == "\\":
        return "\\" + ch
    if 0x20 <= code <= 0x7E:
        return ch
    # Printable outside ASCII, and not a YAML line break (U+0085, U+2028, U+2029 are breaks in YAML 1.1,
    # which PyYAML reads, and would be folded into spaces) nor the byte order mark U+FEFF.
    if (0xA0 <= code <= 0xD7FF and code not in (0x2028, 0x2029)) or (0xE000 <= code <= 0xFFFD and code != 0xFEFF):
        return ch
    if code >= 0x10000:
        return ch
    named = {"\t": "\\t", "\n": "\\n", "\r": "\\r", "\b": "\\b", "\f": "\\f"}
    return named.get(ch, f"\\u{code:04x}")


def yaml_string(text: str) -> str:
    """``text`` as a double-quoted YAML scalar that YAML reads back as exactly ``text``.

    Only the escapes YAML and JSON share are used (``\\"``, ``\\\\``, ``\\n``, ``\\t``, ``\\uXXXX`` ...),
    so the result is also a JSON string literal for the same text (lone surrogates aside).
    """
    return '"' + "".join(map(_yaml_char, text)) + '"'


#: Entries list their members up to this length (longer cycles: word and length only).
MEMBERS_IN_ENTRY = 200


def cycle_file_id(canonical: int) -> str:
    """The file stem for a cycle: its canonical member, 'minus-' for negatives."""
    text = to_decimal(abs(canonical))
    return f"minus-{text}" if canonical < 0 else text


def entry_text(
    map_id: str,
    cycle: CycleFound,
    modulus: int,
    found_by: str,
    found_on: str,
    method: str,
    references: tuple[str, ...] = (),
) -> str:
    """A cycle entry in the catalogue format, read from ``cycle.members[0]``."""
    word = f'"{word_text(cycle.word, modulus)}"' if modulus <= 10 else "[" + ", ".join(map(str, cycle.word)) + "]"
    lines = [
        f"map: {map_id}",
        f"start: {to_decimal(cycle.members[0])}",
        f"word: {word}",
        f"length: {len(cycle.members)}",
    ]
    if len(cycle.members) <= MEMBERS_IN_ENTRY:
        lines.append("members: [" + ", ".join(to_decimal(n) for n in cycle.members) + "]")
    lines += [
        "provenance:",
        f"  found_by: {yaml_string(found_by)}",
        f"  found_on: {found_on}",
        f"  method: {yaml_string(method)}",
    ]
    if references:
        lines.append(f"  references: [{', '.join(references)}]")
    return "\n".join(lines) + "\n"
