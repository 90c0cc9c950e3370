"""Studies on top of the simulator: averaging report, θ sweep, fields, failure map,
and the Griffiths & Fenton (2004) undrained slope.

Statistical checks are two-sided z-tests at level ALPHA with standard errors
from the binomial sample size (no tuned tolerances).
"""
import math

import numpy as np
import pytest
from scipy.stats import norm

from slipfield.fields.marginals import make_marginal
from slipfield.slope.case import analyses as analysis
from slipfield.slope.case.build import load_case
from slipfield.slope.examples import simple_slope
from slipfield.slope.methods import factor_of_safety
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty, averaging_report, realise_fields, simulate, theta_sweep
from slipfield.slope.simulate.engine import base_values, bilinear
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle

from support.problems import build, gf_problem

ALPHA = 1e-3
Z_CRIT = norm.ppf(1 - ALPHA / 2)
CASE = "cases/levee_soft_clay.toml"


def _se(p, n):
    return math.sqrt(max(p * (1 - p), 1e-12) / n)


# ------------------------------------------------------ averaging report --
@pytest.fixture(scope="module")
def levee():
    import pathlib

    case = load_case(pathlib.Path(__file__).resolve().parents[2] / CASE)
    # keep the test small: one hypothesis and method, a coarser search
    case.data["analysis"]["hypotheses"] = ["undrained"]
    case.data["analysis"]["methods"] = ["bishop"]
    case.data["search"]["trials"] = 300
    case.data["reliability"] = {"methods": ["monte-carlo"], "samples": 2000, "tornado_k": 2.0}
    det = analysis.deterministic(case)
    return case, det, analysis.random_problem(case, det, "undrained")


@pytest.fixture(scope="module")
def report(levee):
    return averaging_report(levee[2], 300, seed=2026, batch=100)


def test_averaging_report_structure(report, levee):
    p = levee[2]
    assert set(report) >= {"n", "seed", "as_given", "single_variable", "variance_reduction_fs", "analytic"}
    for part in ("as_given", "single_variable"):
        s = report[part]
        assert s["lo"] <= s["pf"] <= s["hi"]
        assert s["std_fs"] > 0 and np.isfinite(s["mean_fs"])
    assert [a["property"] for a in report["analytic"]] == [q.key for q in p.properties]
    np.testing.assert_allclose(report["variance_reduction_fs"],
                               report["as_given"]["std_fs"] ** 2 / report["single_variable"]["std_fs"] ** 2)


def test_averaging_report_gamma_is_vanmarcke_markov(report, levee):
    # Markov closed form γ = 2(a + e^(−a) − 1)/a², a = 2T/θ (Vanmarcke 1983),
    # along θh with T the length of the fixed surface in the zone: the 1D
    # simplification reported beside the surface's own γ
    p = levee[2]
    for a, q in zip(report["analytic"], p.properties):
        assert q.model == "exponential"
        x = 2 * a["length_m"] / q.theta_h
        g = 2 * (x + math.exp(-x) - 1) / x ** 2
        np.testing.assert_allclose(a["gamma_1d_theta_h"], g, rtol=1e-6)
        np.testing.assert_allclose(a["std_averaged"], a["std_point"] * math.sqrt(a["gamma"]), rtol=1e-9)
        assert 0 < a["length_m"] and 0 < a["gamma"] < 1
        # a curved surface crossing the thin layers (θv ≪ θh) averages more
        # than a horizontal line of the same length: γ along it is smaller
        assert a["gamma"] < a["gamma_1d_theta_h"]


def test_analytic_estimate_between_given_and_single_variable(report):
    # the quick estimate reduces σ, so its pf lies below the θ → ∞ pf on the
    # same surface (pf < 0.5 here); a one-sided binomial check at level ALPHA
    a, b = report["analytic_estimate"], report["single_variable"]
    n = report["n"]
    assert a["std_fs"] < b["std_fs"]
    assert b["pf_fixed"] - a["pf_fixed"] > -Z_CRIT * math.hypot(_se(a["pf_fixed"], n), _se(b["pf_fixed"], n))


