"""The case file: a TOML schema of slipfield's own, read and checked.

A case file describes one cross-section and everything asked of it. Reading
it never stops at the first problem: :func:`read_case` collects every problem
(unknown keys, wrong types, values out of range, references to undefined
materials) and raises one :class:`CaseError` listing them all, each with the
file, the line where it could be located, the key path (``random[2].theta_h``)
and what to do about it.

The annotated example in the README documents every key; the tables below are
the single source of truth for which keys exist, their types, units and
defaults.
"""
from __future__ import annotations

import difflib
import math
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from slipfield.fields import MODEL_NAMES, generator_names
from slipfield.fields.marginals import MARGINAL_FORMS, marginal_form

from ..errors import InputError
from ..methods import INTERSLICE_NAMES, METHOD_NAMES, POLYLINE_METHOD_NAMES
from ..reliability.registry import ESTIMATOR_NAMES
from ..search import SEARCHES, case_search_names
from ..simulate.problem import AVERAGING, PROPS
from ..simulate.estimators import AUTO_MIN_FAILURES, ESTIMATORS
from ..simulate.refine_names import DEFAULT_MARGIN, DEFAULT_REFINE_BELOW, DEFAULT_REFINE_SEARCH, REFINE_OFF, REFINE_SEARCHES

__all__ = ["CaseError", "read_case", "parse_case", "SCHEMA", "acts_under"]

# Every list of names below comes from the registry that runs the names: a
# name added there is accepted here, and nothing here is retyped.
#: distributions that can make a property random (every form has a spread or bounds)
DISTRIBUTIONS = tuple(n for n, forms in MARGINAL_FORMS.items() if all(f - {"mean"} for f in forms))
#: interslice functions a case can name (a tabulated function needs a table a case file cannot give)
CASE_INTERSLICE = tuple(n for n in INTERSLICE_NAMES if n != "tabulated")


def acts_under(prop: str, has_undrained: bool, hypothesis: str) -> bool:
    """Whether a random property acts under a drainage hypothesis.

    Drained: c', φ'; undrained: su, su_ratio, and c', φ' of materials without
    an undrained strength (they stay drained); a unit weight acts under both.
    """
    if prop == "unit_weight":
        return True
    if hypothesis == "drained":
        return prop in ("c", "phi")
    return prop in ("su", "su_ratio") or (prop in ("c", "phi") and not has_undrained)


class CaseError(InputError):
    """A case file with one or more problems; ``problems`` lists them all."""

    def __init__(self, path: str, problems: list[str]):
        self.path = path
        self.problems = list(problems)
        head = f"{path}: {len(problems)} problem{'s' if len(problems) != 1 else ''} in the case file"
        super().__init__(head + "\n" + "\n".join(f"  - {p}" for p in problems))


# ---------------------------------------------------------------- checkers
# A checker returns None when the value is acceptable, else a message that
# says what is expected (the caller adds where).

def _number(lo=None, hi=None, lo_open=False, hi_open=False, allow_inf=False):
    def check(v):
        if isinstance(v, str) and allow_inf and v.strip().lower() in ("inf", "infinity"):
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            extra = " or \"inf\"" if allow_inf else ""
            return f"must be a number{extra}, got {v!r}"
        if math.isnan(v) or (math.isinf(v) and not allow_inf):
            return f"must be a finite number, got {v!r}"
        if lo is not None and (v < lo or (lo_open and v == lo)):
            return f"must be {'>' if lo_open else '>='} {lo}, got {v!r}"
        if hi is not None and (v > hi or (hi_open and v == hi)):
            return f"must be {'<' if hi_open else '<='} {hi}, got {v!r}"
        return None
    return check


def _integer(lo=None):
    def check(v):
        if isinstance(v, bool) or not isinstance(v, int):
            return f"must be a whole number, got {v!r}"
        if lo is not None and v < lo:
            return f"must be >= {lo}, got {v!r}"
        return None
    return check


def _string(choices=None):
    def check(v):
        if not isinstance(v, str) or not v.strip():
            return f"must be a non-empty text, got {v!r}"
        if choices is not None and v not in choices:
            return f"must be one of {', '.join(choices)}; got {v!r}"
        return None
    return check


def _string_list(choices=None, min_len=1):
    def check(v):
        if not isinstance(v, list) or len(v) < min_len:
            return f"must be a list of at least {min_len} text value(s), got {v!r}"
        for item in v:
            msg = _string(choices)(item)
            if msg:
                return f"item {item!r} {msg}"
        return None
    return check


def _is_inf(v) -> bool:
    """A θ given as "inf" (string) or as the TOML float inf; a missing θ is reported elsewhere."""
    if v is None:
        return True
    if isinstance(v, str):
        return v.strip().lower() in ("inf", "infinity")
    return isinstance(v, (int, float)) and math.isinf(v)


def _number_list(lo=None, lo_open=False, allow_inf=False, min_len=1):
    def check(v):
        if not isinstance(v, list) or len(v) < min_len:
            return f"must be a list of at least {min_len} number(s), got {v!r}"
        for item in v:
            msg = _number(lo=lo, lo_open=lo_open, allow_inf=allow_inf)(item)
            if msg:
                return f"item {item!r} {msg}"
        return None
    return check


def _points(min_len=2):
    def check(v):
        if not isinstance(v, list) or len(v) < min_len:
            return f"must be a list of at least {min_len} [x, y] points (m)"
        for p in v:
            if (not isinstance(p, list) or len(p) != 2
                    or any(isinstance(q, bool) or not isinstance(q, (int, float)) or not math.isfinite(q) for q in p)):
                return f"must be a list of [x, y] points in metres; bad point {p!r}"
        return None
    return check


def _bool(v):
    return None if isinstance(v, bool) else f"must be true or false, got {v!r}"


def _table(v):
    return None if isinstance(v, dict) else f"must be a table, got {v!r}"


def _number_or_table(v):
    if isinstance(v, dict):
        return None
    return _number(lo=0)(v)


def _tuples(width, what):
    """A list of [a, b, ...] rows of ``width`` finite numbers (site data readings)."""
    def check(v):
        if not isinstance(v, list) or not v:
            return f"must be a non-empty list of [{what}] rows"
        for p in v:
            if (not isinstance(p, list) or len(p) != width
                    or any(isinstance(q, bool) or not isinstance(q, (int, float)) or not math.isfinite(q) for q in p)):
                return f"must be a list of [{what}] rows of numbers; bad row {p!r}"
        return None
    return check


