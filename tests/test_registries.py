"""Every name a registry lists is run end to end from a case file (issue 11 item 2, issue 12).

The lists are read from the registries themselves (methods of slices,
searches, reliability estimators, correlation models, marginals, field
generators, averaging rules, interslice functions), so a name added to a
registry is run here without editing this file. Checks of numbers stay
loose on purpose (finite, ordered, within bounds): the published-value
checks of each engine live in its own tests. The small case is invented.
"""
from __future__ import annotations

import csv
import json
import math

import numpy as np
import pytest

from slipfield.fields import MODEL_NAMES, generator_names
from slipfield.slope.case.analyses import deterministic, random_problem, single_variable_reliability
from slipfield.slope.case.build import load_case
from slipfield.slope.case.schema import CASE_INTERSLICE, DISTRIBUTIONS, SCHEMA
from slipfield.slope.methods import METHOD_NAMES
from slipfield.slope.reliability.registry import ESTIMATOR_NAMES
from slipfield.slope.search import SEARCHES, case_search_names, critical_surface
from slipfield.slope.search.dynamic_programming import DPSettings
from slipfield.slope.simulate import realise_fields, simulate
from slipfield.slope.simulate.problem import AVERAGING

CASE = """
[case]
title = "registry walk"
[section]
ground = [[0.0, 10.0], [10.0, 10.0], [25.0, 0.0], [40.0, 0.0]]
bottom = -5.0
[[section.layer]]
name = "upper"
material = "clay"
bottom = 2.0
[[section.layer]]
name = "lower"
material = "stiff"
[[material]]
name = "clay"
unit_weight = 18.0
c = 8.0
phi = 25.0
[[material]]
name = "stiff"
unit_weight = 19.0
c = 15.0
phi = 30.0
[analysis]
hypotheses = ["drained"]
slices = 10
[search]
trials = 40
[[random]]
material = "clay"
property = "c"
cov = 0.3
theta_h = 10.0
theta_v = 2.0
[[random]]
material = "clay"
property = "phi"
cov = 0.1
theta_h = 10.0
theta_v = 2.0
[simulation]
realisations = 4
cell = 2.0
batch = 4
[reliability]
samples = 20
"""


def _load(tmp_path, text, name="case"):
    p = tmp_path / f"{name}.toml"
    p.write_text(text, encoding="utf-8")
    return load_case(p)


def _with(text, old, new):
    assert old in text, old
    return text.replace(old, new, 1)


def test_schema_lists_are_the_registries():
    """The schema's choices are the registries' names, not retyped lists."""
    assert SCHEMA["analysis"]["method"].check("no-such-method") and not SCHEMA["analysis"]["method"].check("bishop")
    for name in METHOD_NAMES:
        assert SCHEMA["analysis"]["method"].check(name) is None
    for name in case_search_names():
        assert SCHEMA["search"]["kind"].check(name) is None
    for name in ESTIMATOR_NAMES:
        assert SCHEMA["reliability"]["methods"].check([name]) is None
    for name in MODEL_NAMES:
        assert SCHEMA["random"]["model"].check(name) is None
    for name in generator_names():
        assert SCHEMA["simulation"]["field_method"].check(name) is None
    for name in DISTRIBUTIONS:
        assert SCHEMA["random"]["distribution"].check(name) is None
    assert SCHEMA["random"]["distribution"].check("deterministic")  # no spread: not a random property


def test_every_method_and_interslice_function_from_a_case(tmp_path):
    text = _with(CASE, 'hypotheses = ["drained"]',
                 'hypotheses = ["drained"]\nmethods = [' + ", ".join(f'"{m}"' for m in METHOD_NAMES) + "]")
    fs = {}
    for inter in CASE_INTERSLICE:
        case = _load(tmp_path, _with(text, "slices = 10", f'slices = 10\ninterslice = "{inter}"'), inter)
        rows = deterministic(case)["drained"]["methods"]
        assert set(rows) == set(METHOD_NAMES)
        fs[inter] = {m: r["fs"] for m, r in rows.items()}
    for inter, by_method in fs.items():
        assert all(v is not None and 0.5 < v < 5 for v in by_method.values()), (inter, by_method)
    # only Morgenstern-Price reads the interslice function
    others = [m for m in METHOD_NAMES if m != "morgenstern-price"]
    assert len({tuple(fs[i][m] for m in others) for i in fs}) == 1


