"""Subset simulation through the command line: estimator choice, outputs, resume, bad input.

The estimates themselves are checked against closed forms in
tests/simulate/test_rare.py; here: the written outputs agree with each other
(pf is the product of the level probabilities of subset_levels.csv, Au &
Beck 2001 eq. 3), a finished run resumed gives the same bits, and bad input
exits with status 2 naming the key before anything is written.
"""
from __future__ import annotations

import csv
import json
import math

import numpy as np
import pytest

from slipfield.slope.cli import main

CASE = """
[case]
title = "Cohesive slope block (test data, invented)"

[section]
ground = [[-4.0, 0.0], [0.0, 0.0], [30.0, 15.0], [34.0, 15.0]]
bottom = -3.0

[[section.zone]]
name = "clay"
material = "clay"
polygon = [[-4.0, 0.0], [0.0, 0.0], [30.0, 15.0], [34.0, 15.0], [34.0, -3.0], [-4.0, -3.0], [-4.0, 0.0]]

[[material]]
name = "clay"
unit_weight = 20.0
c = 5.0
phi = 25.0
su = { law = "constant", value = 13.0 }

[analysis]
hypotheses = ["undrained"]
methods = ["ordinary"]
method = "ordinary"
slices = 20

[search]
kind = "fixed"
polyline = [[-0.1, 0.01], [0.1, -1.45], [29.9, 13.45], [30.1, 15.01]]

[[random]]
material = "clay"
property = "su"
distribution = "lognormal"
cov = 0.15
theta_h = 40.0
theta_v = 4.0

[simulation]
realisations = 100
seed = 3
cell = 1.0
batch = 100
"""


def _case(tmp_path, extra=""):
    p = tmp_path / "case.toml"
    p.write_text(CASE + extra)
    return str(p)


@pytest.fixture(scope="module")
def auto_run(tmp_path_factory):
    d = tmp_path_factory.mktemp("subset")
    case = _case(d, 'estimator = "auto"\nsamples_per_level = 100\n')
    assert main(["simulate", case, "--out", str(d / "o"), "--quiet"]) == 0
    return case, d / "o"


def test_auto_chooses_subset_and_outputs_agree(auto_run):
    _, out = auto_run
    res = json.loads((out / "results.json").read_text())
    assert res["estimator"] == "subset"
    assert res["estimator_choice"]["first_batch_failures"] < 10      # why auto chose subset
    s = res["simulation"]
    with open(out / "subset_levels.csv", newline="") as fh:
        levels = list(csv.DictReader(fh))
    p = [float(r["conditional probability (-)"]) for r in levels]
    assert s["pf"] == pytest.approx(math.prod(p), rel=1e-12)
    assert float(levels[-1]["threshold FS (-)"]) == 1.0
    assert s["pf_interval_95"][0] < s["pf"] < s["pf_interval_95"][1]
    assert s["beta_from_pf"] > 0 and s["status"] == "failure-level-reached"
    with open(out / "subset_failures.csv", newline="") as fh:
        fails = list(csv.DictReader(fh))
    assert len(fails) == s["failure_samples"]["n"] > 0
    assert all(float(r["FS (-)"]) < 1.0 for r in fails)
    with np.load(out / "subset_typical_failure.npz") as z:
        assert float(z["fs"]) < 1.0 and z["field_clay_su"].ndim == 2
    assert (out / "figures" / "subset_failure_map.png").stat().st_size > 0


def test_finished_run_resumes_to_the_same_bits(auto_run, tmp_path):
    case, out = auto_run
    before = json.loads((out / "results.json").read_text())["simulation"]
    assert main(["simulate", case, "--out", str(out), "--quiet", "--resume"]) == 0
    after = json.loads((out / "results.json").read_text())["simulation"]
    assert after["pf"] == before["pf"] and after["levels"] == before["levels"]