@dataclass(frozen=True)
class Key:
    """One key of a table: its checker, whether it is required, its default."""

    check: Callable[[Any], str | None]
    required: bool = False
    default: Any = None
    doc: str = ""


# ------------------------------------------------------------------ schema

SCHEMA: dict[str, dict[str, Key]] = {
    "case": {
        "title": Key(_string(), default="untitled case", doc="a short title for reports"),
        "note": Key(_string(), default="", doc="free text shown in the report"),
    },
    "section": {
        "ground": Key(_points(2), required=True, doc="ground surface, [x, y] points left to right (m)"),
        "bottom": Key(_number(), doc="elevation of the section's base (m), a firm stratum no surface passes; default: the lowest zone vertex"),
        "zone": Key(lambda v: None if isinstance(v, list) else "must be an array of tables [[section.zone]]"),
        "layer": Key(lambda v: None if isinstance(v, list) else "must be an array of tables [[section.layer]]"),
    },
    "section.zone": {
        "name": Key(_string(), required=True),
        "material": Key(_string(), required=True, doc="name of a [[material]]"),
        "polygon": Key(_points(3), required=True, doc="closed polygon, [x, y] points (m); the last point need not repeat the first"),
    },
    "section.layer": {
        "name": Key(_string(), required=True),
        "material": Key(_string(), required=True),
        "bottom": Key(lambda v: None if (isinstance(v, (int, float)) and not isinstance(v, bool)) else _points(2)(v),
                      doc="lower boundary of the layer: an elevation (m) or [x, y] points; the last layer ends at section.bottom"),
    },
    "material": {
        "name": Key(_string(), required=True),
        "unit_weight": Key(_number(lo=0, lo_open=True), required=True, doc="unit weight above the water table (kN/m³)"),
        "unit_weight_sat": Key(_number(lo=0, lo_open=True), doc="saturated unit weight (kN/m³); default: unit_weight"),
        "c": Key(_number(lo=0), doc="drained cohesion c' (kPa)"),
        "phi": Key(_number(lo=0, hi=89.9), doc="drained friction angle φ' (degrees)"),
        "su": Key(_number_or_table, doc="undrained strength: a number (kPa) or a table {law = ...}"),
    },
    "material.su": {
        "law": Key(_string(("constant", "depth", "elevation", "ratio")), required=True),
        "value": Key(_number(lo=0), doc="su at the ground (law depth), at the datum (law elevation) or everywhere (constant), kPa"),
        "gradient": Key(_number(lo=0), doc="increase of su per metre of depth (kPa/m)"),
        "datum": Key(_number(), doc="elevation where su = value (law elevation), m"),
        "ratio": Key(_number(lo=0, lo_open=True), doc="su/σ'v (law ratio)"),
        "minimum": Key(_number(lo=0), default=0.0, doc="lower bound on su (kPa)"),
    },
    "water": {
        "phreatic": Key(_points(2), doc="phreatic surface, [x, y] points (m)"),
        "ru": Key(_number(lo=0, hi=1), doc="pore-pressure ratio (-), instead of a phreatic surface"),
        "unit_weight": Key(_number(lo=0, lo_open=True), default=9.81, doc="unit weight of water (kN/m³)"),
        "inclination_correction": Key(_bool, default=True, doc="apply the cos²β seepage correction to phreatic pressures"),
        "piezometric": Key(lambda v: None if isinstance(v, list) else "must be an array of tables [[water.piezometric]]"),
    },
    "water.piezometric": {
        "zone": Key(_string(), required=True, doc="name of a zone of the section"),
        "line": Key(_points(2), required=True, doc="piezometric line of that zone, [x, y] points (m)"),
    },
    "surcharge": {
        "x_from": Key(_number(), required=True),
        "x_to": Key(_number(), required=True),
        "q": Key(_number(lo=0), required=True, doc="vertical pressure at x_from (kPa)"),
        "q_end": Key(_number(lo=0), doc="pressure at x_to for a linearly varying strip (kPa); default: q"),
    },
    "seismic": {
        "kh": Key(_number(lo=0, hi=1), default=0.0, doc="pseudo-static horizontal coefficient (-)"),
    },
    "tension_crack": {
        "depth": Key(_number(lo=0, lo_open=True), required=True, doc="crack depth (m)"),
        "water_filled": Key(_bool, default=False),
        "fill": Key(_number(lo=0, hi=1, lo_open=True), default=1.0, doc="fraction of the crack depth filled with water"),
    },
    "analysis": {
        "hypotheses": Key(_string_list(("drained", "undrained")), default=["drained"]),
        "methods": Key(_string_list(METHOD_NAMES), default=["bishop", "spencer"]),
        "method": Key(_string(METHOD_NAMES), default="bishop", doc="method of the random runs"),
        "slices": Key(_integer(lo=5), default=30),
        "interslice": Key(_string(CASE_INTERSLICE), default="half-sine"),
    },
    "search": {
        "kind": Key(_string(case_search_names()), default="centre-lattice"),
        "trials": Key(_integer(lo=10), default=1500, doc="about how many trial surfaces the bank holds (a lattice of max(3, round(√(trials/10)))² centres or entry × exit points, 10 radii each)"),
        "x_range": Key(_number_list(min_len=2), doc="[x_min, x_max] of circle centres or of the entry/exit region (m)"),
        "y_range": Key(_number_list(min_len=2), doc="[y_min, y_max] of circle centres (m)"),
        "entry": Key(_number_list(min_len=2), doc="window search: [x_from, x_to] where surfaces enter the ground (m)"),
        "exit": Key(_number_list(min_len=2), doc="window search: [x_from, x_to] where surfaces leave the ground (m)"),
        "min_depth": Key(_number(lo=0), default=0.5, doc="reject surfaces shallower than this (m)"),
        "circle": Key(_table, doc="fixed circle {x, y, r} (m)"),
        "polyline": Key(_points(2), doc="fixed surface, [x, y] points (m)"),
        "block": Key(lambda v: None if isinstance(v, list) else "must be an array of tables [[search.block]]",
                     doc="sliding-block surfaces along a weak zone, added to the bank"),
        "dynamic_programming": Key(_table, doc="non-circular surfaces by dynamic programming (Baker 1980), added to the bank"),
    },
    "search.block": {
        "zone": Key(_string(), required=True, doc="zone or layer whose base the block slides on"),
        "entry": Key(_number_list(min_len=2), required=True, doc="[x_from, x_to] of the ground where the active wedge enters (m)"),
        "exit": Key(_number_list(min_len=2), required=True, doc="[x_from, x_to] of the ground where the passive wedge leaves (m)"),
        "points": Key(_integer(lo=2), default=10, doc="points in each range (points² blocks)"),
        "lift": Key(_number(lo=0, hi=1, hi_open=True), default=0.25, doc="base height above the zone's bottom, fraction of its thickness"),
    },
    "search.dynamic_programming": {
        "columns": Key(_integer(lo=3), default=25, doc="columns of nodes across each start surface (vertices of the path)"),
        "nodes": Key(_integer(lo=3), default=21, doc="nodes per column below the ground"),
        "passes": Key(_integer(lo=1), default=3, doc="grids, each a narrower band about the previous path"),
    },
    "search.circle": {
        "x": Key(_number(), required=True, doc="x of the centre (m)"),
        "y": Key(_number(), required=True, doc="y of the centre (m)"),
        "r": Key(_number(lo=0, lo_open=True), required=True, doc="radius (m)"),
    },
    "site_data": {
        "property": Key(_string(), required=True, doc="\"material.property\" of a [[random]] entry"),
        "x": Key(_number(), doc="position of a vertical profile (m); with readings"),
        "readings": Key(_tuples(2, "elevation (m), value"), doc="profile readings at x"),
        "points": Key(_tuples(3, "x (m), elevation (m), value"), doc="single measurements"),
        "file": Key(_string(), doc="CSV beside the case, columns x,elevation,value"),
        "error_sd": Key(_number(lo=0), doc="measurement error, standard deviation (property units)"),
        "error_cov": Key(_number(lo=0), doc="measurement error as a COV of the measured value (-)"),
    },
    "drilling": {
        "candidates": Key(_number_list(min_len=1), required=True,
                          doc="x of candidate vertical profiles (m): how much each would narrow the strength "
                              "average along the critical surface"),
        "spacing": Key(_number(lo=0, lo_open=True), default=1.0, doc="vertical spacing of the candidate readings (m)"),
        "error_sd": Key(_number(lo=0), default=0.0, doc="measurement error of a candidate reading, standard-normal units"),
    },
    "random": {
        "material": Key(_string(), required=True),
        "property": Key(_string(PROPS), required=True),
        "distribution": Key(_string(DISTRIBUTIONS), default="lognormal"),
        "mean": Key(_number(), doc="default: the material's value"),
        "cov": Key(_number(lo=0, lo_open=True), doc="coefficient of variation (-); every distribution but "
                   "triangular and a uniform given by its bounds"),
        "lower": Key(_number(), doc="lower bound (truncated-normal, beta, uniform, triangular)"),
        "upper": Key(_number(), doc="upper bound (truncated-normal, beta, uniform, triangular)"),
        "mode": Key(_number(), doc="most likely value (triangular)"),
        "theta_h": Key(_number(lo=0, lo_open=True, allow_inf=True), required=True, doc="horizontal scale of fluctuation (m) or \"inf\""),
        "theta_v": Key(_number(lo=0, lo_open=True, allow_inf=True), required=True, doc="vertical scale of fluctuation (m) or \"inf\""),
        "model": Key(_string(MODEL_NAMES), default="exponential"),
        "nu": Key(_number(lo=0, lo_open=True), default=1.5, doc="Matérn smoothness"),
        "angle": Key(_number(lo=-90, hi=90), default=0.0, doc="rotation of θh from +x, counter-clockwise (degrees)"),
    },
    "cross_correlation": {
        "between": Key(_string_list(min_len=2), required=True, doc="two \"material.property\" names"),
        "rho": Key(_number(lo=-1, hi=1, lo_open=True, hi_open=True), required=True),
    },
    "simulation": {
        "realisations": Key(_integer(lo=1), default=1000),
        "seed": Key(_integer(lo=0), default=1),
        "cell": Key(_number(lo=0, lo_open=True), default=0.5, doc="random-field cell size (m)"),
        "field_method": Key(_string(generator_names()), default="fft"),
        "averaging": Key(_string(tuple(AVERAGING)), default="base-average"),
        "jobs": Key(_integer(lo=1), default=1),
        "batch": Key(_integer(lo=1), default=100),
        "refine_below": Key(_number(lo=1, lo_open=True), default=DEFAULT_REFINE_BELOW,
                            doc="the per-realisation search runs on realisations with a bank FS in [1, refine_below) "
                                f"(-; default 1 + {DEFAULT_MARGIN:g}: near failure, where it can change pf)"),
        "refine_method": Key(_string(POLYLINE_METHOD_NAMES), default="spencer",
                             doc="method of slices of the refined polylines"),
        # subset simulation (slope.simulate.rare); names from its registry
        "estimator": Key(_string(ESTIMATORS), default="monte-carlo",
                         doc="monte-carlo, subset (small pf), or auto (subset when the first batch of Monte Carlo "
                             f"sees fewer than {AUTO_MIN_FAILURES} failures)"),
        "level_probability": Key(_number(lo=0, hi=0.5, lo_open=True),
                                 doc="subset: conditional probability of each level (-), default 0.1"),
        "samples_per_level": Key(_integer(lo=1), doc="subset: samples per level, default 1000"),
        "refine_search": Key(_string(REFINE_SEARCHES + (REFINE_OFF,)), default=DEFAULT_REFINE_SEARCH,
                             doc="per-realisation search of realisations near failure (on by default): dynamic "
                                 "programming (Baker 1980) from the lowest surfaces of different families, the "
                                 f"critical surface bent by Nelder-Mead, or {REFINE_OFF} (the bank's surfaces only)"),
    },
    "reliability": {
        "methods": Key(_string_list(ESTIMATOR_NAMES), default=["monte-carlo", "point-estimate", "form"]),
        "samples": Key(_integer(lo=10), default=5000,
                       doc="Monte Carlo and Latin hypercube samples; subset simulation: samples per level"),
        "tornado_k": Key(_number(lo=0, lo_open=True), default=2.0, doc="tornado bars at mean ± k σ (common practice: k = 2)"),
        "research_surface": Key(_bool, default=False, doc="re-search the critical surface for each sample"),
    },
    "sweep": {
        "theta_h": Key(_number_list(lo=0, lo_open=True, allow_inf=True), doc="θh values (m), \"inf\" allowed"),
        "theta_v": Key(_number_list(lo=0, lo_open=True, allow_inf=True), doc="θv values (m), \"inf\" allowed"),
        "realisations": Key(_integer(lo=1), doc="realisations per grid point; default: simulation.realisations"),
    },
    "risk": {
        "annual_exceedance": Key(_number(lo=0, hi=1, lo_open=True), doc="annual probability of the analysed loading (1/yr)"),
        "annual_pf": Key(_number(lo=0, hi=1, lo_open=True), doc="annual probability of failure given directly (1/yr)"),
        "consequence": Key(_number(lo=0, lo_open=True), required=True, doc="consequence of failure"),
        "consequence_label": Key(_string(), default="consequence"),
        "tolerability": Key(lambda v: None if isinstance(v, list) else "must be an array of tables [[risk.tolerability]]"),
        "hypothesis": Key(lambda v: None if isinstance(v, list) else "must be an array of tables [[risk.hypothesis]]",
                          doc="each hypothesis's own annual probability of the condition it models"),
    },
    "risk.hypothesis": {
        "name": Key(_string(("drained", "undrained")), required=True, doc="a hypothesis of analysis.hypotheses"),
        "annual_probability": Key(_number(lo=0, hi=1, lo_open=True), required=True,
                                  doc="annual probability of the condition this hypothesis models (1/yr; 1 for the "
                                      "normal long-term state)"),
        "condition": Key(_string(), default="", doc="the condition in words, printed on the risk chart"),
    },
    "risk.tolerability": {
        "label": Key(_string(), required=True),
        "source": Key(_string(), required=True, doc="published source of the criterion (cited in the chart)"),
        "points": Key(_points(2), required=True, doc="[consequence, annual probability] points"),
    },
}

