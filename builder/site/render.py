"""Stage 4: write the site's files from the pages and typed records into a directory.

Templates are Jinja with autoescaping on for every template; the only
pre-made markup they receive is sanitised notes, the JSON-LD script, and
MathML and SVG built by Periplus from numbers, each returned as Markup by
the module that escapes it.  Every output path is checked to stay inside the
output directory, whatever the ids (they are validated long before, this is
a second line of defence).
"""

from __future__ import annotations

import shutil
from dataclasses import replace
from importlib import resources
from pathlib import Path

import jinja2

from builder import __version__
from builder.site.exports import atom_feed, catalogue_json, cycles_csv, map_json, search_files, sitemap_xml
from builder.site.metadata import citation_cff, robots_txt
from builder.site.pages import NAV
from builder.site.views import SiteViews

__all__ = ["MARKER", "render_site", "template_dir"]

#: Written at the top of every built site, so a later build knows the folder is its own to replace.
MARKER = ".periplus-site"


def template_dir() -> Path:
    """The folder holding the templates and static assets (the top-level templates/ folder)."""
    return Path(str(resources.files("builder.templates")))


def _environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(template_dir()),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.globals.update(nav=NAV, version=__version__)
    return env


def _write(out: Path, relative: str, text: str) -> None:
    target = (out / relative).resolve()
    if not target.is_relative_to(out.resolve()):
        raise AssertionError(f"refusing to write outside the site: {relative!r}")
    target.parent.mkdir(parents=True, exist_ok=True)
    target.write_text(text, encoding="utf-8", newline="\n")


def render_site(views: SiteViews, out: Path) -> list[str]:
    """Write every page, export and asset into ``out`` (an empty folder); return the pages written."""
    env = _environment()
    pages = []
    for page in views.pages:
        template = env.get_template(page.template)
        html = template.render(page=page, root=page.root, about=views.record, edition=views.edition, **page.context)
        _write(out, page.path, html)
        pages.append(page.path)
    _write(out, "data/catalogue.json", catalogue_json(views))
    _write(out, "data/cycles.csv", cycles_csv(views))
    for map_id, record in views.maps.items():
        _write(out, f"data/maps/{map_id}.json", map_json(record))
    for rel, text in search_files(views):
        _write(out, rel, text)
    _write(out, "feed.xml", atom_feed(views))
    _write(out, "sitemap.xml", sitemap_xml([p for p in pages if p != "404.html"], views.base_url))
    about = replace(views.record, base_url=views.base_url)
    _write(
        out,
        "CITATION.cff",
        citation_cff(about, release=about.version, released_on=views.edition.released_on, commit=views.edition.commit),
    )
    _write(out, "robots.txt", robots_txt(views.base_url))
    static = template_dir() / "static"
    for asset in sorted(static.iterdir()):
        if asset.is_file() and not asset.name.startswith("."):
            (out / "static").mkdir(exist_ok=True)
            shutil.copyfile(asset, out / "static" / asset.name)
    _write(out, MARKER, f"This folder was written by periplus {__version__}; periplus build replaces it whole.\n")
    return pages
