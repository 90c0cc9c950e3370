"""`slipfield simulate` and `slipfield sweep` through the command line.

Outside references: meshio reads the exported XDMF (the exchange format a
finite-element code would read), and pf is checked against the share of
FS < 1 in the written table and its Wilson (1927) interval; resume and
reproducibility are checked against an uninterrupted run of the same seed.
"""
from __future__ import annotations

import csv
import json
from pathlib import Path

import meshio
import numpy as np
import pytest
from scipy import stats

from slipfield.slope.cli import main

CASE = str(Path(__file__).resolve().parents[1] / "cases" / "levee_soft_clay.toml")


def _fs_column(path):
    with open(path, newline="") as fh:
        rows = list(csv.DictReader(fh))
    return [int(r["realisation"]) for r in rows], np.array([float(r["FS critical (-)"]) for r in rows]), rows


@pytest.fixture(scope="module")
def full_run(tmp_path_factory):
    d = tmp_path_factory.mktemp("sim")
    rc = main(["simulate", CASE, "--out", str(d / "full"), "--realisations", "60", "--batch", "20",
               "--quiet", "--export-fields", str(d / "fields")])
    assert rc == 0
    return d


def test_simulate_writes_results_consistent_with_its_table(full_run):
    out = full_run / "full"
    res = json.loads((out / "results.json").read_text())
    idx, fs, rows = _fs_column(out / "fs_realisations.csv")
    assert idx == list(range(60))
    sim = res["simulation"]
    ok = np.isfinite(fs)
    k = int((fs[ok] < 1.0).sum())
    n = int(ok.sum())
    assert sim["pf"] == pytest.approx(k / n)
    # Wilson score interval (Wilson 1927), 95 %
    z = stats.norm.ppf(0.975)
    p = k / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    assert sim["pf_interval_95_wilson"] == pytest.approx([centre - half, centre + half], rel=1e-9)
    assert sim["mean_fs"] == pytest.approx(float(np.mean(fs[ok])))
    # every realisation is accounted for: a status for each, none silently dropped
    assert all(r["status"] for r in rows)
    assert sim["n"] == 60


def test_resume_after_interruption_equals_uninterrupted_run(full_run, tmp_path):
    part = tmp_path / "part"
    assert main(["simulate", CASE, "--out", str(part), "--realisations", "25", "--batch", "20", "--quiet"]) == 0
    assert main(["simulate", CASE, "--out", str(part), "--realisations", "60", "--batch", "20", "--quiet",
                 "--resume"]) == 0
    _, fs_resumed, _ = _fs_column(part / "fs_realisations.csv")
    _, fs_full, _ = _fs_column(full_run / "full" / "fs_realisations.csv")
    np.testing.assert_array_equal(fs_resumed, fs_full)
    assert json.loads((part / "results.json").read_text())["realisations_from_store"] >= 20


def test_resume_against_another_seed_is_refused(full_run, tmp_path, capsys):
    part = tmp_path / "p"
    assert main(["simulate", CASE, "--out", str(part), "--realisations", "10", "--quiet"]) == 0
    before = sorted(p.name for p in (part / "store").iterdir())
    rc = main(["simulate", CASE, "--out", str(part), "--realisations", "20", "--seed", "7", "--quiet", "--resume"])
    assert rc == 2
    assert "seed" in capsys.readouterr().err.lower()
    assert sorted(p.name for p in (part / "store").iterdir()) == before  # nothing lost


def test_exported_fields_read_back_through_meshio_equal_the_simulated_ones(full_run):
    from slipfield.slope.case.analyses import trial_surfaces, random_problem
    from slipfield.slope.case.build import load_case
    from slipfield.slope.simulate import realise_fields

    ex = full_run / "fields"
    text = (ex / "fields.json").read_text()
    manifest = json.loads(text)
    # issue 11: the manifest held Python object reprs; now the marginal's name and parameters
    assert "Marginal(" not in text and "np.float64" not in text
    case = load_case(CASE)
    hyp = manifest["hypothesis"]
    prob = random_problem(case, {hyp: {"bank": trial_surfaces(case, hyp, case.analysis["method"])}}, hyp)
    for prop in manifest["properties"]:
        mg = prop["marginal"]
        assert mg["name"] in ("lognormal", "normal", "truncated-normal", "beta", "uniform", "triangular")
        assert mg["mean"] > 0 and mg["std"] > 0 and isinstance(mg["parameters"], dict)
        with meshio.xdmf.TimeSeriesReader(str(ex / prop["file"])) as reader:
            reader.read_points_cells()
            got = {}
            for i in range(reader.num_steps):
                t, _, cell_data = reader.read_data(i)
                got[int(round(t))] = np.asarray(cell_data[prop["array"]][0])
        assert sorted(got) == list(range(60))
        for k in (0, 17, 59):
            _, fields = realise_fields(prob, manifest["seed"], k)
            ref = np.asarray(fields[prop["key"]]).reshape(-1)
            np.testing.assert_allclose(got[k], ref, rtol=1e-12, equal_nan=True)
    _, fs_idx, _ = _fs_column(ex / "realisations.csv")
    _, fs_run, _ = _fs_column(full_run / "full" / "fs_realisations.csv")
    np.testing.assert_array_equal(fs_idx, fs_run)


