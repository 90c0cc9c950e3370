"""Site investigation data of a case (``[[site_data]]``): read, checked, mapped to Gaussian space.

A ``[[site_data]]`` entry gives measurements of one random property
(``property = "material.property"``) in its physical units (kPa, degrees)
as a vertical profile (``x`` and ``readings = [[elevation, value], ...]``),
single ``points = [[x, elevation, value], ...]`` or a CSV ``file`` beside
the case (columns ``x,elevation,value``), with a measurement error
``error_sd`` (property units) or ``error_cov`` (fraction of the value);
zero error (the default) makes the field pass through the data.

Mapping to the field's standard-normal space: a value ``v`` becomes
``z = Φ⁻¹(F(v'))`` with ``F`` the property's marginal and ``v' = v`` for c'
and φ', ``v' = v / su_law(x, y)`` for su (the field is a factor on the
material's su law, so the trend with depth is taken out first).  The error
SD is carried to Gaussian space to first order (delta method):
``σ_z = σ_v' f(v') / φ(z)``, an approximation that is exact for a normal
marginal and close for a lognormal one while ``σ_e / v`` is small.
"""
from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import stats

from .errors import InputError

__all__ = ["SiteReadings", "read_site_data", "gaussian_site_data"]


@dataclass(frozen=True)
class SiteReadings:
    """Measurements of one property from one ``[[site_data]]`` entry.

    Attributes
    ----------
    key : str
        ``material.property``.
    points : ndarray (n, 2)
        (x, elevation) of each reading (m).
    values : ndarray (n,)
        Measured values (property units).
    error_sd : ndarray (n,)
        Measurement-error standard deviation (property units, >= 0).
    labels : tuple of str
        Where each reading comes from, for messages.
    """

    key: str
    points: np.ndarray
    values: np.ndarray
    error_sd: np.ndarray
    labels: tuple

    def describe(self) -> dict:
        """Plain summary (tied to results through the problem's fingerprint)."""
        return {"key": self.key, "points": np.round(self.points, 9).tolist(),
                "values": self.values.tolist(), "error_sd": self.error_sd.tolist()}


def _csv_rows(path: Path, where: str, problems: list):
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            rows = list(csv.reader(fh))
    except FileNotFoundError:
        problems.append(f"{where}.file: {path.name!r} is not beside the case ({path.parent}); put the CSV "
                        "there or correct the name")
        return []
    except (OSError, UnicodeDecodeError) as exc:
        problems.append(f"{where}.file: cannot read {path.name!r} ({exc})")
        return []
    head = [h.strip().lower() for h in rows[0]] if rows else []
    if head[:3] != ["x", "elevation", "value"]:
        problems.append(f"{where}.file: {path.name}, row 1 must be the header x,elevation,value "
                        f"(found {','.join(rows[0]) if rows else 'an empty file'})")
        return []
    out = []
    for r, row in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in row):
            continue
        try:
            if len(row) != 3:
                raise ValueError
            vals = [float(c) for c in row]
            if not all(math.isfinite(v) for v in vals):
                raise ValueError
        except ValueError:
            problems.append(f"{where}.file: {path.name}, row {r} ({','.join(row)!r}) is not three numbers "
                            "x,elevation,value; fix or delete the row")
            continue
        out.append((vals, f"{where}.file {path.name} row {r}"))
    if not out and not any(p.startswith(f"{where}.file") for p in problems):
        problems.append(f"{where}.file: {path.name} has no readings below its header")
    return out


