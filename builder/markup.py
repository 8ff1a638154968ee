"""Entry text to safe HTML: Markdown rendered, then sanitised.

Entries arrive from outside contributors, so their notes are untrusted:
raw HTML in them is reduced to a small set of harmless tags, scripts and
styles are dropped with their content, event-handler attributes vanish,
and links may only be http, https, mailto or relative (ammonia's cleaner,
through nh3).
"""

from __future__ import annotations

import re

import markdown
import nh3
from markupsafe import Markup

__all__ = ["render_notes"]

_TAGS = {
    "a", "abbr", "b", "blockquote", "br", "code", "em", "i", "li", "ol", "p", "pre", "strong", "sub", "sup",
    "ul", "h3", "h4", "h5", "h6", "table", "thead", "tbody", "tr", "th", "td", "hr",
}  # fmt: skip
_ATTRIBUTES = {"a": {"href", "title"}, "abbr": {"title"}, "th": {"scope"}}
_SCHEMES = {"http", "https", "mailto"}
_HEADING = re.compile(r"<h([1-6])\b")
_HEADING_TAG = re.compile(r"<(/?)h([1-6])\b")


def render_notes(text: str | None) -> Markup:
    """Markdown to sanitised HTML ('' for no text). Headings start at h3 so page outlines stay in order."""
    if not text:
        return Markup("")
    html = markdown.markdown(text, extensions=["tables"], output_format="html")
    # Entry headings sit below the page's h1 and section h2s: the highest level
    # used becomes h3 and the others keep their distance from it (up to h6).
    levels = sorted({int(m) for m in _HEADING.findall(html)})
    if levels:
        shift = 3 - levels[0]
        html = _HEADING_TAG.sub(lambda m: f"<{m[1]}h{min(int(m[2]) + shift, 6)}", html)
    clean = nh3.clean(
        html,
        tags=_TAGS,
        clean_content_tags={"script", "style"},
        attributes=_ATTRIBUTES,
        url_schemes=_SCHEMES,
        link_rel="nofollow noopener noreferrer",
        strip_comments=True,
    )
    return Markup(clean)  # noqa: S704 - sanitised just above