@pytest.mark.parametrize("bad", ["5,abc", "0,10", "-3", ""])
def test_bad_sweep_value_exits_2_and_writes_nothing(tmp_path, capsys, bad):
    out = tmp_path / "sw"
    rc = main(["sweep", CASE, "--out", str(out), "--theta-h", bad, "--theta-v", "1", "--quiet"])
    assert rc == 2
    err = capsys.readouterr().err
    assert "--theta-h" in err and len(err.strip().splitlines()) == 1
    assert not out.exists()


def test_unreachable_scheduler_exits_2_quickly_and_writes_nothing(tmp_path, capsys):
    out = tmp_path / "s"
    # how long the refusal takes is measured by scripts/bench_scheduler_refusal.py (no timed tests)
    rc = main(["simulate", CASE, "--out", str(out), "--realisations", "5", "--quiet",
               "--scheduler", "tcp://127.0.0.1:1"])
    assert rc == 2
    assert "--scheduler" in capsys.readouterr().err
    assert not out.exists()


def test_sweep_grid_rows_and_common_random_numbers(tmp_path):
    out = tmp_path / "sw"
    rc = main(["sweep", CASE, "--out", str(out), "--theta-h", "10,inf", "--theta-v", "2",
               "--realisations", "30", "--quiet"])
    assert rc == 0
    doc = json.loads((out / "sweep.json").read_text())
    infinite = lambda v: v is None or v == float("inf")  # noqa: E731 - JSON writes inf as null
    pts = [(r["theta_h"], r["theta_v"]) for r in doc["rows"]]
    assert (10.0, 2.0) in pts and any(infinite(h) for h, _ in pts)
    with open(out / "sweep.csv", newline="") as fh:
        assert len(list(csv.DictReader(fh))) == len(doc["rows"])
    assert any(p.suffix == ".png" and p.stat().st_size > 1000 for p in (out / "figures").iterdir())
    # θ → ∞ point equals the same simulation run on its own with θ → ∞ and the
    # same seed: the sweep uses the run's seed streams at every grid point
    row_inf = next(r for r in doc["rows"] if infinite(r["theta_h"]))
    out2 = tmp_path / "sw2"
    assert main(["sweep", CASE, "--out", str(out2), "--theta-h", "inf", "--theta-v", "inf",
                 "--realisations", "30", "--quiet"]) == 0
    row2 = json.loads((out2 / "sweep.json").read_text())["rows"][0]
    assert row2["pf"] == row_inf["pf"] and row2["mean_fs"] == row_inf["mean_fs"]


def test_simulate_with_refinement_reports_refined_realisations(full_run, tmp_path):
    # the refinement can only lower FS: every realisation's FS is at most the
    # plain run's with the same seed, and the ones it lowered say so
    out = tmp_path / "refined"
    rc = main(["simulate", CASE, "--out", str(out), "--realisations", "6", "--batch", "3", "--quiet",
               "--refine-below", "1.15"])
    assert rc == 0
    res = json.loads((out / "results.json").read_text())
    assert res["simulation"]["refine"]["below"] == 1.15 and res["simulation"]["refine"]["method"] == "spencer"
    _, fs, rows = _fs_column(out / "fs_realisations.csv")
    _, fs_plain, _ = _fs_column(full_run / "full" / "fs_realisations.csv")
    ok = np.isfinite(fs) & np.isfinite(fs_plain[:6])
    assert np.all(fs[ok] <= fs_plain[:6][ok])
    # refined = lowered below the run's own bank FS (its circles alone); the plain run is no
    # reference for that count since it searches near failure by default too
    bank = np.array([float(r["FS circles alone (-)"]) for r in rows])
    lowered = fs < bank
    assert sum(r["status"] == "ok-refined" for r in rows) == res["simulation"]["n_refined"] == int(lowered.sum())


def test_bad_refine_threshold_exits_2_and_writes_nothing(tmp_path, capsys):
    out = tmp_path / "bad"
    try:  # refused while parsing the options (argparse exits 2) or by the command
        rc = main(["simulate", CASE, "--out", str(out), "--realisations", "4", "--quiet", "--refine-below", "-1"])
    except SystemExit as stop:
        rc = stop.code
    assert rc == 2
    assert "--refine-below" in capsys.readouterr().err
    assert not out.exists()
