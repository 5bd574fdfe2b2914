"""A :class:`~rcsim.report.model.Report` to one self-contained HTML page (Jinja2, autoescape on).

The page has its style sheet inline and its figures as inline SVG; it makes no request. Text
from the scenario is escaped by the template engine; only the figures' SVG, which rcsim drew and
:func:`rcsim.report.figures.inline_svg` cleaned, is inserted as markup.
"""

from __future__ import annotations

import os
from functools import lru_cache

from ..errors import InputError

__all__ = ["render_html", "write_report", "check_report_path"]


@lru_cache(maxsize=1)
def _environment():
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("rcsim.report", "templates"),
        autoescape=True,                       # every template, whatever its name
        undefined=jinja2.StrictUndefined,
        trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters["svg"] = lambda text: jinja2.utils.markupsafe.Markup(text)
    return env


def render_html(report) -> str:
    """The page of ``report`` as HTML text."""
    template = _environment().get_template("report.html.j2")
    return template.render(report=report)


def check_report_path(path, where: str = "") -> str:
    """Refuse a report path that does not end with .html (or .htm), whose folder is missing, or
    that is a folder: before any work, so a long run is not lost at its end. ``where`` names the
    option or argument in the message (default: the path)."""
    path = os.fspath(path)
    if os.path.splitext(path)[1].lower() not in (".html", ".htm"):
        raise InputError(f"a report file name should end with .html, not {path!r}",
                         where or path, "give a name such as report.html")
    from ..atomic import check_writable

    check_writable(path, where or path)   # folder there, a folder, writable; not a folder
    return path


def write_report(report, path) -> str:
    """Write the page of ``report`` (or HTML text) to ``path`` (.html or .htm), atomically."""
    from ..atomic import atomic_path

    path = check_report_path(path)
    html = report if isinstance(report, str) else render_html(report)
    with atomic_path(path, ".html.tmp") as tmp:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(html)
    return path
