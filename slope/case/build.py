"""From a checked case file to the objects the engines use.

:func:`load_case` reads and checks a case (:mod:`slope.case_schema`) and
builds the section, its materials, water and loads. Problems found while
building (zones that overlap, a surface that misses the ground, ...) are
reported with the same :class:`~slope.case_schema.CaseError`, naming the
case file, so the command line can print them and exit 2.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .schema import CaseError, read_case, to_float
from ..errors import InputError
from ..loads import Loads, StripLoad, TensionCrack
from ..section import Section, Zone
from ..strength import Material
from ..water import Water

__all__ = ["Case", "load_case", "build_section", "build_materials"]


@dataclass
class Case:
    """A case read from a file: the checked tables and the built section.

    Attributes
    ----------
    path : str
        The case file.
    data : dict
        Checked tables with defaults (see :data:`slope.case_schema.SCHEMA`).
    section : Section
        The cross-section with materials, water and loads.
    """

    path: str
    data: dict
    section: Section
    extras: dict = field(default_factory=dict)

    @property
    def title(self) -> str:
        return self.data["case"]["title"]

    @property
    def analysis(self) -> dict:
        return self.data["analysis"]

    @property
    def simulation(self) -> dict:
        return self.data["simulation"]

    @property
    def randoms(self) -> list:
        return self.data.get("random", [])


def build_materials(data: dict) -> dict[str, Material]:
    """Materials by name from the checked ``[[material]]`` tables."""
    out = {}
    for m in data.get("material", []):
        su = m.get("su")
        kw = dict(name=m["name"], unit_weight=float(m["unit_weight"]),
                  unit_weight_sat=float(m.get("unit_weight_sat", m["unit_weight"])),
                  c=float(m.get("c", 0.0)), phi=float(m.get("phi", 0.0)))
        if isinstance(su, dict):
            kw.update(su_model=su["law"], su=float(su.get("value", 0.0)),
                      su_gradient=float(su.get("gradient", 0.0)), su_datum=float(su.get("datum", 0.0)),
                      su_ratio=float(su.get("ratio", 0.0)), su_min=float(su.get("minimum", 0.0)))
        elif su is not None:
            kw.update(su_model="constant", su=float(su))
        out[m["name"]] = Material(**kw)
    return out


def _closed(poly) -> np.ndarray:
    p = np.asarray(poly, dtype=float)
    if np.hypot(*(p[-1] - p[0])) > 1e-9:
        p = np.vstack([p, p[:1]])
    return p


def build_section(data: dict) -> Section:
    """Build the :class:`Section` (zones, materials, water, loads) of a checked case.

    Raises
    ------
    InputError
        When the geometry is inconsistent (e.g. zones overlap or leave gaps).
    """
    sec = data["section"]
    materials = build_materials(data)
    water = None
    w = data.get("water")
    if w:
        water = Water(phreatic=w.get("phreatic"), ru=w.get("ru"),
                      piezometric={p["zone"]: p["line"] for p in w.get("piezometric", [])},
                      inclination_correction=w.get("inclination_correction", True),
                      gamma_w=float(w.get("unit_weight", 9.81)))
    strips = [StripLoad(s["x_from"], s["x_to"], s["q"], s.get("q_end")) for s in data.get("surcharge", [])]
    crack = None
    if "tension_crack" in data:
        tc = data["tension_crack"]
        crack = TensionCrack(tc["depth"], tc.get("water_filled", False), tc.get("fill", 1.0))
    kh = float(data.get("seismic", {}).get("kh", 0.0))
    loads = Loads(strips, kh=kh, crack=crack) if (strips or crack or kh) else None
    ground = np.asarray(sec["ground"], dtype=float)
    if sec.get("layer"):
        base_y = sec.get("bottom")
        if base_y is None:
            raise InputError("section.bottom is missing: a section given by layers needs the elevation of its base (m)")
        layers = [(lay["name"], lay["material"], lay.get("bottom")) for lay in sec["layer"]]
        return Section.from_layers(ground, layers, materials, base_y, water=water, loads=loads)
    zones = [Zone(z["name"], z["material"], _closed(z["polygon"])) for z in sec.get("zone", [])]
    return Section(ground, zones, materials, water=water, loads=loads, base_y=sec.get("bottom"))


def load_case(path: str | Path) -> Case:
    """Read, check and build a case file.

    Parameters
    ----------
    path : str or Path
        A ``.toml`` case file (schema: :mod:`slope.case_schema`).

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        Listing every problem of the file (syntax, keys, values, references),
        or the first geometric problem met while building the section.
    """
    data = read_case(path)
    try:
        section = build_section(data)
    except InputError as exc:
        if isinstance(exc, CaseError):
            raise
        # the library's parameter names become the case file's keys
        msg = str(exc).replace("lower base_y", "lower section.bottom").replace("base_y", "section.bottom")
        raise CaseError(str(path), [f"[section]/[water]/loads: {msg}"]) from None
    case = Case(str(path), data, section)
    if data.get("site_data"):
        from ..site_data import read_site_data

        try:
            case.extras["site_data"] = read_site_data(data, path, section)
        except InputError as exc:
            raise CaseError(str(path), str(exc).split("\n")) from None
    return case


def theta_value(v) -> float:
    """θ from the case (number or ``"inf"``) as float, m."""
    return to_float(v)