def test_theta_inf_agrees_with_single_variable_reliability(report, levee):
    # the same property set as one random variable each on the fixed critical
    # surface, by slope.analysis' own Monte Carlo (independent code path and
    # random stream): the two pf estimates must agree within their noise
    case, det, _ = levee
    mc = analysis.single_variable_reliability(case, det, "undrained")["summary"]["monte-carlo"]
    ours = report["single_variable"]["pf_fixed"]
    se = math.sqrt(_se(mc["pf"], mc["n_valid"]) ** 2 + _se(ours, report["n"]) ** 2)
    assert abs(ours - mc["pf"]) < Z_CRIT * se, (ours, mc["pf"], se)
    # the system pf (minimum over the bank) is at least the fixed-surface pf
    # realisation by realisation (Huang, Griffiths & Fenton 2010)
    assert report["single_variable"]["pf"] >= report["single_variable"]["pf_fixed"]


# ----------------------------------------- a small undrained slope (demo) --
@pytest.fixture(scope="module")
def gf_det():
    return gf_problem(math.inf, 0.5)


def test_gf2004_deterministic_fs(gf_det):
    # Taylor's chart FS ≈ 1.47 for C = 0.25, D = 2 (recalled from memory, as
    # quoted by Griffiths & Lane 1999 / Griffiths & Fenton 2004); a coarse
    # 6x6x4 lattice overestimates the minimum slightly: 5 % band
    _, fs_det = gf_det
    assert 1.47 * 0.98 < fs_det < 1.47 * 1.05


def test_gf2004_single_variable_pf(gf_det):
    # θ → ∞: one lognormal C per realisation; pf = Φ[(ln C_f − μlnC)/σlnC]
    # with C_f = 0.25/FS_det (C_f = 0.17 in the paper; v = 0.5 gives
    # pf ≈ 0.28, recalled from memory)
    p, fs_det = gf_det
    v = 0.5
    s2 = math.log(1 + v * v)
    pf_exact = norm.cdf((math.log(0.25 / fs_det) - (math.log(0.25) - s2 / 2)) / math.sqrt(s2))
    c_paper = norm.cdf((math.log(0.17) - (math.log(0.25) - s2 / 2)) / math.sqrt(s2))
    assert abs(c_paper - 0.2809) < 5e-4   # the formula reproduces the listed value
    r = simulate(p, 400, seed=3)
    assert abs(r.pf - pf_exact) < Z_CRIT * _se(pf_exact, 400), (r.pf, pf_exact)


def test_gf2004_low_cov_spatial_averaging_lowers_pf_and_pf_rises_with_theta(gf_det):
    # Griffiths & Fenton 2004 (trend recalled from memory): at low COV
    # (v = 0.25) a small Θ = θ/H gives a lower pf than the single random
    # variable, and pf rises towards the single-variable value as Θ grows.
    # theta_sweep uses common random numbers, so the rows are comparable.
    _, fs_det = gf_det
    v, n = 0.25, 300
    p, _ = gf_problem(5.0, v)
    s2 = math.log(1 + v * v)
    pf_single = norm.cdf((math.log(0.25 / fs_det) - (math.log(0.25) - s2 / 2)) / math.sqrt(s2))
    rows = theta_sweep(p, [5.0, 20.0], [5.0, 20.0], n, seed=5, batch=150)
    diag = {r["theta_h"]: r["pf"] for r in rows if r["theta_h"] == r["theta_v"]}
    diag[math.inf] = simulate(gf_problem(math.inf, v)[0], n, seed=5, batch=150).pf
    # Θ = 0.5 against the exact single-variable pf: one-sided z-test
    assert diag[5.0] < pf_single - norm.ppf(1 - ALPHA) * _se(pf_single, n), (diag, pf_single)
    assert diag[5.0] <= diag[20.0] <= diag[math.inf]
    assert abs(diag[math.inf] - pf_single) < Z_CRIT * _se(pf_single, n)