#: Top-level entries that are arrays of tables.
ARRAY_TABLES = ("material", "surcharge", "random", "cross_correlation", "site_data")
#: Nested array tables (parent table, key).
NESTED_ARRAYS = {("section", "zone"), ("section", "layer"), ("risk", "tolerability"), ("water", "piezometric"),
                 ("search", "block"), ("risk", "hypothesis")}


# ------------------------------------------------------------- locating

class _Locator:
    """Finds the line of a key path in the TOML text (best effort)."""

    _header = re.compile(r"^\s*(\[\[?)\s*([A-Za-z0-9_.\-\s\"]+?)\s*\]\]?\s*(#.*)?$")

    def __init__(self, text: str):
        self.lines = text.splitlines()
        # (table path, index or None) -> line number of its header
        self.headers: list[tuple[str, int | None, int]] = []
        counts: dict[str, int] = {}
        for no, line in enumerate(self.lines, start=1):
            m = self._header.match(line)
            if not m:
                continue
            name = m.group(2).replace(" ", "").replace('"', "")
            if m.group(1) == "[[":
                idx = counts.get(name, 0)
                counts[name] = idx + 1
                self.headers.append((name, idx, no))
            else:
                self.headers.append((name, None, no))

    def line_of(self, table: str, index: int | None, key: str | None) -> int | None:
        start = None
        for name, idx, no in self.headers:
            if name == table and (index is None or idx == index):
                start = no
                break
        if start is None:
            return None
        if key is None:
            return start
        for no in range(start, len(self.lines)):
            line = self.lines[no]
            if self._header.match(line):
                break
            if re.match(rf"^\s*{re.escape(key)}\s*=", line):
                return no + 1
        return start


