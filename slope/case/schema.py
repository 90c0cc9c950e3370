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

from ..errors import InputError

__all__ = ["CaseError", "read_case", "parse_case", "SCHEMA", "METHOD_NAMES", "FIELD_MODEL_NAMES"]

METHOD_NAMES = ("ordinary", "bishop", "janbu", "spencer", "morgenstern-price")
FIELD_MODEL_NAMES = ("exponential", "markov", "gaussian", "squared-exponential",
                     "second-order-markov", "spherical", "matern")
DISTRIBUTIONS = ("normal", "lognormal", "truncated-normal", "beta", "uniform", "triangular")
SEARCH_KINDS = ("centre-lattice", "window", "fixed")
RANDOM_PROPERTIES = ("c", "phi", "su", "su_ratio", "unit_weight")


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
        "interslice": Key(_string(("constant", "half-sine", "clipped-sine")), default="half-sine"),
    },
    "search": {
        "kind": Key(_string(SEARCH_KINDS), default="centre-lattice"),
        "trials": Key(_integer(lo=10), default=1500, doc="number of trial surfaces in the bank"),
        "x_range": Key(_number_list(min_len=2), doc="[x_min, x_max] of circle centres or of the entry/exit region (m)"),
        "y_range": Key(_number_list(min_len=2), doc="[y_min, y_max] of circle centres (m)"),
        "entry": Key(_number_list(min_len=2), doc="window search: [x_from, x_to] where surfaces enter the ground (m)"),
        "exit": Key(_number_list(min_len=2), doc="window search: [x_from, x_to] where surfaces leave the ground (m)"),
        "min_depth": Key(_number(lo=0), default=0.5, doc="reject surfaces shallower than this (m)"),
        "circle": Key(_table, doc="fixed circle {x, y, r} (m)"),
        "polyline": Key(_points(2), doc="fixed surface, [x, y] points (m)"),
    },
    "random": {
        "material": Key(_string(), required=True),
        "property": Key(_string(RANDOM_PROPERTIES), required=True),
        "distribution": Key(_string(DISTRIBUTIONS), default="lognormal"),
        "mean": Key(_number(), doc="default: the material's value"),
        "cov": Key(_number(lo=0, lo_open=True), required=True, doc="coefficient of variation (-)"),
        "lower": Key(_number(), doc="lower bound (bounded distributions)"),
        "upper": Key(_number(), doc="upper bound (bounded distributions)"),
        "theta_h": Key(_number(lo=0, lo_open=True, allow_inf=True), required=True, doc="horizontal scale of fluctuation (m) or \"inf\""),
        "theta_v": Key(_number(lo=0, lo_open=True, allow_inf=True), required=True, doc="vertical scale of fluctuation (m) or \"inf\""),
        "model": Key(_string(FIELD_MODEL_NAMES), default="exponential"),
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
        "field_method": Key(_string(("fft", "cholesky", "kl", "spectral")), default="fft"),
        "averaging": Key(_string(("base-average", "midpoint")), default="base-average"),
        "jobs": Key(_integer(lo=1), default=1),
        "batch": Key(_integer(lo=1), default=100),
        "refine_below": Key(_number(lo=0, lo_open=True),
                            doc="refine the critical surface of realisations with a bank FS below this (-)"),
        "refine_method": Key(_string(("spencer", "morgenstern-price", "janbu")), default="spencer",
                             doc="method of slices of the refined polylines"),
    },
    "reliability": {
        "methods": Key(_string_list(("monte-carlo", "latin-hypercube", "point-estimate", "fosm", "form", "subset")),
                       default=["monte-carlo", "point-estimate", "form"]),
        "samples": Key(_integer(lo=10), default=5000),
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
ARRAY_TABLES = ("material", "surcharge", "random", "cross_correlation")
#: Nested array tables (parent table, key).
NESTED_ARRAYS = {("section", "zone"), ("section", "layer"), ("risk", "tolerability"), ("water", "piezometric"),
                 ("risk", "hypothesis")}


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
    for key, value in data.items():
        if key not in schema:
            close = difflib.get_close_matches(key, list(schema), n=1, cutoff=0.75)
            hint = f"did you mean {close[0]!r}?" if close else f"known keys: {', '.join(schema)}"
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
    for i, mat in enumerate(case.get("material", [])):
        if isinstance(mat.get("su"), dict):
            mat["su"] = _check_table(mat["su"], "material.su", f"material[{i}].su", "material", i, where, problems)
    for name in ("case", "analysis", "simulation", "seismic"):
        if name not in case:
            case[name] = _check_table({}, name, name, name, None, where, problems)
    if "section" not in raw:
        problems.append("[section] is missing: give at least the ground line and the zones")
    if not case.get("material"):
        problems.append("no [[material]] is defined: every zone needs one")
    _check_references(case, where, problems)
    if problems:
        raise CaseError(path, problems)
    return case


def _check_references(case: dict, where, problems: list[str]) -> None:
    """Cross-table checks: names, references, combinations."""
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
    props = set()
    for i, r in enumerate(case.get("random", [])):
        mat = materials.get(r.get("material"))
        if r.get("material") is not None and mat is None:
            problems.append(f"{where('random', i, 'material')}random[{i}].material {r.get('material')!r} matches no [[material]]; "
                            f"use one of: {', '.join(map(str, materials)) or 'none'}")
            continue
        p = r.get("property")
        if mat is not None and p is not None:
            su = mat.get("su")
            ok = {
                "c": "c" in mat, "phi": "phi" in mat, "unit_weight": True,
                "su": su is not None and (not isinstance(su, dict) or su.get("law") in ("constant", "depth", "elevation")),
                "su_gradient": isinstance(su, dict) and su.get("law") in ("depth", "elevation"),
                "su_ratio": isinstance(su, dict) and su.get("law") == "ratio",
            }[p]
            if not ok:
                problems.append(f"{where('random', i, 'property')}random[{i}].property {p!r}: material {r['material']!r} has no such parameter to vary")
            if p == "unit_weight" and not all(_is_inf(r.get(t)) for t in ("theta_h", "theta_v")):
                problems.append(f"{where('random', i, 'theta_h')}random[{i}]: a unit weight is random only as one "
                                "variable per zone; give theta_h = \"inf\" and theta_v = \"inf\"")
            key = f"{r['material']}.{p}"
            if key in props:
                problems.append(f"{where('random', i, None)}random[{i}]: {key} is made random twice")
            props.add(key)
        dist = r.get("distribution")
        if dist in ("beta", "uniform", "triangular"):
            for b in ("lower", "upper"):
                if b not in r:
                    problems.append(f"{where('random', i, None)}random[{i}].{b} is missing: distribution {dist!r} needs lower and upper bounds")
        if "lower" in r and "upper" in r and r["lower"] >= r["upper"]:
            problems.append(f"{where('random', i, 'lower')}random[{i}]: lower ({r['lower']}) must be below upper ({r['upper']})")
    for i, cc in enumerate(case.get("cross_correlation", [])):
        between = cc.get("between", [])
        if len(between) != 2:
            problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}].between must name exactly two random properties")
            continue
        for b in between:
            if b not in props:
                problems.append(f"{where('cross_correlation', i, 'between')}cross_correlation[{i}].between: {b!r} is not a random property; "
                                f"use \"material.property\" of a [[random]] entry (defined: {', '.join(sorted(props)) or 'none'})")
    search = case.get("search", {})
    if search.get("kind") == "fixed" and "circle" not in search and "polyline" not in search:
        problems.append(f"{where('search', None, 'kind')}search.kind = \"fixed\" needs search.circle {{x, y, r}} or search.polyline")
    if "circle" in search:
        c = search["circle"]
        for k in ("x", "y", "r"):
            if not isinstance(c.get(k), (int, float)) or isinstance(c.get(k), bool):
                problems.append(f"{where('search', None, 'circle')}search.circle.{k} must be a number (m)")
        if isinstance(c.get("r"), (int, float)) and c.get("r", 0) <= 0:
            problems.append(f"{where('search', None, 'circle')}search.circle.r must be > 0 (m)")
    for key in ("x_range", "y_range", "entry", "exit"):
        v = search.get(key)
        if v is not None and (len(v) != 2 or v[0] >= v[1]):
            problems.append(f"{where('search', None, key)}search.{key} must be [low, high] with low < high")
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
