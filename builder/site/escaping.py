"""Text made safe for HTML where it is put into markup built in Python (and by the templates).

:func:`escape_output` gives exactly the text ``markupsafe.escape`` gives, as a plain ``str``, and returns
text with no character to escape as it is: the templates write every value through it
(builder.site.templating), and the pages that build list items in Python escape with it too.
"""

from __future__ import annotations

from markupsafe import escape

__all__ = ["escape_output"]


def escape_output(value: object) -> str:
    """``str(markupsafe.escape(value))``, without making a ``Markup`` when the text needs no change.

    Markup (anything with ``__html__``) is written as it is; other text is escaped; anything else is
    first made text with ``str``, as markupsafe does (a ``StrictUndefined`` raises there)."""
    if value.__class__ is str:
        text = value
    else:
        html = getattr(value, "__html__", None)
        if html is not None:
            markup: str = html()  # the Markup itself: not copied
            return markup
        text = str(value)
    # The characters markupsafe.escape replaces, looked for one by one (faster in C than a pattern).
    if "&" in text or "<" in text or ">" in text or '"' in text or "'" in text:
        return str(escape(text))
    return text