# ------------------------------------------------------------- checking

def _check_table(data: dict, schema_name: str, path: str, table: str, index: int | None,
                 where: Callable[[str, int | None, str | None], str], problems: list[str]) -> dict:
    """Check one table against SCHEMA[schema_name]; return it with defaults filled."""
    schema = SCHEMA[schema_name]
    out: dict[str, Any] = {}
    missing = [k for k, spec in schema.items() if spec.required and k not in data]
    meant: dict[str, str] = {}  # unknown key -> the missing required key it stands for (one message, not two)
    for key, value in data.items():
        if key not in schema:
            close = difflib.get_close_matches(key, list(schema), n=1, cutoff=0.75)
            if not close:
                close = [k for k in missing if key.lower() in schema[k].doc.lower().split()]
            hint = f"did you mean {close[0]!r}?" if close else f"known keys: {', '.join(schema)}"
            if close and close[0] in missing:
                meant[close[0]] = key
                hint += f" ({close[0]} is required: {schema[close[0]].doc})" if schema[close[0]].doc else ""
            problems.append(f"{where(table, index, key)}{path}.{key}: unknown key; {hint}")
            continue
        msg = schema[key].check(value)
        if msg:
            problems.append(f"{where(table, index, key)}{path}.{key} {msg}" + (f" ({schema[key].doc})" if schema[key].doc else ""))
            continue
        out[key] = value
    for key, spec in schema.items():
        if key in data:
            continue
        if spec.required:
            if key not in meant:
                problems.append(f"{where(table, index, None)}{path}.{key} is missing" + (f": {spec.doc}" if spec.doc else ""))
        elif spec.default is not None:
            out[key] = spec.default
    return out


def to_float(v) -> float:
    """A number, or ``inf`` written as text, as a float."""
    if isinstance(v, str):
        return math.inf
    return float(v)


