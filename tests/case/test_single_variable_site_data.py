"""Site data in the single-variable analyses: the conditional mean at each slice base.

Design (slope.case.site_means): the property's one random variable U keeps
its prior spread and the standard-normal value on a base becomes μ_c + U,
μ_c the simple-kriging mean of the field at the base.

Closed forms used:

* simple kriging from one datum z_d with error variance σ²_e (standard-normal
  units) at distance d: μ_c = ρ(d) z_d / (1 + σ²_e) (e.g. Rasmussen &
  Williams 2006, Gaussian Processes for Machine Learning, eq. 2.19);
  Markov model ρ(d) = exp(−2d/θ) (Vanmarcke 1983, Random Fields, ch. 5);
* φ = 0 with a constant su law: FS on a fixed circle is proportional to su
  (Bishop's FS with φ = 0 is Σ su l / Σ W sin α), so with a normal factor
  X ~ N(1, σ) shifted by σ z_d the limit state FS − 1 is linear in a normal
  variable and FORM's β is exact: β = (1 + σ z_d − 1/FS₀)/σ (Hasofer & Lind
  1974);
* with a lognormal factor exp(λ + ζ(U + z_d)) the median FS is FS₀·f_d,
  f_d the datum's factor, and β = ln(FS₀ f_d)/ζ exactly.
"""
import math
import textwrap

import numpy as np
import pytest

from slipfield.slope.case.analyses import deterministic, single_variable_reliability
from slipfield.slope.case.build import load_case
from slipfield.slope.case.site_means import gaussian_means
from slipfield.slope.errors import InputError
from slipfield.slope.limit_state import SliceBankLimitState

SU, COV = 40.0, 0.2

CASE = """
[case]
title = "single-variable site data check (invented)"
[section]
ground = [[0.0, 0.0], [10.0, 0.0], [30.0, 10.0], [40.0, 10.0]]
bottom = -8.0
[[section.zone]]
name = "clay"
material = "clay"
polygon = [[0.0, -8.0], [40.0, -8.0], [40.0, 10.0], [30.0, 10.0], [10.0, 0.0], [0.0, 0.0]]
[[material]]
name = "clay"
unit_weight = 18.0
c = 5.0
phi = 25.0
su = {{ law = "constant", value = {su} }}
[analysis]
hypotheses = ["undrained"]
method = "bishop"
methods = ["bishop"]
[search]
kind = "centre-lattice"
trials = 60
x_range = [15.0, 30.0]
y_range = [12.0, 25.0]
[reliability]
methods = {methods}
samples = {samples}
[[random]]
material = "clay"
property = "su"
distribution = "{dist}"
cov = {cov}
theta_h = {theta}
theta_v = {theta}
"""

#: a grid-cell centre of the default 0.5 m simulation grid (x from 0, y from the bottom at −8 m), so the
#: datum is where the spatial simulation holds it too
XD, YD = 5.25, -2.25


def _case(tmp_path, name, *, dist="normal", theta=1e6, data="", methods='["form"]', samples=100):
    text = CASE.format(su=SU, methods=methods, samples=samples, dist=dist, cov=COV, theta=theta)
    path = tmp_path / f"{name}.toml"
    path.write_text(text + textwrap.dedent(data))
    return load_case(path)


def _datum(value, extra=""):
    return f'[[site_data]]\nproperty = "clay.su"\npoints = [[{XD}, {YD}, {value}]]\n{extra}'


@pytest.fixture(scope="module")
def det(tmp_path_factory):
    # the deterministic search does not depend on [[random]] or [[site_data]]: one search for every variant
    case = _case(tmp_path_factory.mktemp("det"), "det")
    d = deterministic(case)
    assert d["undrained"]["methods"]["bishop"]["fs"] > 1.2
    return d


def _fs0(det):
    return det["undrained"]["methods"]["bishop"]["fs"]