@pytest.mark.parametrize("kind", case_search_names())
def test_every_case_search_from_a_case(kind, tmp_path):
    tables = {"centre-lattice": "trials = 40", "window": 'kind = "window"\ntrials = 40\nentry = [2.0, 10.0]\n'
              'exit = [24.0, 32.0]', "fixed": 'kind = "fixed"\ncircle = { x = 18.0, y = 18.0, r = 17.0 }'}
    assert set(tables) >= set(case_search_names()), "a new case search needs its [search] table here"
    case = _load(tmp_path, _with(CASE, "trials = 40", tables[kind]))
    row = deterministic(case)["drained"]["methods"]["bishop"]
    assert row["search"] == kind and row["fs"] is not None and row["fs"] > 0


def test_every_library_search(tmp_path):
    """Searches the case file cannot name (refine, block, dynamic-programming) run through the one library dispatcher."""
    sec = _load(tmp_path, CASE).section
    opts = {"centre-lattice": dict(nx=4, ny=4, n_radii=4),
            "window": dict(upslope=(2.0, 10.0), downslope=(24.0, 32.0), n_up=4, n_down=4, n_radii=4),
            "fixed": dict(surfaces=critical_surface(sec, "centre-lattice", nx=4, ny=4, n_radii=4).critical),
            "refine": dict(max_evaluations=40, n_vertices=5),
            # entries from 4 m: blocks entering nearer the section's end all need more interslice shear than
            # the clay carries across their sides (ratios 1.08-9.6, slope.search.interslice_strength), so none counts
            "block": dict(zone="upper", entry=(4.0, 10.0), exit=(16.0, 21.0), points=3),
            "dynamic-programming": dict(settings=DPSettings(columns=6, nodes=5, passes=1))}
    assert set(opts) == set(SEARCHES), "a new search needs its options here"
    for name in SEARCHES:
        res = critical_surface(sec, name, n_slices=10, **opts[name])
        assert res.critical is not None and 0 < res.fs_min < 10, name


def test_every_estimator_from_a_case(tmp_path):
    methods = ", ".join(f'"{m}"' for m in ESTIMATOR_NAMES)
    case = _load(tmp_path, _with(CASE, "samples = 20", f"samples = 20\nmethods = [{methods}]"))
    rel = single_variable_reliability(case, deterministic(case), "drained")["summary"]
    for name in ESTIMATOR_NAMES:
        row = rel[name]
        assert "status" not in row or not row["status"].startswith("not computed"), (name, row)
        assert row["n_evaluations"] > 0, name
        pf = row.get("pf", row.get("pf_lognormal"))
        assert pf is not None and 0.0 <= pf <= 1.0, (name, row)


def _simulated(tmp_path, text, name):
    case = _load(tmp_path, text, name)
    det = {"drained": {"bank": deterministic(case)["drained"]["bank"]}}
    prob = random_problem(case, det, "drained")
    res = simulate(prob, 4, 1, batch=4)
    return case, prob, res


@pytest.mark.parametrize("model", MODEL_NAMES)
def test_every_correlation_model_from_a_case(model, tmp_path):
    nu = "\nnu = 1.5" if model == "matern" else ""
    _, prob, res = _simulated(tmp_path, _with(CASE, 'property = "c"\ncov = 0.3', f'property = "c"\ncov = 0.3\n'
                                                                                 f'model = "{model}"{nu}'), model)
    assert prob.properties[0].model == model
    assert np.isfinite(res.fs).all()


@pytest.mark.parametrize("method", generator_names())
def test_every_field_generator_from_a_case(method, tmp_path):
    _, prob, res = _simulated(tmp_path, _with(CASE, "cell = 2.0", f'cell = 2.0\nfield_method = "{method}"'), method)
    assert prob.field_method == method and np.isfinite(res.fs).all()