def parse_case(text: str, path: str = "<case>") -> dict:
    """Parse and check case text; return the checked tables with defaults.

    Parameters
    ----------
    text : str
        TOML text of the case.
    path : str
        Name used in messages.

    Returns
    -------
    dict
        Top-level tables (``case``, ``section``, ``material`` (list), ...),
        with defaults filled in and every value checked.

    Raises
    ------
    CaseError
        Listing every problem found, each with line and key path.
    """
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(path, [f"not valid TOML: {exc} (fix the syntax at that line)"]) from None
    loc = _Locator(text)
    problems: list[str] = []

    def where(table, index, key):
        no = loc.line_of(table, index, key)
        return f"line {no}: " if no else ""

    known = {k for k in SCHEMA if "." not in k}
    case: dict[str, Any] = {}
    for top, value in raw.items():
        if top not in known:
            problems.append(f"{where(top, None, None)}[{top}]: unknown table; known tables: {', '.join(sorted(known))}")
            continue
        if top in ARRAY_TABLES:
            if not isinstance(value, list):
                problems.append(f"{where(top, None, None)}{top} must be an array of tables, written [[{top}]]")
                continue
            case[top] = [
                _check_table(item, top, f"{top}[{i}]", top, i, where, problems) for i, item in enumerate(value)
            ]
        else:
            if not isinstance(value, dict):
                problems.append(f"{where(top, None, None)}{top} must be a table, written [{top}]")
                continue
            case[top] = _check_table(value, top, top, top, None, where, problems)
    for parent, key in NESTED_ARRAYS:
        items = case.get(parent, {}).get(key)
        if items is None:
            continue
        case[parent][key] = [
            _check_table(item, f"{parent}.{key}", f"{parent}.{key}[{i}]", f"{parent}.{key}", i, where, problems)
            if isinstance(item, dict) else item
            for i, item in enumerate(items)
        ]
    if isinstance(case.get("search", {}).get("circle"), dict):
        case["search"]["circle"] = _check_table(case["search"]["circle"], "search.circle", "search.circle", "search",
                                                None, where, problems)
    for i, mat in enumerate(case.get("material", [])):
        if isinstance(mat.get("su"), dict):
            mat["su"] = _check_table(mat["su"], "material.su", f"material[{i}].su", "material", i, where, problems)
    if isinstance(case.get("search", {}).get("dynamic_programming"), dict):
        case["search"]["dynamic_programming"] = _check_table(
            case["search"]["dynamic_programming"], "search.dynamic_programming", "search.dynamic_programming",
            "search.dynamic_programming", None, where, problems)
    for name in ("case", "analysis", "simulation", "seismic", "search", "reliability"):
        if name not in case:
            case[name] = _check_table({}, name, name, name, None, where, problems)
    if "section" not in raw:
        problems.append("[section] is missing: give at least the ground line and the zones")
    if not case.get("material"):
        problems.append("no [[material]] is defined: every zone needs one")
    if not problems:  # cross-table checks only on well-formed tables: one problem, one message
        _check_references(case, raw, where, problems)
    if problems:
        raise CaseError(path, problems)
    return case


