"""The HTML pages' one look: a jinja2 environment over ``templates/`` (one base template, one stylesheet).

Every page (the correction report, the compare page, the site index) extends ``base.html.j2`` and shares
``style.css``, inlined so that each page is one self-contained file. Autoescaping is on for every template,
and every value placed in a page passes through :func:`html.escape` (``finalize``): text from files (file
names, comments, line descriptions, band and antenna names, warnings) can never become markup. Markup is
written only in the templates; Python code hands them numbers and plain text.

jinja2 is imported when the first page is rendered, not when this module is imported.
"""
from __future__ import annotations

import base64
import functools
import html
import math
import os
from urllib.parse import quote

from .. import __version__
from .plots import ANALYZER_COLOUR, FEEDPOINT_COLOUR, GRID_COLOUR
from .safety import SAFETY_FOOT, SAFETY_ITEMS

TEMPLATES_DIR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "templates")

LINE_LOSS_COLOUR = "#8b6c3e"  # the "lost in the line" trace of plots.budget_plot
OK_COLOUR = "#2f7d6d"
BAD_COLOUR = "#b3261e"
COLOURS = {"slate": ANALYZER_COLOUR, "copper": FEEDPOINT_COLOUR, "rule": GRID_COLOUR, "lossline": LINE_LOSS_COLOUR,
           "ok": OK_COLOUR, "bad": BAD_COLOUR}
"""The pages' colours: the plots' (slate for the analyzer end, copper for the feedpoint) and pass/fail."""


def _finalize(value):
    """Every value in a page: None as nothing, markup from the templates as is, anything else escaped."""
    from markupsafe import Markup

    if value is None:
        return ""
    if hasattr(value, "__html__"):
        return value
    return Markup(html.escape(str(value), quote=True))


@functools.lru_cache(maxsize=None)
def environment():
    """The one jinja2 environment of the pages (autoescaping on)."""
    import jinja2

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(TEMPLATES_DIR), autoescape=True,
                             finalize=_finalize, trim_blocks=True,
                             lstrip_blocks=True, keep_trailing_newline=True)
    env.globals.update(colours=COLOURS)
    return env


def render_page(template: str, **context) -> str:
    """Render one page template with ``context`` (plus the package version and the safety cautions)."""
    context.setdefault("version", __version__)
    context.setdefault("safety_items", [(h, t) for h, _, t in SAFETY_ITEMS])
    context.setdefault("safety_foot", SAFETY_FOOT)
    return environment().get_template(template).render(**context)


def png_data_uri(data: bytes) -> str:
    """``data:image/png;base64,...`` (RFC 2397) for a PNG held in memory."""
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def file_data_uri(path) -> str | None:
    """A PNG file as a data URI, or None when there is no such file."""
    if not path or not os.path.isfile(path):
        return None
    with open(path, "rb") as fh:
        return png_data_uri(fh.read())


def href(rel_path) -> str:
    """A relative link to a file beside the page (folder separators as ``/``, other characters %-quoted)."""
    return quote(str(rel_path).replace(os.sep, "/"))


def finite(x) -> bool:
    return x is not None and isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def num(x, fmt: str = ".2f", none: str = "n/a") -> str:
    """A number as text, or ``none`` when it is missing or not finite."""
    return none if not finite(x) else format(x, fmt)


__all__ = ["COLOURS", "environment", "file_data_uri", "finite", "href", "num", "png_data_uri", "render_page"]
