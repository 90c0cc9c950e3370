"""``slipfield run`` on each demo case: every promised file, a valid results.json.

Demo cases are invented scenarios; the checks here are structural and
statistical (pf is the failed fraction, with Wilson's 1927 interval as
scipy computes it), plus one
outside reference: the deterministic FS of every method agrees within 5 %
of Bishop's on the same surface bank, the spread expected between methods
that satisfy moment equilibrium (Duncan, Wright & Brandon 2014, ch. 6,
recalled: rigorous methods and Bishop agree within about 5 % on circles).
"""
import json

import pytest
from scipy.stats import binomtest

from slipfield.slope.cli import main

from support.demos import CASES, DEMO_REALISATIONS


@pytest.mark.parametrize("name", ["levee_soft_clay.toml", "cut_residual_soil.toml"])
def test_run_writes_every_output(demo_run, name):
    out = demo_run(name)
    for f in ("results.json", "report.html", "deterministic.csv", "reliability.csv", "simulation.csv",
              "fs_realisations.csv"):
        assert (out / f).stat().st_size > 0, f
    pngs = list((out / "figures").glob("*.png"))
    assert len(pngs) >= 5 and all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in pngs)
    res = json.loads((out / "results.json").read_text())
    assert res["slipfield_results_version"] == 1 and "judgement" in res["caution"]
    for hyp, methods in res["deterministic"].items():
        bishop = methods["bishop"]["fs"]
        for m in ("bishop", "spencer", "morgenstern-price"):
            if m in methods:
                assert methods[m]["fs"] == pytest.approx(bishop, rel=0.05), (hyp, m)
    for hyp, sim in res["spatial_simulation"].items():
        if sim is None:
            continue
        for k in ("spatial", "single_random_variable"):
            c = sim[k]["critical_surface_searched"]
            # pf is the failed fraction and its interval is Wilson's (1927), computed here by scipy
            assert c["pf"] == c["n_failed"] / c["n_valid"]
            ci = binomtest(c["n_failed"], c["n_valid"]).proportion_ci(0.95, method="wilson")
            assert c["pf_interval_95"] == pytest.approx([ci.low, ci.high], abs=1e-12)
            assert c["n_valid"] + c["n_without_admissible_surface"] == DEMO_REALISATIONS
    assert not any(p.name.startswith(".out.partial") for p in out.parent.iterdir())
    svgs = list((out / "figures").glob("*.svg"))
    assert len(svgs) == len(pngs)


def test_broken_case_exit_2_and_nothing_written(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text((CASES / "levee_soft_clay.toml").read_text().replace("theta_h = 30.0", "theta_h = -3.0", 1))
    out = tmp_path / "out"
    assert main(["run", str(bad), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "random[0].theta_h" in err and "line" in err
    assert not out.exists() and list(tmp_path.iterdir()) == [bad]
