"""The one jinja2 environment of the report pages, with the one stylesheet and the print stylesheet.

Every HTML page slipfield writes (the run report, the generic report of
:func:`slope.report.html.render_report`, an HTML table) is a template in
``templates/``. Autoescaping is on, so text from a case file (titles, notes,
zone names) can never become markup; markup made here (an inline SVG, a
rendered table) is passed as :class:`markupsafe.Markup`.
"""
from __future__ import annotations

import functools
from pathlib import Path

import jinja2

__all__ = ["TEMPLATES", "environment", "render_page", "stylesheets"]

TEMPLATES = Path(__file__).resolve().parent / "templates"


@functools.lru_cache(maxsize=1)
def environment() -> jinja2.Environment:
    """The shared environment: autoescape, undefined names are errors, ``num`` formats a value."""
    from .tables import format_value

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)), autoescape=True,
                             undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters["num"] = format_value
    return env


def stylesheets() -> dict:
    """``{"css": screen stylesheet, "print_css": print stylesheet}``, inlined so a page stays one file."""
    return {"css": (TEMPLATES / "report.css").read_text(encoding="utf-8"),
            "print_css": (TEMPLATES / "print.css").read_text(encoding="utf-8")}


def render_page(name: str, **context) -> str:
    """Template ``name`` rendered with both stylesheets and ``context``."""
    return environment().get_template(name).render(**stylesheets(), **context)
