"""The self-contained HTML report and figure files.

``report.html`` carries everything inside itself: figures are embedded as
base64 PNG (default) or inline SVG; the page is the jinja2 template
``templates/report.html`` with the report's one stylesheet and its print
stylesheet inlined (:mod:`slope.report.templating`, shared with the run
report). There is no script and no external link, so the page opens the same
from a USB stick, an e-mail attachment or an archive.

Input shapes
------------
section dict
    ``{"heading": str, "text": str (paragraphs separated by blank lines),
    "figures": [Figure | figure dict], "tables": [table dict]}``.
figure dict
    ``{"figure": matplotlib Figure | path to a .png or .svg file,
    "caption": str, "alt": str}``.
table dict
    ``{"caption", "columns", "rows"}`` (see :mod:`slope.report.tables`).
summary rows
    see :func:`slope.report.tables.normalise_summary`.

All files are written through a temporary file and a rename, so a reader
never sees a half-written report or figure.
"""
from __future__ import annotations

import base64
import datetime as _dt
import io
import os
import re
from collections.abc import Mapping, Sequence
from pathlib import Path

from typing import TYPE_CHECKING

from markupsafe import Markup

from ..errors import InputError
from ..files import atomic_write_bytes, atomic_write_text
from .tables import summary_table, table_to_html
from .templating import render_page

from ..caution import CAUTION

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["CAUTION", "save_figure", "figure_png_bytes", "figure_svg_text", "write_report", "render_report"]


# --------------------------------------------------------------------------- figures
def _is_figure(obj) -> bool:
    """Whether ``obj`` is a matplotlib Figure (matplotlib is imported only when a figure may be about)."""
    import sys

    if "matplotlib.figure" not in sys.modules:
        return False  # no Figure can exist in a process that never imported matplotlib's figures
    from matplotlib.figure import Figure

    return isinstance(obj, Figure)


def _check_figure(fig, where: str) -> Figure:
    if not _is_figure(fig):
        raise InputError(f"{where}: expected a matplotlib Figure, got {type(fig).__name__}.")
    return fig


def figure_png_bytes(fig: Figure, dpi: int = 150) -> bytes:
    """The figure as PNG bytes (tight bounding box).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    dpi : int
        Resolution, dots per inch.
    """
    buf = io.BytesIO()
    _check_figure(fig, "figure").savefig(buf, format="png", dpi=dpi, bbox_inches="tight", facecolor="white")
    return buf.getvalue()


def figure_svg_text(fig: Figure) -> str:
    """The figure as SVG text (tight bounding box), XML prolog included."""
    from .style import report_style

    buf = io.StringIO()
    # The style's SVG settings (text kept as text, fixed id salt) are read when the file is written, and no
    # date goes in the metadata: the same figure gives the same file, whichever process writes it.
    with report_style():
        _check_figure(fig, "figure").savefig(buf, format="svg", bbox_inches="tight", facecolor="white",
                                             metadata={"Date": None})
    return buf.getvalue()


def save_figure(fig: Figure, directory: str | os.PathLike, stem: str, *, formats: Sequence[str] = ("png", "svg"),
                dpi: int = 150) -> dict[str, Path]:
    """Write a figure as PNG and SVG files, each atomically.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    directory : path-like
        Output folder (created if missing).
    stem : str
        File name without extension, e.g. ``"fs_distribution"``; letters,
        digits, ``-``, ``_`` and ``.`` only.
    formats : sequence of str
        Any of ``"png"``, ``"svg"``.
    dpi : int
        PNG resolution.

    Returns
    -------
    dict
        Format → path written.
    """
    if not re.fullmatch(r"[A-Za-z0-9._-]+", stem or "") or stem.startswith("."):
        raise InputError(f"stem: {stem!r} is not a plain file name; use letters, digits, '-', '_' or '.'.")
    bad = set(formats) - {"png", "svg"}
    if bad or not formats:
        raise InputError(f"formats: {sorted(bad) or formats!r} not supported; choose from 'png', 'svg'.")
    d = Path(directory)
    d.mkdir(parents=True, exist_ok=True)
    out = {}
    for fmt in formats:
        data = figure_png_bytes(fig, dpi) if fmt == "png" else figure_svg_text(fig).encode("utf-8")
        out[fmt] = atomic_write_bytes(d / f"{stem}.{fmt}", data)
    return out


_SVG_START = re.compile(r"<svg\b", re.IGNORECASE)


def _inline_svg(svg_text: str, where: str) -> str:
    m = _SVG_START.search(svg_text)
    if not m:
        raise InputError(f"{where}: the SVG text has no <svg> element.")
    # Drop the XML prolog and DOCTYPE, which are not allowed inside HTML.
    body = svg_text[m.start():]
    if re.search(r"<script\b", body, re.IGNORECASE):
        raise InputError(f"{where}: SVG files with scripts are not embedded; export the figure without scripts.")
    return body


