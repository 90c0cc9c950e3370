"""``results.json`` written by ``run_case`` against its documented structure.

The structure is the table in ``docs/results-json.md``; this test parses that
table (so the document and the check cannot drift apart) and walks a real
``results.json`` of each demo case (invented scenarios, few realisations):

- every key is documented, with its JSON type;
- every required key is present;
- every number has units in the document;
- every FS or pf travels with a method and a status;
- every pf lies inside its own 95 % interval (Wilson 1927 score interval,
  which always contains the point estimate) and equals the share of FS < 1
  in ``fs_realisations.csv`` (the per-realisation table written beside it).

The sliding-mass geometry reported for failures is checked against the
closed-form area and depth of a circular segment.
"""
import csv
import json
import math
import re
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import binomtest

from slipfield.slope.bank import build_bank
from slipfield.slope.commands.run import run_case, sliding_mass_geometry
from slipfield.slope.section import Section, Zone
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle
from support.demos import DEMO_REALISATIONS

ROOT = Path(__file__).resolve().parents[1]
DOC = ROOT / "docs" / "results-json.md"
CASES = ROOT / "cases"


# Wildcards of the document's paths; `None` = any key.
WILDCARDS = {
    "<hypothesis>": {"undrained", "drained"},
    "<run>": {"spatial", "single_random_variable"},
    "<sampling>": {"monte-carlo", "latin-hypercube"},
    "<stat>": {"median", "mean", "p05", "p95", "min", "max"},
    "<method>": None,
    "<name>": None,
}
JSON_TYPES = {dict: "object", list: "array", str: "string", bool: "boolean", int: "integer", float: "number",
              type(None): "null"}


def load_schema(text):
    """Rows of the documented table: {path tuple: (types, units, required)}."""
    rows = {}
    for line in text.splitlines():
        m = re.match(r"^\| `([^`]+)` \| ([^|]+?(?:\\\|[^|]+?)*) \| ([^|]+) \| (yes|no) \|", line)
        if not m:
            continue
        path = tuple(m.group(1).split("."))
        types = set(m.group(2).replace("\\|", "|").split("|"))
        assert types <= set(JSON_TYPES.values()), (m.group(1), types)
        assert path not in rows, f"{m.group(1)} documented twice"
        rows[path] = (types, m.group(3).strip(), m.group(4) == "yes")
    return rows


def _matches(pattern, path):
    if len(pattern) != len(path):
        return False
    for p, k in zip(pattern, path):
        if p in WILDCARDS:
            allowed = WILDCARDS[p]
            if allowed is not None and k not in allowed:
                return False
        elif p != k:
            return False
    return True


def validate(doc, schema):
    """List every disagreement between a results dict and the documented structure."""
    errors = []

    def walk(v, path):
        t = JSON_TYPES[type(v)]
        if path:
            hits = [p for p in schema if _matches(p, path)]
            if not hits:
                errors.append(f"undocumented key {'.'.join(path)}")
                return
            best = min(hits, key=lambda p: sum(s in WILDCARDS for s in p))
            types = schema[best][0]
            if t not in types and not (t == "integer" and "number" in types):
                errors.append(f"{'.'.join(path)}: type {t}, documented {'|'.join(sorted(types))}")
        if isinstance(v, dict):
            for p, (_, _, req) in schema.items():
                if req and len(p) == len(path) + 1 and _matches(p[:-1], path) and p[-1] not in WILDCARDS \
                        and p[-1] not in v:
                    errors.append(f"missing required key {'.'.join(path + (p[-1],))}")
            for k, x in v.items():
                walk(x, path + (k,))
        elif isinstance(v, list):
            for x in v:
                walk(x, path + ("[]",))

    walk(doc, ())
    return errors


def fs_pf_without_method_or_status(doc):
    """Paths of objects holding an FS or pf with no method or no status on them or their parents."""
    bad = []

    def walk(v, path, chain):
        if isinstance(v, dict):
            chain = chain + [v]
            if any(k in v and isinstance(v[k], (int, float)) for k in ("fs", "pf")):
                has_m = any(("method" in o or "ci_method" in o or "scheme" in o) for o in chain[-3:])
                has_s = any("status" in o for o in chain[-3:])
                if not (has_m and has_s):
                    bad.append(".".join(path))
            for k, x in v.items():
                walk(x, path + [k], chain)
        elif isinstance(v, list):
            for x in v:
                walk(x, path + ["[]"], chain)

    walk(doc, [], [])
    return bad


SCHEMA = load_schema(DOC.read_text(encoding="utf-8"))


@pytest.fixture(scope="module", params=["levee_soft_clay.toml", "cut_residual_soil.toml"])
def run_output(request, demo_run):
    return demo_run(request.param)


def test_document_is_parsed_and_every_number_has_units():
    assert len(SCHEMA) > 100  # the table was read, not skipped by a format change
    no_units = [".".join(p) for p, (types, units, _) in SCHEMA.items()
                if types & {"number", "integer"} and units in ("—", "")]
    assert no_units == []


def test_results_json_follows_the_documented_structure(run_output):
    doc = json.loads((run_output / "results.json").read_text(encoding="utf-8"))
    assert validate(doc, SCHEMA) == []
    assert fs_pf_without_method_or_status(doc) == []
    assert sorted(doc["files"]) == sorted(str(p.relative_to(run_output)) for p in run_output.rglob("*")
                                          if p.is_file())