@pytest.mark.parametrize("rule", list(AVERAGING))
def test_every_averaging_rule_from_a_case(rule, tmp_path):
    _, prob, res = _simulated(tmp_path, _with(CASE, "cell = 2.0", f'cell = 2.0\naveraging = "{rule}"'), rule)
    assert prob.averaging == rule and np.isfinite(res.fs).all()


# How a case states each marginal of c' (kPa); the bounds each must respect.
MARGINAL_STATEMENTS = {
    "normal": ('distribution = "normal"\ncov = 0.1', (-math.inf, math.inf)),
    "lognormal": ('distribution = "lognormal"\ncov = 0.3', (0.0, math.inf)),
    "truncated-normal": ('distribution = "truncated-normal"\ncov = 0.3\nlower = 2.0', (2.0, math.inf)),
    "beta": ('distribution = "beta"\ncov = 0.3\nlower = 2.0\nupper = 20.0', (2.0, 20.0)),
    "uniform": ('distribution = "uniform"\nlower = 4.0\nupper = 12.0', (4.0, 12.0)),
    "triangular": ('distribution = "triangular"\nlower = 4.0\nmode = 7.0\nupper = 12.0', (4.0, 12.0)),
}


def test_marginal_statements_cover_the_registry():
    assert set(MARGINAL_STATEMENTS) == set(DISTRIBUTIONS)


@pytest.mark.parametrize("dist", sorted(MARGINAL_STATEMENTS))
def test_every_marginal_from_a_case(dist, tmp_path):
    """Each marginal the schema lists runs from a case file through the simulator (uniform and triangular
    could not: the schema required cov, which they do not take, and had no mode)."""
    statement, (lo, hi) = MARGINAL_STATEMENTS[dist]
    case, prob, res = _simulated(tmp_path, _with(CASE, 'property = "c"\ncov = 0.3', f'property = "c"\n{statement}'),
                                 dist)
    m = prob.properties[0].marginal
    assert m.name == dist and np.isfinite(res.fs).all()
    _, fields_ = realise_fields(prob, 1, 0)
    values = np.asarray(fields_[prob.properties[0].key], float)
    values = values[np.isfinite(values)]
    assert values.size and values.min() >= lo and values.max() <= hi
    assert np.unique(values).size > 1  # a field, not a constant


@pytest.mark.slow
def test_fosm_and_subset_reach_results_and_tables(tmp_path):
    """``[reliability] methods = ["fosm", "subset"]`` runs in ``slipfield run`` and is written like the others
    (they were silently left out)."""
    from slipfield.slope.cli import main

    text = _with(CASE, "samples = 20", 'samples = 20\nmethods = ["fosm", "subset"]')
    (tmp_path / "case.toml").write_text(text, encoding="utf-8")
    assert main(["run", str(tmp_path / "case.toml"), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    doc = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    rel = doc["single_variable_reliability"]["drained"]
    assert rel["fosm"]["status"] == "ok" and rel["fosm"]["std_fs"] > 0
    assert 0.0 <= rel["subset"]["pf"] <= 1.0 and rel["subset"]["n_levels"] >= 1
    with open(tmp_path / "out" / "reliability.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))[1:]
    text = " ".join(r[1].lower() for r in rows)
    assert len(rows) == 2 and "fosm" in text and "subset" in text


def test_readme_documents_every_key_and_name():
    """The README's case-file table names every key of the schema and every name of the registries."""
    import re
    from pathlib import Path

    from slipfield.slope.simulate.refinement import REFINE_SEARCHES

    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    section = text[text.index("## The case file"):]
    section = section[:section.index("\n## ", 5)]
    words = set(re.findall(r"[A-Za-z_][A-Za-z0-9_\-]*", section))
    keys = {k for table in SCHEMA.values() for k in table}
    names = (set(METHOD_NAMES) | set(case_search_names()) | set(ESTIMATOR_NAMES) | set(DISTRIBUTIONS)
             | set(generator_names()) | set(CASE_INTERSLICE) | set(REFINE_SEARCHES) | set(MODEL_NAMES)
             | set(AVERAGING))
    assert not (keys - words), f"keys missing from the README's case-file table: {sorted(keys - words)}"
    assert not (names - words), f"names missing from the README's case-file table: {sorted(names - words)}"