def test_resume_with_other_settings_is_refused(auto_run, capsys):
    case, out = auto_run
    before = sorted(p.name for p in (out / "store").iterdir())
    rc = main(["simulate", case, "--out", str(out), "--quiet", "--resume", "--samples-per-level", "200"])
    assert rc == 2 and "samples_per_level differs" in capsys.readouterr().err
    assert sorted(p.name for p in (out / "store").iterdir()) == before


@pytest.mark.parametrize("args,extra,key", [
    (["--estimator", "subset", "--level-probability", "0.7"], "", "level_probability"),
    (["--estimator", "subset", "--samples-per-level", "50"], "", "samples_per_level"),
    ([], 'estimator = "rare"\n', "simulation.estimator"),
    ([], 'level_probability = 0.2\n', "simulation.level_probability"),
    ([], 'estimator = "subset"\nsamples_per_level = 105\n', "simulation.samples_per_level"),
    ([], 'estimator = "auto"\nfield_method = "spectral"\n', "simulation.field_method"),
    (["--estimator", "subset"], 'field_method = "spectral"\n', "simulation.field_method"),
])
@pytest.mark.parametrize("command", ["simulate", "run", "sweep"])
def test_bad_input_exits_2_naming_the_key_before_writing(tmp_path, capsys, args, extra, key, command):
    case = _case(tmp_path, extra)
    out = tmp_path / "out"
    more = ["--theta-h", "10", "--theta-v", "2"] if command == "sweep" else []
    rc = main([command, case, "--out", str(out), "--quiet", *args, *more])
    assert rc == 2
    assert key in capsys.readouterr().err
    assert not out.exists()


def test_unknown_estimator_option_exits_2(tmp_path, capsys):
    rc = main(["simulate", _case(tmp_path), "--out", str(tmp_path / "o"), "--estimator", "rare"])
    assert rc == 2 and "--estimator" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_sweep_with_subset_simulation(tmp_path):
    # spatial averaging along a 35 m plane: with θ = 10 m the averaged su has a fraction of the
    # point variance (Vanmarcke 1983), so pf at mean FS 1.26 is far below the θ → ∞ value
    case = _case(tmp_path)
    out = tmp_path / "sw"
    assert main(["sweep", case, "--out", str(out), "--quiet", "--theta-h", "10,inf", "--theta-v", "2",
                 "--estimator", "subset", "--samples-per-level", "100"]) == 0
    res = json.loads((out / "sweep.json").read_text())
    assert res["estimator"] == "subset"
    rows = {r["theta_h_run"]: r for r in res["rows"]}
    spatial, single = rows[10.0], rows[None]      # JSON writes inf as null
    for r in (spatial, single):
        assert r["estimator"] == "subset" and r["pf_low"] < r["pf"] < r["pf_high"]
    assert spatial["pf_high"] < single["pf_low"]


def test_resume_from_a_checkpoint_of_the_old_format_exits_2_naming_both_versions(auto_run, tmp_path, capsys):
    # level checkpoints of format version 1 (no version in the store's identity) carry no searched surfaces;
    # continuing them would mix bank surfaces into the chains where the search's polylines governed
    import shutil

    from slipfield.slope.simulate.rare_store import CHECKPOINT_VERSION

    case, out = auto_run
    old = tmp_path / "o"
    shutil.copytree(out, old)
    head = json.loads((old / "store" / "header.json").read_text())
    del head["identity"]["checkpoint_version"]
    (old / "store" / "header.json").write_text(json.dumps(head))
    before = {p: p.stat().st_mtime_ns for p in old.rglob("*")}
    rc = main(["simulate", case, "--out", str(old), "--quiet", "--resume"])
    err = capsys.readouterr().err
    assert rc == 2
    assert "format version 1" in err and f"version {CHECKPOINT_VERSION}" in err and "--overwrite" in err
    assert {p: p.stat().st_mtime_ns for p in old.rglob("*")} == before
