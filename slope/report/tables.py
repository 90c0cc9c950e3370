"""Tables of results: number formatting, CSV files and HTML tables.

Input shapes
------------
table dict
    ``{"caption": str, "columns": [str, ...], "rows": [[value, ...], ...]}``;
    every row has one value per column. Values are numbers, strings,
    booleans or ``None`` (shown as an em dash, written empty in CSV).
summary row
    ``(quantity, value, unit)`` or ``(quantity, value, unit, note)``, or the
    dict ``{"quantity", "value", "unit", "note"}``.
"""
from __future__ import annotations

import csv
import io
import math
import numbers
import os
from collections.abc import Mapping, Sequence

import numpy as np

from ..errors import InputError
from ..files import atomic_write_text

__all__ = ["format_value", "normalise_table", "normalise_summary", "table_to_html", "write_csv", "summary_table"]


def format_value(value, digits: int = 4) -> str:
    """A value as short, readable text.

    Floats get ``digits`` significant figures (general format, so 0.000123
    stays readable as 0.000123 and 1.2e-07 switches to exponent form);
    integers and booleans print as they are; ``inf`` prints as "∞";
    ``None`` and NaN print as "—".

    Parameters
    ----------
    value : object
    digits : int
        Significant figures for floats.

    Returns
    -------
    str
    """
    if value is None:
        return "—"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, numbers.Integral):
        return str(int(value))
    if isinstance(value, numbers.Real):
        v = float(value)
        if math.isnan(v):
            return "—"
        if math.isinf(v):
            return "∞" if v > 0 else "−∞"
        return f"{v:.{digits}g}"
    return str(value)


def normalise_table(table: Mapping) -> dict:
    """Check a table dict and return it with lists of rows.

    Raises
    ------
    InputError
        When columns are missing or a row has the wrong number of values.
    """
    if not isinstance(table, Mapping) or "columns" not in table or "rows" not in table:
        raise InputError("table: expected a dict with 'columns' (list of headings) and 'rows' (list of lists).")
    cols = [str(c) for c in table["columns"]]
    if not cols:
        raise InputError("table 'columns': give at least one heading.")
    rows = []
    for i, row in enumerate(table["rows"]):
        row = list(row)
        if len(row) != len(cols):
            raise InputError(f"table {table.get('caption', '')!r} row {i + 1}: {len(row)} values for {len(cols)} columns.")
        rows.append(row)
    return {"caption": str(table.get("caption", "")), "columns": cols, "rows": rows}


def normalise_summary(summary_rows: Sequence) -> list[dict]:
    """Summary rows as dicts ``{quantity, value, unit, note}``.

    Parameters
    ----------
    summary_rows : sequence
        Tuples ``(quantity, value, unit[, note])`` or dicts.
    """
    out = []
    for i, row in enumerate(summary_rows):
        if isinstance(row, Mapping):
            if "quantity" not in row or "value" not in row:
                raise InputError(f"summary row {i + 1}: a dict needs 'quantity' and 'value' (and optionally 'unit', 'note').")
            out.append({"quantity": str(row["quantity"]), "value": row["value"], "unit": str(row.get("unit", "") or ""),
                        "note": str(row.get("note", "") or "")})
            continue
        row = tuple(row)
        if len(row) not in (3, 4):
            raise InputError(f"summary row {i + 1}: expected (quantity, value, unit) or (quantity, value, unit, note), "
                             f"got {len(row)} items.")
        out.append({"quantity": str(row[0]), "value": row[1], "unit": str(row[2] or ""),
                    "note": str(row[3]) if len(row) == 4 and row[3] else ""})
    return out


def summary_table(summary_rows: Sequence, caption: str = "Summary") -> dict:
    """Summary rows as a table dict with columns quantity, value, unit, note."""
    rows = normalise_summary(summary_rows)
    return {"caption": caption, "columns": ["quantity", "value", "unit", "note"],
            "rows": [[r["quantity"], r["value"], r["unit"], r["note"]] for r in rows]}


def _is_number(v) -> bool:
    return isinstance(v, numbers.Real) and not isinstance(v, (bool, np.bool_))


def table_to_html(table: Mapping, *, digits: int = 4, table_id: str | None = None, number: int | None = None) -> str:
    """An HTML ``<table>`` with every cell escaped; numeric cells right-aligned.

    Parameters
    ----------
    table : dict
        ``{"caption", "columns", "rows"}``.
    digits : int
        Significant figures for floats.
    table_id : str, optional
        ``id`` attribute of the table.
    number : int, optional
        Table number, prefixed to the caption ("Table 2. ...").

    Returns
    -------
    str
    """
    from .templating import environment

    t = normalise_table(table)
    cap = t["caption"]
    if number is not None:
        cap = f"Table {number}. {cap}".strip()
    rows = [[(format_value(v, digits), _is_number(v)) for v in row] for row in t["rows"]]
    macro = environment().get_template("_table.html").module.table
    return str(macro({"id": table_id, "caption": cap, "columns": t["columns"], "rows": rows}))


def _float_text(f: float) -> str:
    # repr keeps every digit: CSV files are for further computation.
    return repr(f) if f - f == 0.0 else ("nan" if f != f else ("inf" if f > 0 else "-inf"))


def _csv_value(v):
    # the common exact types first: the ABC checks below cost more than the formatting (a
    # 16,000-realisation fs_realisations.csv is 256,000 values, written after the workers end)
    t = type(v)
    if t is float or t is np.float64:
        return _float_text(float(v))
    if t is str:
        return v
    if t is int or t is np.int64:
        return str(int(v))
    if v is None:
        return ""
    if isinstance(v, (bool, np.bool_)):
        return "true" if v else "false"
    if isinstance(v, numbers.Integral):
        return str(int(v))
    if isinstance(v, numbers.Real):
        return _float_text(float(v))
    return str(v)


def write_csv(path: str | os.PathLike, columns: Sequence[str], rows: Sequence[Sequence]) -> os.PathLike:
    """Write a CSV file atomically (temporary file, then rename).

    Floats are written at full precision (``repr``), ``None`` as an empty
    field, booleans as ``true``/``false``.

    Parameters
    ----------
    path : path-like
        Destination; the folder must exist.
    columns : sequence of str
        Header row (put units in the headings, e.g. ``"FS (-)"``).
    rows : sequence of sequences
        One value per column.

    Returns
    -------
    pathlib.Path
    """
    t = normalise_table({"columns": columns, "rows": rows})
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(t["columns"])
    for row in t["rows"]:
        w.writerow([_csv_value(v) for v in row])
    return atomic_write_text(path, buf.getvalue())