def test_theta_sweep_uses_common_random_numbers(gf_det):
    # CRN: neighbouring θ give strongly correlated FS, so the paired difference
    # of the failure indicators is far less noisy than between two runs on
    # independent streams (another seed), whose paired sd is the independent one
    v, n = 0.5, 300
    a = simulate(gf_problem(8.0, v)[0], n, seed=5)
    b = simulate(gf_problem(9.0, v)[0], n, seed=5)
    c = simulate(gf_problem(9.0, v)[0], n, seed=6)
    ia, ib, ic = ((r.fs < 1).astype(float) for r in (a, b, c))
    crn = np.std(ia - ib, ddof=1)
    indep = np.std(ia - ic, ddof=1)
    assert np.corrcoef(a.fs, b.fs)[0, 1] > 0.8
    # for independent streams crn/indep would be ~1 (sd of the ratio ~0.05 at n = 300)
    assert crn < 0.6 * indep, (crn, indep)
    # the sweep's rows are these runs: same seed and streams at every θ
    rows = theta_sweep(gf_problem(8.0, v)[0], [8.0, 9.0], [8.0, 9.0], n, seed=5)
    by = {(r["theta_h"], r["theta_v"]): r["pf"] for r in rows}
    assert by[(8.0, 8.0)] == a.pf and by[(9.0, 9.0)] == b.pf


# ------------------------------------------------ fields and failure map --
def test_realise_fields_reproduces_realisation_k():
    p, _ = gf_problem(6.0, 0.5)
    seed, ks = 4, [0, 1, 2, 3, 4]
    vals = base_values(p, seed, ks)["clay.su"]          # (s, m, n) as the run computes them
    xb, yb = p.bank.base_points_section_frame(4)
    valid = np.asarray(p.bank.valid, bool)   # rejected rows carry NaN geometry
    xb, yb, vals = xb[valid], yb[valid], vals[:, valid]
    for row, k in ((1, 1), (4, 4)):
        grid, f = realise_fields(p, seed, k)
        mine = bilinear(grid, f["clay.su"][None], xb, yb)[0].mean(axis=-1)
        ok = np.isfinite(mine)   # bases whose interpolation cells all lie inside the zone
        assert ok.sum() > 100
        np.testing.assert_allclose(mine[ok], vals[row][ok], rtol=1e-10)
    # and a different k gives a different field
    assert not np.allclose(realise_fields(p, seed, 1)[1]["clay.su"], realise_fields(p, seed, 2)[1]["clay.su"],
                           equal_nan=True)


def test_failure_map_counts_failures():
    p, _ = gf_problem(20.0, 0.5)
    r = simulate(p, 200, seed=8)
    n_fail = int(np.sum(np.isfinite(r.fs) & (r.fs < 1)))
    assert n_fail > 10
    # one cell enclosing the whole section: every failed surface counted once
    whole = r.failure_map([-1e3, 1e3], [-1e3, 1e3])
    np.testing.assert_allclose(whole.sum() * r.n, n_fail)
    fine = r.failure_map(np.linspace(-20, 40, 31), np.linspace(-10, 10, 11))
    assert fine.max() <= n_fail / r.n + 1e-12


def test_failure_map_lies_where_the_failed_surface_is_on_a_slope_facing_minus_x():
    # issue 11: the map binned slice positions in the sliding frame, so it was
    # mirrored for slopes facing -x (this one: the face rises to the right).
    # theta -> inf: each realisation is the homogeneous slope (FS proportional
    # to su), so every failed realisation has the same critical circle; its
    # cuts with the ground line come from the circle itself (surfaces.cut_ground),
    # not from the bank the map reads, and the mass lies between them.
    from slipfield.slope.surfaces import cut_ground

    p, _ = gf_problem(math.inf, 0.5)
    assert p.bank.direction[p.fixed_index] == -1
    r = simulate(p, 60, seed=8)
    failed = np.isfinite(r.fs) & (r.fs < 1)
    n_fail = int(failed.sum())
    assert n_fail >= 5
    (j,) = set(r.critical_index[failed].tolist())
    x1, x2 = cut_ground(p.section, p.surfaces[j])
    sec = p.section
    m = r.failure_map([sec.x_min - 1.0, x1, x2, sec.x_max + 1.0], [sec.base_y - 1.0, 1e3])
    np.testing.assert_allclose(m[:, 0] * r.n, [0, n_fail, 0])
