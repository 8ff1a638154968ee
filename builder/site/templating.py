"""The Jinja environment every page is rendered with: autoescaping on, undefined names an error.

A cycle page writes about a hundred values (``{{ ... }}``), and 50,000 pages five million: with
MarkupSafe 3, autoescaping each one calls ``markupsafe.escape``, which makes a new ``Markup`` (a
Python ``__new__``) for every value, even for a number or a ``Markup`` that needs nothing done.
That took a third of the time of rendering a page.  The templates here are compiled instead
(through Jinja's documented ``code_generator_class``) to write each value with
:func:`escape_output`, which gives exactly the text ``markupsafe.escape`` gives, as a plain ``str``
(the output of a template is joined into one string, so a value's type is lost anyway), and which
returns text with no character to escape as it is.  Filters, macros and ``{% set %}`` blocks are
compiled by Jinja as before.
"""

from __future__ import annotations

import functools
import hashlib
from collections.abc import MutableMapping
from importlib import resources
from pathlib import Path
from typing import Any, Protocol

import jinja2
from jinja2.bccache import Bucket
from jinja2.compiler import CodeGenerator, Frame
from jinja2.nodes import Expr
from markupsafe import Markup

from builder import __version__
from builder.site.escaping import escape_output
from builder.site.numbers import grouped
from builder.site.pages import NAV

__all__ = ["TemplateStore", "escape_output", "page_environment", "template_dir"]


class _Output(CodeGenerator):
    """Jinja's code generator, with each autoescaped value written by :func:`escape_output`."""

    def _output_child_pre(self, node: Expr, frame: Frame, finalize: Any) -> None:
        if frame.eval_ctx.volatile or not frame.eval_ctx.autoescape:  # not in these templates: Jinja's own
            super()._output_child_pre(node, frame, finalize)
            return
        self.write("environment.escape_output(")
        if finalize.src is not None:
            self.write(finalize.src)


class _Environment(jinja2.Environment):
    code_generator_class = _Output
    escape_output = staticmethod(escape_output)

    def make_globals(self, d: MutableMapping[str, Any] | None) -> MutableMapping[str, Any]:
        """A template's globals, the environment's overlaid with its own, as one plain dict.

        Jinja's own is a ChainMap of the two, which every render copies into the page's context key by
        key in Python (a fifth of the time a small page took to render); a dict is copied in C.  Jinja's
        documentation asks that no global change once a template is loaded: page_environment sets every
        one before it loads any template."""
        return {**self.globals, **(d or {})}


def template_dir() -> Path:
    """The folder holding the templates and static assets (the top-level templates/ folder)."""
    return Path(str(resources.files("builder.templates")))


class TemplateStore(Protocol):
    """Where compiled templates are kept between builds: the verification cache
    (builder.catalogue.cache.VerifyCache), whose rows are signed with the user's key, so that code kept by
    anyone else is never run."""

    @property
    def persistent(self) -> bool: ...

    def worked_out(self, key: bytes) -> Any | None: ...

    def keep_worked_out(self, key: bytes, value: Any) -> None: ...


class _Kept(jinja2.BytecodeCache):
    """Jinja's compiled templates (its bytecode cache, as documented) kept in a TemplateStore, under the
    template's name and source and ``code``: a digest of the code that compiles them (the generator above)."""

    def __init__(self, store: TemplateStore, code: str) -> None:
        self.store = store
        self.code = code

    def _key(self, bucket: Bucket) -> bytes:
        what = f"compiled template\0{self.code}\0{jinja2.__version__}\0{bucket.key}\0{bucket.checksum}"
        return hashlib.sha256(what.encode()).digest()

    def load_bytecode(self, bucket: Bucket) -> None:
        data = self.store.worked_out(self._key(bucket))
        if isinstance(data, bytes):
            bucket.bytecode_from_string(data)  # Jinja checks its own version and Python's, and the source

    def dump_bytecode(self, bucket: Bucket) -> None:
        self.store.keep_worked_out(self._key(bucket), bucket.bytecode_to_string())


def page_environment(kept: TemplateStore | None = None, code: str = "") -> jinja2.Environment:
    """A new environment for the templates in :func:`template_dir`, with the navigation bar rendered
    once for each depth and section (``site_nav``).

    With ``kept`` (a store in use), every template is loaded now, as ``kept`` holds it compiled under
    ``code`` (a digest of the code that compiles templates), or compiled and kept there; the environment
    then no longer reads the store: processes forked from this one inherit the templates, not the store's
    database connection.  Compiling the templates takes a build 0.16 s; loading them, 0.01 s."""
    env = _Environment(
        loader=jinja2.FileSystemLoader(template_dir()),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        auto_reload=False,
    )

    @functools.lru_cache(maxsize=256)
    def site_nav(root: str, section: str) -> Markup:
        # The same for every page at one depth in one section: rendered once, not on each of 50,000 pages.
        return Markup(env.get_template("_nav.html").render(root=root, section=section))

    # Every global before any template is loaded: each template keeps the globals it was loaded with.
    env.globals.update(nav=NAV, version=__version__, site_nav=site_nav)
    env.filters["grouped"] = grouped  # every integer a reader reads: builder.site.numbers
    if kept is not None and kept.persistent:
        env.bytecode_cache = _Kept(kept, code)
        for name in env.list_templates(filter_func=lambda name: name.endswith(".html")):
            env.get_template(name)
        env.bytecode_cache = None
    return env
