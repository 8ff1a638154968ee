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


class _Store:
    """A TemplateStore in memory (the build uses the verification cache, whose rows are signed)."""

    persistent = True

    def __init__(self) -> None:
        self.kept: dict[bytes, object] = {}

    def worked_out(self, key: bytes) -> object | None:
        return self.kept.get(key)

    def keep_worked_out(self, key: bytes, value: object) -> None:
        self.kept[key] = value


def _compiled(monkeypatch: pytest.MonkeyPatch) -> list[str | None]:
    """The names of the templates Jinja compiles from here on."""
    names: list[str | None] = []
    real = jinja2.Environment.compile

    def counting(self: jinja2.Environment, source: str, name: str | None = None, *args: object, **kw: object) -> object:
        names.append(name)
        return real(self, source, name, *args, **kw)  # type: ignore[arg-type]

    monkeypatch.setattr(jinja2.Environment, "compile", counting)
    return names


def test_templates_are_compiled_once_kept_and_loaded_by_the_next_build(monkeypatch: pytest.MonkeyPatch) -> None:
    # Jinja's bytecode cache, as its documentation defines it (jinja2.BytecodeCache): a template kept compiled
    # is loaded, not compiled, and works as the one compiled from its source.
    store = _Store()
    compiled = _compiled(monkeypatch)
    first = page_environment(store, "code 1")
    names = first.list_templates(filter_func=lambda name: name.endswith(".html"))
    assert sorted(compiled) == sorted(names) and len(store.kept) == len(names)
    assert first.bytecode_cache is None  # detached: forked workers never read the store
    compiled.clear()
    again = page_environment(store, "code 1")
    assert compiled == [] and again.bytecode_cache is None
    plain = page_environment()
    nav = {"root": "../", "section": "maps"}
    assert again.get_template("_nav.html").render(**nav) == plain.get_template("_nav.html").render(**nav)
    # Other code compiling them (a changed generator) compiles them again, under another key.
    compiled.clear()
    page_environment(store, "code 2")
    assert sorted(compiled) == sorted(names) and len(store.kept) == 2 * len(names)


def test_kept_bytes_that_are_not_a_compiled_template_are_compiled_again(monkeypatch: pytest.MonkeyPatch) -> None:
    store = _Store()
    page_environment(store, "code")
    for key in store.kept:
        store.kept[key] = b"not a compiled template"
    compiled = _compiled(monkeypatch)
    env = page_environment(store, "code")
    assert len(compiled) == len(store.kept)
    nav = {"root": "../", "section": "maps"}
    assert env.get_template("_nav.html").render(**nav) == page_environment().get_template("_nav.html").render(**nav)


def test_a_store_not_in_use_compiles_templates_as_they_are_used(monkeypatch: pytest.MonkeyPatch) -> None:
    store = _Store()
    store.persistent = False  # type: ignore[misc]
    compiled = _compiled(monkeypatch)
    env = page_environment(store, "code")
    assert compiled == [] and store.kept == {}
    env.globals["site_nav"]("../", "maps")  # the navigation bar, rendered once for a depth and section
    assert compiled == ["_nav.html"] and store.kept == {}