def _check_references(case: dict, raw: dict, where, problems: list[str]) -> None:
    """Cross-table checks: names, references, combinations."""

    def raw_items(table, i):
        items = raw.get(table, [])
        return items[i] if isinstance(items, list) and i < len(items) and isinstance(items[i], dict) else {}

    materials: dict[str, dict] = {}
    for i, mat in enumerate(case.get("material", [])):
        name = mat.get("name")
        if name in materials:
            problems.append(f"{where('material', i, 'name')}material[{i}].name {name!r} is defined twice; give each material its own name")
        materials[name] = mat
        su = mat.get("su")
        if isinstance(su, dict):
            law = su.get("law")
            need = {"constant": ("value",), "depth": ("value", "gradient"),
                    "elevation": ("value", "gradient", "datum"), "ratio": ("ratio",)}.get(law, ())
            for k in need:
                if k not in su:
                    problems.append(f"{where('material', i, 'su')}material[{i}].su.{k} is missing: law {law!r} needs {', '.join(need)}")
    hyps = case.get("analysis", {}).get("hypotheses", [])
    for i, mat in enumerate(case.get("material", [])):
        if "drained" in hyps and ("c" not in mat or "phi" not in mat) and "su" not in mat:
            problems.append(f"{where('material', i, None)}material[{i}] ({mat.get('name')!r}) has neither c and phi nor su")
        if "undrained" in hyps and "su" not in mat and "phi" not in mat:
            problems.append(f"{where('material', i, None)}material[{i}] ({mat.get('name')!r}) has no su for the undrained hypothesis (give su, or c and phi for a free-draining soil)")
    section = case.get("section", {})
    zones = section.get("zone", []) or []
    layers = section.get("layer", []) or []
    if section and not zones and not layers:
        problems.append(f"{where('section', None, None)}section has no zones: add [[section.zone]] polygons or [[section.layer]] boundaries")
    if zones and layers:
        problems.append(f"{where('section', None, None)}section: give zones either as [[section.zone]] or as [[section.layer]], not both")
    for kind, items in (("section.zone", zones), ("section.layer", layers)):
        seen = set()
        for i, z in enumerate(items):
            if not isinstance(z, dict):
                continue
            if z.get("name") in seen:
                problems.append(f"{where(kind, i, 'name')}{kind}[{i}].name {z.get('name')!r} is used twice")
            seen.add(z.get("name"))
            if z.get("material") is not None and z.get("material") not in materials:
                problems.append(f"{where(kind, i, 'material')}{kind}[{i}].material {z.get('material')!r} is not defined; "
                                f"define a [[material]] with that name (defined: {', '.join(map(str, materials)) or 'none'})")
            if kind == "section.layer" and i < len(items) - 1 and "bottom" not in z:
                problems.append(f"{where(kind, i, None)}{kind}[{i}].bottom is missing: every layer but the last needs its lower boundary")
    ground = section.get("ground")
    if ground:
        xs = [p[0] for p in ground]
        if any(b <= a for a, b in zip(xs, xs[1:])):
            problems.append(f"{where('section', None, 'ground')}section.ground: x must increase strictly from left to right")
    water = case.get("water", {})
    zone_names = {z.get("name") for z in list(zones) + list(layers) if isinstance(z, dict)}
    for i, pz in enumerate(water.get("piezometric", []) or []):
        if isinstance(pz, dict) and pz.get("zone") is not None and pz.get("zone") not in zone_names:
            problems.append(f"{where('water.piezometric', i, 'zone')}water.piezometric[{i}].zone {pz.get('zone')!r} is not a zone of the section; "
                            f"use one of: {', '.join(sorted(map(str, zone_names)))}")
    if "phreatic" in water and "ru" in water:
        problems.append(f"{where('water', None, 'ru')}water: give either phreatic or ru, not both")
    hyps_all = case.get("analysis", {}).get("hypotheses", [])
    used_materials = {z.get("material") for z in list(zones) + list(layers) if isinstance(z, dict)}
    props: dict[str, tuple] = {}  # "material.property" -> (property, material has su)
    for i, r in enumerate(case.get("random", [])):
        mat = materials.get(r.get("material"))
        if r.get("material") is not None and mat is None:
            problems.append(f"{where('random', i, 'material')}random[{i}].material {r.get('material')!r} matches no [[material]]; "
                            f"use one of: {', '.join(map(str, materials)) or 'none'}")
            continue
        if mat is not None and r.get("material") not in used_materials and used_materials <= set(materials):
            problems.append(f"{where('random', i, 'material')}random[{i}].material {r.get('material')!r} is used by no "
                            f"zone of the section, so making it random changes nothing; remove the entry or "
                            f"give the material to a zone")
            if r.get("property") is not None:  # still a random property: no follow-on message about references
                props[f"{r['material']}.{r['property']}"] = (r["property"], mat.get("su") is not None)
            continue
        p = r.get("property")
        if mat is not None and p is not None:
            su = mat.get("su")
            ok = {
                "c": "c" in mat, "phi": "phi" in mat, "unit_weight": True,
                "su": su is not None and (not isinstance(su, dict) or su.get("law") in ("constant", "depth", "elevation")),
                "su_ratio": isinstance(su, dict) and su.get("law") == "ratio",
            }[p]
            if not ok:
                problems.append(f"{where('random', i, 'property')}random[{i}].property {p!r}: material {r['material']!r} has no such parameter to vary")
            elif not any(acts_under(p, su is not None, h) for h in hyps_all):
                problems.append(f"{where('random', i, 'property')}random[{i}].property {p!r} of {r['material']!r} acts "
                                f"under none of analysis.hypotheses ({', '.join(hyps_all)}); remove the entry or add "
                                "the hypothesis it acts under")
            if p == "unit_weight" and not all(_is_inf(r.get(t)) for t in ("theta_h", "theta_v")):
                problems.append(f"{where('random', i, 'theta_h')}random[{i}]: a unit weight is random only as one "
                                "variable per zone; give theta_h = \"inf\" and theta_v = \"inf\"")
            key = f"{r['material']}.{p}"
            if key in props:
                problems.append(f"{where('random', i, None)}random[{i}]: {key} is made random twice")
            props[key] = (p, su is not None)
        dist = r.get("distribution")
        given = {k for k in ("mean", "lower", "upper", "mode") if k in r} | ({"spread"} if "cov" in r else set())
        if dist is not None and marginal_form(dist, given, implied={"mean"}) is None:
            forms = " or ".join(", ".join(sorted("cov" if k == "spread" else k for k in f)) for f in MARGINAL_FORMS[dist])
            stated = ", ".join(sorted("cov" if k == "spread" else k for k in given)) or "nothing"
            problems.append(f"{where('random', i, 'distribution')}random[{i}].distribution {dist!r} is stated by "
                            f"{forms} (mean defaults to the material's value); got {stated}: add the missing "
                            "keys and remove the others")
        if "lower" in r and "upper" in r and r["lower"] >= r["upper"]:
            problems.append(f"{where('random', i, 'lower')}random[{i}]: lower ({r['lower']}) must be below upper ({r['upper']})")
        if "nu" in raw_items("random", i) and r.get("model") != "matern":
            problems.append(f"{where('random', i, 'nu')}random[{i}].nu is read only by model = \"matern\" "
                            f"(model here: {r.get('model')!r}); remove nu or choose the matern model")
        if ("angle" in raw_items("random", i) and r.get("angle") and not _is_inf(r.get("theta_h"))
                and r.get("theta_h") == r.get("theta_v")):
            problems.append(f"{where('random', i, 'angle')}random[{i}].angle turns nothing: theta_h = theta_v makes "
                            "the field isotropic; remove angle or give different theta_h and theta_v")
    pairs: dict[frozenset, int] = {}
    for i, cc in enumerate(case.get("cross_correlation", [])):
        between = cc.get("between", [])
        if len(between) != 2:
            problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}].between must name exactly two random properties")
            continue
        bad = [b for b in between if b not in props]
        for b in bad:
            problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}].between: {b!r} is not a random property; "
                            f"use \"material.property\" of a [[random]] entry (defined: {', '.join(sorted(props)) or 'none'})")
        if bad:
            continue
        pair = frozenset(between)
        if len(pair) == 1:
            problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}].between names "
                            f"{between[0]!r} twice; name two different random properties")
            continue
        if pair in pairs:
            problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}]: the pair "
                            f"{' and '.join(between)} is already correlated by cross_correlation[{pairs[pair]}]; "
                            "give each pair once")
            continue
        pairs[pair] = i
        (pa, sa), (pb, sb) = props[between[0]], props[between[1]]
        if not any(acts_under(pa, sa, h) and acts_under(pb, sb, h) for h in hyps_all):
            problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}]: {between[0]} and "
                            f"{between[1]} never act under the same hypothesis of analysis.hypotheses "
                            f"({', '.join(hyps_all)}), so their correlation changes nothing; remove it")
    _check_search(case, raw, where, problems)
    _check_search_families(case, case.get("search", {}), zone_names, where, problems)
    _check_geometry(case, where, problems)
    _check_conditional_keys(case, raw, where, problems)
    _check_subset(case.get("simulation", {}), where, problems)
    _check_site_data_refs(case, props, where, problems)
    risk = case.get("risk")
    if risk is not None and not ({"annual_exceedance", "annual_pf", "hypothesis"} & set(risk)):
        problems.append(f"{where('risk', None, None)}risk needs [[risk.hypothesis]] entries (each hypothesis's annual "
                        "probability of its condition), annual_exceedance (of the analysed loading) or annual_pf")
    _check_risk_hypotheses(risk, hyps, where, problems)
    for i, s in enumerate(case.get("surcharge", [])):
        if "x_from" in s and "x_to" in s and s["x_from"] >= s["x_to"]:
            problems.append(f"{where('surcharge', i, 'x_to')}surcharge[{i}]: x_from must be below x_to")


def _check_risk_hypotheses(risk, hyps, where, problems) -> None:
    """[[risk.hypothesis]]: each names an analysed hypothesis, at most once."""
    seen = set()
    for i, h in enumerate((risk or {}).get("hypothesis", []) or []):
        name = h.get("name") if isinstance(h, dict) else None
        if name is None:
            continue
        if name not in hyps:
            problems.append(f"{where('risk.hypothesis', i, 'name')}risk.hypothesis[{i}].name {name!r} is not analysed; "
                            f"use one of analysis.hypotheses: {', '.join(hyps)}")
        if name in seen:
            problems.append(f"{where('risk.hypothesis', i, 'name')}risk.hypothesis[{i}].name {name!r} is given twice")
        seen.add(name)