def _figure_item(item, number: int, embed: str, dpi: int, where: str) -> dict:
    """A figure of the generic report as the template's dict: number, caption, alt and ``src`` or ``svg``."""
    caption, alt = "", ""
    if isinstance(item, Mapping):
        if "figure" not in item:
            raise InputError(f"{where}: a figure dict needs 'figure' (a matplotlib Figure or a .png/.svg path).")
        caption = str(item.get("caption", "") or "")
        alt = str(item.get("alt", "") or "")
        fig = item["figure"]
    else:
        fig = item
    out = {"number": number, "caption": caption, "alt": alt or caption or f"Figure {number}", "src": None,
           "svg": None}
    if _is_figure(fig):
        if embed == "svg":
            out["svg"] = Markup(_inline_svg(figure_svg_text(fig), where))
        else:
            out["src"] = "data:image/png;base64," + base64.b64encode(figure_png_bytes(fig, dpi)).decode("ascii")
    elif isinstance(fig, (str, os.PathLike)):
        p = Path(fig)
        if not p.is_file():
            raise InputError(f"{where}: figure file {str(p)!r} does not exist; save the figure first.")
        ext = p.suffix.lower()
        if ext == ".png":
            out["src"] = "data:image/png;base64," + base64.b64encode(p.read_bytes()).decode("ascii")
        elif ext == ".svg":
            out["svg"] = Markup(_inline_svg(p.read_text(encoding="utf-8"), where))
        else:
            raise InputError(f"{where}: figure file {p.name!r} is neither .png nor .svg.")
    else:
        raise InputError(f"{where}: expected a matplotlib Figure, a figure dict or a .png/.svg path, "
                         f"got {type(fig).__name__}.")
    return out


def _paragraphs(text: str) -> list[str]:
    """Paragraphs separated by blank lines, each with its line breaks joined."""
    return [" ".join(p.split()) for p in re.split(r"\n\s*\n", text or "") if p.strip()]


def _slug(text: str, used: set) -> str:
    base = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-") or "section"
    slug, i = base, 2
    while slug in used:
        slug, i = f"{base}-{i}", i + 1
    used.add(slug)
    return slug


# --------------------------------------------------------------------------- report
def render_report(
    title: str,
    summary_rows: Sequence,
    sections: Sequence[Mapping] = (),
    *,
    caution: str = CAUTION,
    meta: Mapping[str, object] | None = None,
    embed: str = "png",
    dpi: int = 110,
) -> str:
    """The report page as an HTML string (see :func:`write_report`)."""
    if not isinstance(title, str) or not title.strip():
        raise InputError("title: give the report a non-empty title (e.g. the case name).")
    if embed not in ("png", "svg"):
        raise InputError(f"embed: {embed!r} is not 'png' or 'svg'.")
    if not caution or not str(caution).strip():
        raise InputError("caution: the report must carry a caution; leave the default or write your own.")
    summary = summary_table(summary_rows, caption="Summary of results")
    if not summary["rows"]:
        raise InputError("summary_rows: give at least one row (quantity, value, unit) for the summary table.")

    used: set = {"summary"}
    fig_no = 0
    table_no = 1  # the summary is table 1
    out_sections = []
    for s, sec in enumerate(sections):
        where = f"sections[{s}]"
        if not isinstance(sec, Mapping) or not sec.get("heading"):
            raise InputError(f"{where}: each section is a dict with a 'heading' (and 'text', 'figures', 'tables').")
        heading = str(sec["heading"])
        figures, tables = [], []
        for f, item in enumerate(sec.get("figures", ()) or ()):
            fig_no += 1
            figures.append(_figure_item(item, fig_no, embed, dpi, f"{where}.figures[{f}]"))
        for t, tab in enumerate(sec.get("tables", ()) or ()):
            table_no += 1
            try:
                tables.append(Markup(table_to_html(tab, number=table_no, table_id=f"table-{table_no}")))
            except InputError as exc:
                raise InputError(f"{where}.tables[{t}]: {exc}") from None
        out_sections.append({"heading": heading, "slug": _slug(heading, used),
                             "paragraphs": _paragraphs(str(sec.get("text", "") or "")), "figures": figures,
                             "tables": tables})

    meta_items = dict(meta or {})
    meta_items.setdefault("written", _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))
    return render_page("report.html", title=title, caution=str(caution), meta=list(meta_items.items()),
                       summary=Markup(table_to_html(summary, number=1, table_id="summary-table")),
                       sections=out_sections)


def write_report(
    path: str | os.PathLike,
    title: str,
    summary_rows: Sequence,
    sections: Sequence[Mapping] = (),
    *,
    caution: str = CAUTION,
    meta: Mapping[str, object] | None = None,
    embed: str = "png",
    dpi: int = 110,
) -> Path:
    """Write a self-contained HTML report, atomically.

    Parameters
    ----------
    path : path-like
        Output file, usually ``DIR/report.html``; its folder is created.
    title : str
        Page title (e.g. the case name).
    summary_rows : sequence
        Rows of the summary table: ``(quantity, value, unit[, note])`` or
        dicts; shown first, as Table 1.
    sections : sequence of dict
        ``{"heading", "text", "figures", "tables"}``; figures and tables are
        numbered through the whole report.
    caution : str
        Caution shown at the top and in the footer (default :data:`CAUTION`;
        it cannot be empty).
    meta : mapping, optional
        Extra facts for the line under the title (case file, seed, version).
    embed : {"png", "svg"}
        How matplotlib figures are embedded: base64 PNG (default; compact for
        dense images such as fields) or inline SVG (sharp at any zoom).
    dpi : int
        Resolution of embedded PNGs.

    Returns
    -------
    pathlib.Path
        The path written.
    """
    text = render_report(title, summary_rows, sections, caution=caution, meta=meta, embed=embed, dpi=dpi)
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    return atomic_write_text(p, text)