def test_pf_inside_interval_and_equal_to_the_per_realisation_table(run_output):
    doc = json.loads((run_output / "results.json").read_text(encoding="utf-8"))
    with open(run_output / "fs_realisations.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    checked = 0
    for hyp, sim in doc["spatial_simulation"].items():
        if sim is None:
            continue
        for run in ("spatial", "single_random_variable"):
            r = sim[run]
            for block in ("critical_surface_searched", "fixed_deterministic_surface"):
                c = r[block]
                if c["pf"] is None:
                    continue
                # the 95 % Wilson interval of (n_failed, n_valid), against scipy's
                # (lo <= pf <= hi alone holds for any Wilson interval: it checked nothing)
                if "n_failed" not in c:   # a block that reports pf without its counts
                    lo, hi = c["pf_interval_95"]
                    assert 0.0 <= lo <= c["pf"] <= hi <= 1.0, (hyp, run, block)
                    continue
                ref = binomtest(c["n_failed"], c["n_valid"]).proportion_ci(0.95, method="wilson")
                assert c["pf_interval_95"] == pytest.approx([ref.low, ref.high], rel=1e-12, abs=1e-15)
                assert c["pf"] == pytest.approx(c["n_failed"] / c["n_valid"], rel=1e-15)
                checked += 1
            c = r["critical_surface_searched"]
            assert c["n_valid"] + c["n_without_admissible_surface"] == r["realisations"] == DEMO_REALISATIONS
            assert c["n_failed"] == round(c["pf"] * c["n_valid"])
            assert r["failure_geometry"]["n_failed"] == c["n_failed"]
        fs = np.array([float(x["FS critical (-)"]) for x in rows if x["hypothesis"] == hyp])
        ok = np.isfinite(fs)
        assert sim["spatial"]["critical_surface_searched"]["pf"] == pytest.approx((fs[ok] < 1).mean(), abs=1e-12)
        for shown in sim["spatial"]["realisations_shown"]:
            assert fs[shown["realisation"]] == pytest.approx(shown["fs"], rel=1e-9)
    for hyp, rel in doc["single_variable_reliability"].items():
        for m in ("monte-carlo", "latin-hypercube"):
            if rel and m in rel:
                r = rel[m]
                ref = binomtest(r["n_failed"], r["n_valid"]).proportion_ci(0.95, method="wilson")
                assert r["pf_interval_95"] == pytest.approx([ref.low, ref.high], rel=1e-12, abs=1e-15)
                checked += 1
    assert checked > 0


def test_validator_reports_undocumented_mistyped_and_missing_keys(run_output):
    # Negative control: a results dict with one fault of each kind must be caught.
    doc = json.loads((run_output / "results.json").read_text(encoding="utf-8"))
    doc["surprise"] = 1
    doc["wall_time_s"] = "fast"
    hyp = next(iter(doc["deterministic"]))
    meth = next(iter(doc["deterministic"][hyp]))
    del doc["deterministic"][hyp][meth]["status"]
    errs = validate(doc, SCHEMA)
    assert "undocumented key surprise" in errs
    assert any(e.startswith("wall_time_s: type string") for e in errs)
    assert f"missing required key deterministic.{hyp}.{meth}.status" in errs
    assert fs_pf_without_method_or_status(doc) == [f"deterministic.{hyp}.{meth}"]


def test_sliding_mass_geometry_of_a_circular_segment():
    # Closed form: a circle of radius r whose centre is d above a flat ground
    # cuts a segment of area r² acos(d/r) − d √(r² − d²) and depth r − d.
    # Tolerances: Simpson's rule per slice on a smooth arc (error ∝ h⁴), and the
    # depth sampled every h/2 misses the lowest point by ≤ (h/4)²/(2r) ≈ 6e-4 m.
    r, d = 10.0, 5.0
    # ground tilted by 1e-6 (level within 0.1 mm over 100 m): a perfectly level
    # ground would give the symmetric lens no driving moment, and the bank
    # rejects such circles; the tilt changes the segment by ~1e-5 m²
    ground = np.array([[-50.0, 0.0], [50.0, 1e-4]])
    zone = Zone("soil", "soil", [[-50, 0], [50, 1e-4], [50, -20], [-50, -20], [-50, 0]])
    sec = Section(ground, [zone], {"soil": Material("soil", unit_weight=18.0, c=5.0, phi=30.0)})
    bank = build_bank(sec, Circle(0.0, d, r), n_slices=40)
    assert bank.valid[0]
    area, depth = sliding_mass_geometry(bank, [0, 0])
    exact = r**2 * math.acos(d / r) - d * math.sqrt(r**2 - d**2)
    np.testing.assert_allclose(area, exact, rtol=1e-3)
    np.testing.assert_allclose(depth, r - d, atol=1e-3)
    with pytest.raises(ValueError, match="index"):
        sliding_mass_geometry(bank, [-1])


@pytest.mark.slow
def test_refinement_from_the_case_file_is_reported_and_documented(tmp_path):
    # [simulation] refine_below reaches both runs of every hypothesis and the
    # refined results follow the same documented structure
    text = (CASES / "levee_soft_clay.toml").read_text(encoding="utf-8")
    case = tmp_path / "levee_refined.toml"
    case.write_text(text.replace("batch = 100\n", "batch = 100\nrefine_below = 1.05\n", 1), encoding="utf-8")
    out = tmp_path / "out"
    run_case(case, out, realisations=12, jobs=1, figure_formats=("png",))
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert validate(doc, SCHEMA) == []
    sims = [s for s in doc["spatial_simulation"].values() if s]
    assert sims
    for s in sims:
        for run in ("spatial", "single_random_variable"):
            r = s[run]
            assert r["refine"]["below"] == 1.05 and r["refine"]["method"] == "spencer"
            assert 0 <= r["n_refined"] <= r["realisations"]