def _check_subset(sim: dict, where, problems: list[str]) -> None:
    """Subset simulation settings: used only by its estimators, and a whole number of chains."""
    given = [k for k in ("level_probability", "samples_per_level") if k in sim]
    if sim.get("estimator", "monte-carlo") == "monte-carlo":
        for k in given:
            problems.append(f"{where('simulation', None, k)}simulation.{k} is used only by subset simulation; set "
                            "simulation.estimator = \"subset\" or \"auto\", or remove it")
        return
    from slipfield.fields.generators import noise_generator_names

    if sim.get("field_method", "fft") not in noise_generator_names():
        problems.append(f"{where('simulation', None, 'field_method')}simulation.field_method = "
                        f"{sim.get('field_method')!r} cannot be used with estimator {sim['estimator']!r}: subset "
                        "simulation moves the fields' white noise, which this generator draws inside GSTools; use "
                        f"one of {', '.join(noise_generator_names())}")
    from ..simulate.rare import SubsetSettings  # the simulator is loaded only for a subset case

    try:
        SubsetSettings.from_case(sim)
    except InputError as exc:
        key = "level_probability" if str(exc).startswith("level_probability") else "samples_per_level"
        problems.append(f"{where('simulation', None, key)}simulation.{key}: {str(exc).split(': ', 1)[1]}")


def _check_site_data_refs(case: dict, props: set, where, problems: list[str]) -> None:
    """[[site_data]]: a random property, one location form, one error form; [drilling] needs a field."""
    if "drilling" in case and not any(not (_is_inf(r.get("theta_h")) and _is_inf(r.get("theta_v")))
                                      for r in case.get("random", [])):
        problems.append(f"{where('drilling', None, None)}[drilling] needs a spatially random property (a [[random]] "
                        "entry with finite theta_h and theta_v): with none, a new profile can teach nothing; "
                        "remove [drilling] or add the field")
    for i, d in enumerate(case.get("site_data", [])):
        p = d.get("property")
        if p is not None and p not in props:
            problems.append(f"{where('site_data', i, 'property')}site_data[{i}].property {p!r} is not a random "
                            f"property; use \"material.property\" of a [[random]] entry (defined: "
                            f"{', '.join(sorted(props)) or 'none'})")
        forms = [k for k in ("readings", "points", "file") if k in d]
        if len(forms) != 1:
            problems.append(f"{where('site_data', i, None)}site_data[{i}]: give exactly one of readings (with x), "
                            f"points or file{'; found ' + ', '.join(forms) if forms else ''}")
        if ("x" in d) != ("readings" in d):
            problems.append(f"{where('site_data', i, 'x')}site_data[{i}]: x (m) goes with readings and only with "
                            "them; a profile is x plus [elevation, value] readings")
        if "error_sd" in d and "error_cov" in d:
            problems.append(f"{where('site_data', i, 'error_cov')}site_data[{i}]: give error_sd or error_cov, "
                            "not both")


def _check_search(case: dict, raw: dict, where, problems: list[str]) -> None:
    """The [search] table: the keys its kind reads (registry), the fixed surface, the ranges."""
    search = case.get("search", {})
    kind = search.get("kind")
    if kind not in SEARCHES:
        return
    # block and dynamic_programming add surface families to the bank of any kind
    reads = set(SEARCHES[kind].keys) | {"kind", "min_depth", "block", "dynamic_programming"}
    for key in raw.get("search", {}) if isinstance(raw.get("search"), dict) else ():
        if key in SCHEMA["search"] and key not in reads:
            problems.append(f"{where('search', None, key)}search.{key} is not read by search.kind = {kind!r} "
                            f"(it reads {', '.join(sorted(reads))}); remove it or choose the kind that reads it")
    if kind == "fixed":
        if ("circle" in search) == ("polyline" in search):
            problems.append(f"{where('search', None, 'kind')}search.kind = \"fixed\" needs one surface: "
                            "search.circle {x, y, r} or search.polyline, not "
                            + ("both" if "circle" in search else "neither"))
        if "polyline" in search:
            xs = [p[0] for p in search["polyline"]]
            if any(b <= a for a, b in zip(xs, xs[1:])):
                problems.append(f"{where('search', None, 'polyline')}search.polyline: x must increase strictly "
                                "from left to right")
    for key in ("x_range", "y_range", "entry", "exit"):
        v = search.get(key)
        if v is not None and (len(v) != 2 or v[0] >= v[1]):
            problems.append(f"{where('search', None, key)}search.{key} must be [low, high] with low < high")
    for key in ("entry", "exit"):
        if kind == "window" and key not in search:
            problems.append(f"{where('search', None, 'kind')}search.{key} is missing: search.kind = \"window\" "
                            "needs entry = [x_from, x_to] and exit = [x_from, x_to] (m)")
    ground = case.get("section", {}).get("ground")
    if ground and kind == "window":
        lo, hi = ground[0][0], ground[-1][0]
        for key in ("entry", "exit"):
            v = search.get(key)
            if v is not None and len(v) == 2 and (v[0] < lo or v[1] > hi):
                problems.append(f"{where('search', None, key)}search.{key} {v} reaches outside the ground line "
                                f"(x from {lo:g} to {hi:g} m); give a window within it")


def _line_y(line, xs):
    import numpy as np

    p = np.asarray(line, float)
    return np.interp(xs, p[:, 0], p[:, 1])


