"""The self-contained HTML report and figure files.

``report.html`` carries everything inside itself: figures are embedded as
base64 PNG (default) or inline SVG, the style sheet is a short one of our own
in a ``<style>`` element, and there is no script and no external link, so the
page opens the same from a USB stick, an e-mail attachment or an archive.

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
import html
import io
import os
import re
from collections.abc import Mapping, Sequence
from pathlib import Path

from matplotlib.figure import Figure

from ..errors import InputError
from ..files import atomic_write_bytes, atomic_write_text
from .tables import summary_table, table_to_html

from ..caution import CAUTION

__all__ = ["CAUTION", "save_figure", "figure_png_bytes", "figure_svg_text", "write_report", "render_report"]


_CSS = """
:root { --ink: #1d1d1d; --muted: #5b5b5b; --rule: #d0d0d0; --accent: #0072B2; --warn: #D55E00; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: var(--ink); margin: 0 auto; max-width: 60rem; padding: 1.5rem 1.25rem 3rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin: 0 0 0.25rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 0.5rem; border-bottom: 1px solid var(--rule); padding-bottom: 0.2rem; }
.meta { color: var(--muted); font-size: 0.85rem; margin: 0 0 1rem; }
.caution { border-left: 4px solid var(--warn); background: #fdf3ec; padding: 0.6rem 0.9rem; margin: 1rem 0 1.5rem;
           font-size: 0.92rem; }
table { border-collapse: collapse; margin: 0.75rem 0 1.25rem; font-size: 0.9rem; width: auto; }
caption { text-align: left; font-weight: 600; padding-bottom: 0.3rem; }
th, td { border-bottom: 1px solid var(--rule); padding: 0.25rem 0.7rem; text-align: left; vertical-align: top; }
thead th { border-bottom: 2px solid var(--ink); }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
figure { margin: 1rem 0 1.5rem; }
figure img, figure svg { max-width: 100%; height: auto; display: block; }
figcaption { color: var(--muted); font-size: 0.88rem; margin-top: 0.3rem; }
nav ol { padding-left: 1.2rem; margin: 0.3rem 0; }
nav a { color: var(--accent); text-decoration: none; }
footer { color: var(--muted); font-size: 0.8rem; margin-top: 3rem; border-top: 1px solid var(--rule); padding-top: 0.5rem; }
@media print { body { max-width: none; } h2 { break-after: avoid; } figure, table { break-inside: avoid; } }
"""


# --------------------------------------------------------------------------- figures
def _check_figure(fig, where: str) -> Figure:
    if not isinstance(fig, Figure):
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
    buf = io.StringIO()
    _check_figure(fig, "figure").savefig(buf, format="svg", bbox_inches="tight", facecolor="white")
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


def _figure_html(item, number: int, embed: str, dpi: int, where: str) -> str:
    caption, alt = "", ""
    if isinstance(item, Mapping):
        if "figure" not in item:
            raise InputError(f"{where}: a figure dict needs 'figure' (a matplotlib Figure or a .png/.svg path).")
        caption = str(item.get("caption", "") or "")
        alt = str(item.get("alt", "") or "")
        fig = item["figure"]
    else:
        fig = item
    alt = alt or caption or f"Figure {number}"
    if isinstance(fig, Figure):
        if embed == "svg":
            body = _inline_svg(figure_svg_text(fig), where)
            media = f'<div role="img" aria-label="{html.escape(alt, quote=True)}">{body}</div>'
        else:
            b64 = base64.b64encode(figure_png_bytes(fig, dpi)).decode("ascii")
            media = f'<img alt="{html.escape(alt, quote=True)}" src="data:image/png;base64,{b64}">'
    elif isinstance(fig, (str, os.PathLike)):
        p = Path(fig)
        if not p.is_file():
            raise InputError(f"{where}: figure file {str(p)!r} does not exist; save the figure first.")
        ext = p.suffix.lower()
        if ext == ".png":
            b64 = base64.b64encode(p.read_bytes()).decode("ascii")
            media = f'<img alt="{html.escape(alt, quote=True)}" src="data:image/png;base64,{b64}">'
        elif ext == ".svg":
            body = _inline_svg(p.read_text(encoding="utf-8"), where)
            media = f'<div role="img" aria-label="{html.escape(alt, quote=True)}">{body}</div>'
        else:
            raise InputError(f"{where}: figure file {p.name!r} is neither .png nor .svg.")
    else:
        raise InputError(f"{where}: expected a matplotlib Figure, a figure dict or a .png/.svg path, "
                         f"got {type(fig).__name__}.")
    cap = f"Figure {number}." + (f" {html.escape(caption)}" if caption else "")
    return f'<figure id="figure-{number}">\n{media}\n<figcaption>{cap}</figcaption>\n</figure>'


def _paragraphs(text: str) -> str:
    paras = [p.strip() for p in re.split(r"\n\s*\n", text or "") if p.strip()]
    return "\n".join(f"<p>{html.escape(' '.join(p.split()))}</p>" for p in paras)


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
    body, toc = [], ['<li><a href="#summary">Summary of results</a></li>']
    for s, sec in enumerate(sections):
        where = f"sections[{s}]"
        if not isinstance(sec, Mapping) or not sec.get("heading"):
            raise InputError(f"{where}: each section is a dict with a 'heading' (and 'text', 'figures', 'tables').")
        heading = str(sec["heading"])
        slug = _slug(heading, used)
        toc.append(f'<li><a href="#{slug}">{html.escape(heading)}</a></li>')
        parts = [f'<section id="{slug}">', f"<h2>{html.escape(heading)}</h2>", _paragraphs(str(sec.get("text", "") or ""))]
        for f, item in enumerate(sec.get("figures", ()) or ()):
            fig_no += 1
            parts.append(_figure_html(item, fig_no, embed, dpi, f"{where}.figures[{f}]"))
        for t, tab in enumerate(sec.get("tables", ()) or ()):
            table_no += 1
            try:
                parts.append(table_to_html(tab, number=table_no, table_id=f"table-{table_no}"))
            except InputError as exc:
                raise InputError(f"{where}.tables[{t}]: {exc}") from None
        parts.append("</section>")
        body.append("\n".join(p for p in parts if p))

    meta_items = dict(meta or {})
    meta_items.setdefault("written", _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))
    meta_html = " · ".join(f"{html.escape(str(k))}: {html.escape(str(v))}" for k, v in meta_items.items())

    return "\n".join([
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{html.escape(title)}</title>",
        f"<style>{_CSS}</style>",
        "</head>",
        "<body>",
        "<header>",
        f"<h1>{html.escape(title)}</h1>",
        f'<p class="meta">{meta_html}</p>',
        f'<div class="caution" role="note"><strong>Caution.</strong> {html.escape(str(caution))}</div>',
        f"<nav><strong>Contents</strong><ol>{''.join(toc)}</ol></nav>",
        "</header>",
        "<main>",
        '<section id="summary">',
        "<h2>Summary of results</h2>",
        table_to_html(summary, number=1, table_id="summary-table"),
        "</section>",
        *body,
        "</main>",
        f"<footer>Written by slipfield. {html.escape(str(caution))}</footer>",
        "</body>",
        "</html>",
        "",
    ])


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
