"""Entry text to safe HTML: Markdown rendered, then sanitised.

Entries arrive from outside contributors, so their notes are untrusted:
raw HTML in them is reduced to a small set of harmless tags, scripts and
styles are dropped with their content, event-handler attributes vanish,
and links may only be http, https, mailto or relative (ammonia's cleaner,
through nh3).
"""

from __future__ import annotations

import markdown
import nh3
from markupsafe import Markup

__all__ = ["render_notes"]

_TAGS = {
    "a", "abbr", "b", "blockquote", "br", "code", "em", "i", "li", "ol", "p", "pre", "strong", "sub", "sup",
    "ul", "h3", "h4", "table", "thead", "tbody", "tr", "th", "td", "hr",
}  # fmt: skip
_ATTRIBUTES = {"a": {"href", "title"}, "abbr": {"title"}, "th": {"scope"}}
_SCHEMES = {"http", "https", "mailto"}


def render_notes(text: str | None) -> Markup:
    """Markdown to sanitised HTML ('' for no text). Headings start at h3 so page outlines stay in order."""
    if not text:
        return Markup("")
    html = markdown.markdown(text, extensions=["tables"], output_format="html")
    # Entry headings sit below the page's h1 and section h2s.
    for level in (6, 5, 4, 3, 2, 1):
        html = html.replace(f"<h{level}>", f"<h{min(level + 2, 4)}>").replace(
            f"</h{level}>", f"</h{min(level + 2, 4)}>"
        )
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