def test_one_datum_with_long_theta_moves_the_mean_to_the_datum_and_form_is_exact(tmp_path, det):
    su_d = 34.0
    z_d = (su_d / SU - 1.0) / COV                    # normal factor of mean 1, sd COV
    case = _case(tmp_path, "normal", data=_datum(su_d), methods='["form", "fosm"]')
    s = single_variable_reliability(case, det, "undrained")["summary"]
    fs0 = _fs0(det)
    # θ = 1e6 m: ρ ≥ exp(−2·45/1e6) on the surface, so μ_c = z_d to 1e-4
    assert s["site_data"]["conditional_mean"] == ["clay.su"]
    assert s["site_data"]["fs_at_means"] == pytest.approx(fs0 * (1 + COV * z_d), rel=1e-4)
    assert s["form"]["beta"] == pytest.approx((1 + COV * z_d - 1 / fs0) / COV, rel=1e-4)
    assert s["fosm"]["mean_fs"] == pytest.approx(fs0 * (1 + COV * z_d), rel=1e-4)
    assert s["fosm"]["std_fs"] == pytest.approx(fs0 * COV, rel=1e-6)   # the prior spread is kept
    without = s["site_data"]["without_site_data"]
    assert without["fs_at_means"] == pytest.approx(fs0, rel=1e-12)
    assert without["form"]["beta"] == pytest.approx((1 - 1 / fs0) / COV, rel=1e-6)
    assert "prior" in s["site_data"]["note"] and "spatial simulation" in s["site_data"]["note"]


def test_lognormal_median_is_the_datum_and_form_beta_is_exact(tmp_path, det):
    su_d, n = 32.0, 2000
    case = _case(tmp_path, "lognormal", dist="lognormal", data=_datum(su_d), methods='["form", "monte-carlo"]',
                 samples=n)
    r = single_variable_reliability(case, det, "undrained")
    s, fs = r["summary"], r["arrays"]["monte-carlo"]["fs"]
    fs0, zeta = _fs0(det), math.sqrt(math.log(1 + COV ** 2))
    median = fs0 * su_d / SU
    assert s["form"]["beta"] == pytest.approx(math.log(median) / zeta, rel=1e-4)
    # the fraction of samples below the closed-form median is binomial(n, 1/2): 4 standard errors
    assert abs(np.mean(fs < median) - 0.5) < 4 * 0.5 / math.sqrt(n)
    assert s["monte-carlo"]["pf"] > s["site_data"]["without_site_data"]["monte-carlo"]["pf"]


def test_conditional_mean_on_the_bases_is_simple_kriging_from_one_noisy_datum(tmp_path, det):
    theta, su_d, err = 10.0, 46.0, 2.0
    case = _case(tmp_path, "kriging", theta=theta, data=_datum(su_d, "error_sd = 2.0\n"))
    first = det["undrained"]["bank"]
    bank = first.bank.subset([first.critical_index])
    mu = gaussian_means(case, det, "undrained", bank)[0]
    z_d = (su_d / SU - 1.0) / COV
    nugget = (err / SU / COV) ** 2                   # normal marginal: σ_z = σ_e / (su law · σ of the factor)
    xb, yb = bank.base_points_section_frame(1)
    d = np.hypot(xb[..., 0] - XD, yb[..., 0] - YD)
    expected = np.exp(-2.0 * d / theta) * z_d / (1.0 + nugget)
    np.testing.assert_allclose(mu, expected, rtol=1e-9, atol=1e-12)
    assert np.ptp(mu) > 0.1 * abs(z_d)               # the shift varies along the surface (not a constant)


def test_datum_at_the_prior_median_leaves_every_result_unchanged_bit_for_bit(tmp_path, det):
    methods = '["monte-carlo", "form", "point-estimate"]'
    plain = single_variable_reliability(_case(tmp_path, "plain", methods=methods, samples=200), det,
                                        "undrained")["summary"]
    at_median = single_variable_reliability(_case(tmp_path, "median", methods=methods, samples=200,
                                                  data=_datum(SU)), det, "undrained")["summary"]
    assert "site_data" not in plain and "site_data" not in at_median    # μ_c = 0: nothing was shifted
    assert at_median == plain


def test_phi_beyond_90_degrees_is_named_with_its_fix(tmp_path, det):
    # issue noticed last session: a lognormal φ' sample past 90° was reported as "use a positive marginal"
    case = _case(tmp_path, "phi")
    first = det["undrained"]["bank"]
    bank = first.bank.subset([first.critical_index])
    ls = SliceBankLimitState(bank, case.section.materials, {0: ("clay", "phi")}, hypothesis="drained")
    with pytest.raises(InputError, match=r"φ' reached 95° at an evaluation point.*beyond 90°.*truncated-normal or beta.*cov"):
        ls(np.array([[95.0]]))
    with pytest.raises(InputError, match=r"φ' was -3° \(negative\)"):
        ls(np.array([[-3.0]]))
    ls = SliceBankLimitState(bank, case.section.materials, {0: ("clay", "c")}, hypothesis="drained")
    with pytest.raises(InputError, match=r"c' or su was negative"):
        ls(np.array([[-1.0]]))
    assert np.all(np.isfinite(ls(np.array([[5.0]]))[0]))
