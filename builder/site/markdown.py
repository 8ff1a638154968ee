"""Entry text to safe HTML: Markdown rendered, then sanitised.

Entries arrive from outside contributors, so their notes are untrusted:
raw HTML in them is reduced to a small set of harmless tags, scripts and
styles are dropped with their content, event-handler attributes vanish,
and links may only be http, https, mailto or relative (ammonia's cleaner,
through nh3).
"""

from __future__ import annotations

import functools
import re

import markdown
import nh3
from markupsafe import Markup

__all__ = ["render_notes"]

_TAGS = {
    "a", "abbr", "b", "blockquote", "br", "code", "em", "i", "li", "ol", "p", "pre", "strong", "sub", "sup",
    "ul", "h1", "h2", "h3", "h4", "h5", "h6", "table", "thead", "tbody", "tr", "th", "td", "hr",
}  # fmt: skip
_ATTRIBUTES = {"a": {"href", "title"}, "abbr": {"title"}, "th": {"scope"}}
_SCHEMES = {"http", "https", "mailto"}
_HEADING_TAG = re.compile(r"<(/?)h([1-6])>")  # after nh3: headings carry no attributes
#: Entry headings sit below the page's h1 and section h2s.
_TOP, _DEEPEST = 3, 6


def _outline(html: str) -> str:
    """Renumber the headings of sanitised HTML so they start at h3 and never skip a level.

    Each heading becomes one level below the nearest earlier heading of a higher level in the
    input (h3 if there is none), so an outline such as h2, h4 or h3, h1, h3 keeps its shape
    without leaving a gap (WCAG 2, 1.3.1 "Info and Relationships").
    """
    stack: list[tuple[int, int]] = []  # (level in the input, level written)
    current = [_TOP]

    def renumber(m: re.Match[str]) -> str:
        if m[1]:
            return f"</h{current[0]}>"
        level = int(m[2])
        while stack and stack[-1][0] >= level:
            stack.pop()
        written = min(stack[-1][1] + 1, _DEEPEST) if stack else _TOP
        stack.append((level, written))
        current[0] = written
        return f"<h{written}>"

    return _HEADING_TAG.sub(renumber, html)


@functools.lru_cache(maxsize=1)
def _converter() -> markdown.Markdown:
    """One Markdown converter for every note of a process, reset before each (making one with its
    extensions takes longer than converting a note)."""
    return markdown.Markdown(extensions=["tables"], output_format="html")


def render_notes(text: str | None) -> Markup:
    """Markdown to sanitised HTML ('' for no text). Headings start at h3 so page outlines stay in order."""
    if not text:
        return Markup("")
    html = _converter().reset().convert(text)
    clean = nh3.clean(
        html,
        tags=_TAGS,
        clean_content_tags={"script", "style"},
        attributes=_ATTRIBUTES,
        url_schemes=_SCHEMES,
        link_rel="nofollow noopener noreferrer",
        strip_comments=True,
    )
    return Markup(_outline(clean))  # sanitised just above
