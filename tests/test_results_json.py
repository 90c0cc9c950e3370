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
from slipfield.slope.loads import Loads
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
DEMOS = ["levee_soft_clay.toml", "cut_residual_soil.toml", "dam_layered_foundation.toml"]


@pytest.fixture(scope="module", params=DEMOS)
def run_output(request, demo_run):
    return demo_run(request.param)  # one run per demo for the whole session (tests/conftest.py)


def test_document_is_parsed_and_every_number_has_units():
    assert len(SCHEMA) > 100  # the table was read, not skipped by a format change
    no_units = [".".join(p) for p, (types, units, _) in SCHEMA.items()
                if types & {"number", "integer"} and units in ("—", "")]
    assert no_units == []


def test_results_json_follows_the_documented_structure(run_output):
    doc = json.loads((run_output / "results.json").read_text(encoding="utf-8"))
    assert validate(doc, SCHEMA) == []
    assert fs_pf_without_method_or_status(doc) == []
    # every output is listed; the output-folder marker is slipfield's own bookkeeping of that list
    from slipfield.slope.commands.folders import MARKER

    assert sorted(doc["files"]) == sorted(str(p.relative_to(run_output)) for p in run_output.rglob("*")
                                          if p.is_file() and p.name != MARKER)


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
                if "n_failed" not in c:   # a block that reports pf without its counts
                    lo, hi = c["pf_interval_95"]
                    assert 0.0 <= lo <= c["pf"] <= hi <= 1.0, (hyp, run, block)
                    continue
                # the 95 % Wilson interval of (n_failed, n_valid), against scipy's
                # (lo <= pf <= hi alone holds for any Wilson interval: it checked nothing)
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
    ground = np.array([[-50.0, 0.0], [50.0, 0.0]])
    zone = Zone("soil", "soil", [[-50, 0], [50, 0], [50, -20], [-50, -20], [-50, 0]])
    # a seismic coefficient gives the symmetric circle a driving moment (a bank
    # refuses circles whose loads balance about the centre) without changing its shape
    sec = Section(ground, [zone], {"soil": Material("soil", unit_weight=18.0, c=5.0, phi=30.0)},
                  loads=Loads(kh=0.1))
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


# --------------------------------------------------------------------------- report numbers ↔ results.json
def _same(a, b):
    if isinstance(a, (list, tuple)):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    return a == b


@pytest.mark.parametrize("name", DEMOS)
def test_every_comparison_number_is_in_results_json_at_its_key_path(demo_analysis, name):
    from slipfield.slope.report.build import comparison_table
    from slipfield.slope.report.tables import format_value

    case, res, out, doc = demo_analysis(name)
    table = comparison_table(res)
    assert table["hypotheses"] == case.analysis["hypotheses"]
    checked = 0
    for row in table["rows"]:
        for h, cell in row["cells"].items():
            for q, (value, path) in (cell or {}).items() if cell else ():
                if q == "status":
                    continue
                keys = [int(k[1:-1]) if k.startswith("[") else k for k in path.split(".")]
                assert _same(value, _value_at(doc, keys)), (row["label"], h, q, path)
                checked += 1
    # one row per deterministic method and per estimate the case asked for
    labels = [r["label"] for r in table["rows"]]
    for m in case.analysis["methods"]:
        assert f"{m}, deterministic FS" in labels
    assert "spatial simulation, critical surface re-searched" in labels
    assert checked > 20
    # the page prints each of those numbers beside its key path (data-key), as results.json holds it
    html = (out / "report.html").read_text(encoding="utf-8")
    spans = re.findall(r'<span data-key="([^"]+)"[^>]*>([^<]*)</span>', html)
    assert spans
    for path, text in spans:
        keys = [int(k[1:-1]) if k.startswith("[") else k for k in path.split(".")]
        v = _value_at(doc, keys)
        if isinstance(v, list):
            continue  # the interval: its bounds are printed inside the brackets
        assert text == format_value(v), (path, text, v)


def _value_at(doc, keys):
    for k in keys:
        doc = doc[k]
    return doc


@pytest.mark.parametrize("name", ["levee_soft_clay.toml", "dam_layered_foundation.toml"])
def test_every_plotted_risk_point_equals_results_json(demo_analysis, name):
    # annual pf = P(condition per year) × pf | condition (issue 13); each point on the chart must be
    # the value results.json holds, and that value the product of the condition's probability and the
    # pf found at the key path it names.
    from slipfield.slope.report.figures.catalogue import _risk

    case, res, out, doc = demo_analysis(name)
    pts = doc["risk"]["points"]
    assert len(pts) >= 2
    for p in pts:
        keys = p["pf_from"].split(".")
        assert p["pf_given_condition"] == _value_at(doc, keys)
        assert p["annual_pf"] == pytest.approx(p["annual_probability_of_condition"] * p["pf_given_condition"],
                                               rel=1e-12)
    if name == "dam_layered_foundation.toml":  # each hypothesis its own condition probability
        by_h = {p["hypothesis"]: p["annual_probability_of_condition"] for p in pts}
        assert by_h == {"undrained": 0.01, "drained": 1.0}
    fig = _risk(case, res)[0].figure
    ax = fig.axes[0]
    for k, p in enumerate(pts):
        art = [a for a in ax.get_children() + list(ax.lines) if a.get_gid() == f"scenario-{k}"][0]
        x, y = art.get_xdata()[0], art.get_ydata()[0]
        assert x == p["consequence"]
        if p["annual_pf"] > 0:
            assert y == p["annual_pf"]
        else:  # drawn as "below" its upper bound on a log axis
            assert y == p["annual_pf_interval_95"][1]
    legend = [t.get_text() for lg in fig.legends for t in lg.get_texts()]  # below the axes
    for line in doc["risk"]["tolerability"]:
        assert any(line["label"] in t for t in legend)
    foot = [t.get_text() for t in fig.texts if t.get_gid() == "risk-footnote"][0]
    for line in doc["risk"]["tolerability"]:
        assert line["source"] in foot