def read_site_data(data: dict, case_path, section) -> list[SiteReadings]:
    """The checked ``[[site_data]]`` entries of a case.

    Parameters
    ----------
    data : dict
        Checked case tables (``slope.case.schema.parse_case``).
    case_path : str or Path
        The case file (CSV files are read beside it).
    section : slope.section.Section

    Returns
    -------
    list of SiteReadings

    Raises
    ------
    InputError
        Listing every problem (one per line): a reading outside the section
        or outside the zones of the property's material, a bad CSV row,
        two readings at one place with different values and zero error.
    """
    problems: list[str] = []
    out = []
    folder = Path(case_path).resolve().parent
    ground = np.asarray(section.ground, float)
    for i, d in enumerate(data.get("site_data", [])):
        where = f"site_data[{i}]"
        key = d["property"]
        material = key.rsplit(".", 1)[0]
        rows = []
        if "readings" in d:
            rows = [([float(d["x"]), e, v], f"{where}.readings[{k}]") for k, (e, v) in enumerate(d["readings"])]
        elif "points" in d:
            rows = [(list(map(float, p)), f"{where}.points[{k}]") for k, p in enumerate(d["points"])]
        elif "file" in d:
            rows = _csv_rows(folder / d["file"], where, problems)
        if not rows:
            continue
        pts = np.array([r[0][:2] for r in rows], float)
        vals = np.array([r[0][2] for r in rows], float)
        labels = tuple(r[1] for r in rows)
        if "error_cov" in d:
            err = float(d["error_cov"]) * np.abs(vals)
        else:
            err = np.full(vals.size, float(d.get("error_sd", 0.0)))
        x, y = pts[:, 0], pts[:, 1]
        outside = (x < ground[0, 0]) | (x > ground[-1, 0]) | (y < float(section.base_y)) | (y > section.ground_y(x) + 1e-9)
        zone = section.zone_at(x, y)
        mats = [z.material for z in section.zones]
        for k in np.flatnonzero(outside):
            problems.append(f"{labels[k]}: ({x[k]:g}, {y[k]:g}) m lies outside the section (ground line x from "
                            f"{ground[0, 0]:g} to {ground[-1, 0]:g} m, between the bottom at {float(section.base_y):g} m "
                            "and the ground); correct the position or remove the reading")
        for k in np.flatnonzero(~outside):
            if zone[k] < 0 or mats[zone[k]] != material:
                found = "no zone" if zone[k] < 0 else f"zone {section.zones[zone[k]].name!r} of {mats[zone[k]]!r}"
                problems.append(f"{labels[k]}: ({x[k]:g}, {y[k]:g}) m lies in {found}, not in the material "
                                f"{material!r} whose {key.rsplit('.', 1)[1]} it measures; correct the position "
                                "or the property")
        out.append(SiteReadings(key, pts, vals, err, labels))
    # two readings at one place: different values need a measurement error
    for key in sorted({s.key for s in out}):
        group = [s for s in out if s.key == key]
        pts = np.concatenate([s.points for s in group])
        vals = np.concatenate([s.values for s in group])
        err = np.concatenate([s.error_sd for s in group])
        labels = sum((s.labels for s in group), ())
        seen = {}
        for k, p in enumerate(map(tuple, np.round(pts, 9))):
            if p in seen:
                j = seen[p]
                if vals[j] != vals[k] and err[j] == 0 and err[k] == 0:
                    problems.append(f"{labels[k]}: same place as {labels[j]} ({p[0]:g}, {p[1]:g}) m with a different "
                                    f"value ({vals[k]:g} vs {vals[j]:g}) and zero error; give error_sd or error_cov, "
                                    "or keep one of them")
            else:
                seen[p] = k
    if problems:
        raise InputError("\n".join(problems))
    return out


def _su_law(material, x, y, section):
    """The material's deterministic su (kPa) at points (constant, depth, elevation laws)."""
    m = material
    if m.su_model == "constant":
        return np.full(np.shape(x), float(m.su))
    if m.su_model == "depth":
        return m.su + m.su_gradient * np.maximum(section.ground_y(x) - y, 0.0)
    if m.su_model == "elevation":
        return m.su + m.su_gradient * (m.su_datum - y)
    raise InputError(f"material {m.name!r}: site data on su need an su law constant, depth or elevation")


def gaussian_site_data(readings, prop, section):
    """Readings of one random property in its field's standard-normal space.

    Parameters
    ----------
    readings : list of SiteReadings
        Entries with ``key == prop.key``.
    prop : slope.simulate.RandomProperty
    section : slope.section.Section

    Returns
    -------
    points : ndarray (n, 2), m
    z : ndarray (n,)
        Standard-normal values.
    nugget : ndarray (n,)
        Measurement-error variances in standard-normal units.

    Raises
    ------
    InputError
        A value the marginal cannot take (naming the reading), or a property
        that site data cannot condition.
    """
    if prop.prop in ("su_ratio", "unit_weight") or prop.single:
        raise InputError(f"site_data for {prop.key}: measurements condition spatially random c, phi or su "
                         "(finite theta_h and theta_v); remove the entry or make the property a field")
    pts = np.concatenate([r.points for r in readings])
    vals = np.concatenate([r.values for r in readings])
    err = np.concatenate([r.error_sd for r in readings])
    labels = sum((r.labels for r in readings), ())
    if prop.multiplier:
        det = _su_law(section.materials[prop.material], pts[:, 0], pts[:, 1], section)
        if np.any(det <= 0):
            k = int(np.flatnonzero(det <= 0)[0])
            raise InputError(f"{labels[k]}: the su law of {prop.material!r} is 0 there, so the measured su "
                             "cannot be expressed as a factor on it; move the reading or revise the law")
        v, e = vals / det, err / det
    else:
        v, e = vals, err
    m = prop.marginal
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.asarray(m.to_standard_normal(v), float)
    bad = ~np.isfinite(z)
    if np.any(bad):
        k = int(np.flatnonzero(bad)[0])
        unit = "factor on the su law" if prop.multiplier else "value"
        raise InputError(f"{labels[k]}: {vals[k]:g} ({unit} {v[k]:g}) is a value the {prop.key} marginal cannot "
                         f"take (support [{m.lower:g}, {m.upper:g}], bounds excluded); check the reading or "
                         "the [[random]] distribution")
    dz = np.asarray(m.pdf(v), float) / stats.norm.pdf(z)
    nugget = np.square(e * dz)
    return pts, z, nugget