def _check_geometry(case: dict, where, problems: list[str]) -> None:
    """Layer bottoms that cross or leave the section; a phreatic line outside the section."""
    import numpy as np

    section = case.get("section", {})
    ground = section.get("ground")
    if not ground or any(b[0] <= a[0] for a, b in zip(ground, ground[1:])):
        return
    g = np.asarray(ground, float)
    base = section.get("bottom")
    layers = [lay for lay in section.get("layer", []) or [] if isinstance(lay, dict)]
    xs = np.unique(np.concatenate([g[:, 0]] + [np.asarray(lay["bottom"], float)[:, 0] for lay in layers
                                                if isinstance(lay.get("bottom"), list)]))
    xs = xs[(xs >= g[0, 0]) & (xs <= g[-1, 0])]
    xs = np.unique(np.concatenate([xs, np.linspace(g[0, 0], g[-1, 0], 401)]))
    gy = _line_y(g, xs)
    prev = None
    for i, lay in enumerate(layers):
        b = lay.get("bottom")
        if b is None:
            continue
        if isinstance(b, list) and any(q[0] <= p[0] for p, q in zip(b, b[1:])):
            problems.append(f"{where('section.layer', i, 'bottom')}section.layer[{i}].bottom: x must increase "
                            "strictly from left to right")
            return
        y = np.full(xs.shape, float(b)) if not isinstance(b, list) else _line_y(b, xs)
        if base is not None and np.any(y < float(base) - 1e-9):
            problems.append(f"{where('section.layer', i, 'bottom')}section.layer[{i}].bottom goes below "
                            f"section.bottom ({base:g} m), where no layer can be; raise it or lower section.bottom")
        if prev is not None:
            below_ground = y < gy - 1e-9
            up = below_ground & (y > prev[1] + 1e-9)
            if np.any(up):
                x0 = float(xs[np.argmax(up)])
                problems.append(f"{where('section.layer', i, 'bottom')}section.layer[{i}].bottom rises above "
                                f"section.layer[{prev[0]}].bottom (the layer above it) near x = {x0:g} m: layer "
                                "bottoms must not cross; give them from the top down")
        prev = (i, y)
    ph = case.get("water", {}).get("phreatic")
    if ph:
        p = np.asarray(ph, float)
        if p[-1, 0] < g[0, 0] or p[0, 0] > g[-1, 0]:
            problems.append(f"{where('water', None, 'phreatic')}water.phreatic lies wholly outside the section "
                            f"(x from {p[0, 0]:g} to {p[-1, 0]:g} m; the ground runs from {g[0, 0]:g} to "
                            f"{g[-1, 0]:g} m); give it over the section")
        elif any(b[0] <= a[0] for a, b in zip(ph, ph[1:])):
            problems.append(f"{where('water', None, 'phreatic')}water.phreatic: x must increase strictly from "
                            "left to right")
        else:
            lowest = float(base) if base is not None else None
            if lowest is not None and np.all(_line_y(p, xs) <= lowest):
                problems.append(f"{where('water', None, 'phreatic')}water.phreatic lies wholly at or below "
                                f"section.bottom ({lowest:g} m), so it puts no water in the section; raise it or "
                                "remove it")


def _check_conditional_keys(case: dict, raw: dict, where, problems: list[str]) -> None:
    """Keys given where nothing reads them (they would be silently ignored)."""
    def given(table, key):
        t = raw.get(table)
        return isinstance(t, dict) and key in t

    ana = case.get("analysis", {})
    if given("analysis", "interslice") and "morgenstern-price" not in [ana.get("method"), *ana.get("methods", [])]:
        problems.append(f"{where('analysis', None, 'interslice')}analysis.interslice is read only by "
                        "morgenstern-price, which is not among analysis.method/methods; remove it or add the method")
    sim = case.get("simulation", {})
    if sim.get("refine_search") == REFINE_OFF:
        for key in ("refine_below", "refine_method"):
            if given("simulation", key):
                problems.append(f"{where('simulation', None, key)}simulation.{key} does nothing with "
                                f"simulation.refine_search = \"{REFINE_OFF}\"; remove it or name a search "
                                f"({', '.join(REFINE_SEARCHES)})")
    tc = case.get("tension_crack")
    if tc is not None and given("tension_crack", "fill") and not tc.get("water_filled"):
        problems.append(f"{where('tension_crack', None, 'fill')}tension_crack.fill is read only when "
                        "water_filled = true; set it or remove fill")
    water = case.get("water", {})
    if given("water", "inclination_correction") and "phreatic" not in water:
        problems.append(f"{where('water', None, 'inclination_correction')}water.inclination_correction applies to "
                        "phreatic pressures only, and there is no water.phreatic; remove it")
    if given("water", "unit_weight") and "phreatic" not in water and not water.get("piezometric"):
        problems.append(f"{where('water', None, 'unit_weight')}water.unit_weight is read only with water.phreatic "
                        "or [[water.piezometric]] lines (ru needs no water unit weight); remove it")
    risk = case.get("risk")
    if risk is not None and "annual_pf" in risk and "annual_exceedance" in risk:
        problems.append(f"{where('risk', None, 'annual_pf')}risk: give annual_pf or annual_exceedance, not both "
                        "(annual_pf would override the computed pf)")


def _check_search_families(case: dict, search: dict, zone_names: set, where, problems: list[str]) -> None:
    """Block and dynamic-programming searches: zones, ranges on the ground, a method for non-circular surfaces."""
    from ..search.families import POLYLINE_METHODS

    ground = case.get("section", {}).get("ground") or []
    x_lo, x_hi = (ground[0][0], ground[-1][0]) if len(ground) >= 2 else (-math.inf, math.inf)
    blocks = search.get("block", []) or []
    for i, b in enumerate(blocks):
        if not isinstance(b, dict):
            continue
        key = f"search.block[{i}]"
        if b.get("zone") is not None and zone_names and b["zone"] not in zone_names:
            problems.append(f"{where('search.block', i, 'zone')}{key}.zone {b['zone']!r} is not a zone or layer of the "
                            f"section; use one of: {', '.join(sorted(map(str, zone_names)))}")
        for r in ("entry", "exit"):
            v = b.get(r)
            if v is None:
                continue
            if len(v) != 2 or v[0] >= v[1]:
                problems.append(f"{where('search.block', i, r)}{key}.{r} must be [x_from, x_to] with x_from < x_to (m)")
            elif v[1] <= x_lo or v[0] >= x_hi:
                problems.append(f"{where('search.block', i, r)}{key}.{r} {v!r} does not intersect the ground line "
                                f"(x = {x_lo:g} to {x_hi:g} m); give a range on it")
    method = case.get("analysis", {}).get("method")
    if (blocks or "dynamic_programming" in search) and method is not None and method not in POLYLINE_METHODS:
        problems.append(f"{where('analysis', None, 'method')}analysis.method {method!r} takes moments about a point, "
                        "which does not judge block or non-circular surfaces; with [[search.block]] or "
                        f"[search.dynamic_programming] use one of {', '.join(POLYLINE_METHODS)}")


def read_case(path: str | Path) -> dict:
    """Read and check a case file (see :func:`parse_case`).

    Raises
    ------
    CaseError
        When the file is missing, unreadable or has problems (all listed).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CaseError(str(path), ["file not found; give the path of a .toml case file"]) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(str(path), [f"cannot read the file ({exc})"]) from None
    return parse_case(text, str(path))
