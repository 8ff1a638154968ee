"""The page templates' output escaping, against MarkupSafe's own ``escape`` (the reference library Jinja uses).

Pages are rendered with a code generator that writes each ``{{ value }}`` through
builder.site.templating.escape_output instead of ``markupsafe.escape`` (which makes a Markup for
every value).  The rule checked: the text written is exactly ``str(markupsafe.escape(value))``, for
any text, any Markup and any other value, and an undefined name still fails the page.
"""

from __future__ import annotations

import jinja2
import pytest
from hypothesis import given
from hypothesis import strategies as st
from markupsafe import Markup, escape

from builder.site.templating import escape_output, page_environment


@given(st.text())
def test_text_is_escaped_exactly_as_markupsafe_escapes_it(text: str) -> None:
    assert escape_output(text) == str(escape(text))


@given(st.one_of(st.integers(), st.floats(allow_nan=False), st.booleans(), st.none()))
def test_other_values_are_written_as_markupsafe_writes_them(value: object) -> None:
    assert escape_output(value) == str(escape(value))


@given(st.text())
def test_markup_is_written_as_it_is_without_a_copy(text: str) -> None:
    markup = Markup(text)
    assert escape_output(markup) is markup


def test_the_characters_html_gives_a_meaning_are_escaped() -> None:
    # HTML 5, "Escaping a string" (common practice, no source for the quote forms): the five characters.
    assert (
        escape_output("<a href=\"x\" title='y'>&</a>") == "&lt;a href=&#34;x&#34; title=&#39;y&#39;&gt;&amp;&lt;/a&gt;"
    )


def test_a_template_writes_values_through_it_and_markup_unchanged() -> None:
    env = page_environment()
    template = env.from_string("{{ text }}|{{ number }}|{{ markup }}|{{ text|upper }}")
    out = template.render(text="<b>&", number=-17, markup=Markup("<i>x</i>"))
    assert out == "&lt;b&gt;&amp;|-17|<i>x</i>|&lt;B&gt;&amp;"
    code = env.compile("{{ text }}", raw=True)
    assert "environment.escape_output(" in code and "escape(" not in code.replace("escape_output(", "")


def test_an_undefined_name_still_fails_the_page() -> None:
    with pytest.raises(jinja2.UndefinedError):
        page_environment().from_string("{{ missing }}").render()
