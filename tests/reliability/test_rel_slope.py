"""Reliability methods on a real slope limit state (SliceBankLimitState).

Outside references used here:

- Undrained (φ = 0) slope on a fixed circle: the base strength is su on
  every slice and the driving moment does not depend on su, so FS is exactly
  proportional to su (Bishop's m_α = cos α when φ = 0; e.g. Duncan, Wright &
  Brandon 2014, *Soil Strength and Slope Stability*, 2nd ed., ch. 6). Hence
  with su = f·su₀: FS = FS₀·f. If f is normal, FS is normal and
  pf = Φ((1/FS₀ − μ_f)/σ_f); if f is lognormal,
  pf = Φ((ln(1/FS₀) − λ)/ζ) (lognormal closed forms).
  FORM is exact for both (linear after the monotone map to u-space) and the
  point estimates are exact for the mean and std of a linear function
  (Rosenblueth 1975, PNAS 72:3812-3814; Hong 1998, Reliab. Eng. Syst. Saf.
  59:261-267).
- c'-φ' two-zone section: FORM is an approximation; the test compares Monte
  Carlo and subset simulation with FORM corrected for curvature by
  Breitung's asymptotic formula (Breitung 1984, J. Eng. Mech. 110(3):357-366):
  pf ≈ Φ(−β) Π(1 + βκᵢ)^(-1/2), κᵢ the principal curvatures of the limit
  state surface at the design point.
- System versus fixed surface: the pf with the surface searched per sample
  is at least that of the fixed surface (Huang, Griffiths & Fenton 2010,
  Soils and Foundations 50(3):343-353).

Monte Carlo intervals are Wilson 99.9 % intervals (Wilson 1927): one fixed
seed per check, so a correct implementation fails such a check with
probability 0.001.
"""
import math

import numpy as np
import pytest
from scipy import special

from slipfield.slope.examples import simple_slope, two_zone_section
from slipfield.slope.reliability import (LimitState, form, hong, monte_carlo, random_vector,
                               rosenblueth, subset_simulation)
from slipfield.slope.limit_state import SliceBankLimitState
from slipfield.slope.search import centre_lattice
from slipfield.slope.strength import Material

LEVEL = 0.999


@pytest.fixture(scope="module")
def undrained():
    """2H:1V undrained slope, H = 10 m, D = 2, su = 40 kPa (invented), fixed critical circle."""
    m = Material("clay", unit_weight=20.0, su_model="constant", su=40.0)
    sec = simple_slope(height=10.0, cot_beta=2.0, depth_factor=2.0, material=m)
    r = centre_lattice(sec, method="bishop", hypothesis="undrained", n_slices=40, nx=10, ny=8,
                       n_radii=8)
    bank = r.bank.subset([r.critical_index])
    inner = SliceBankLimitState(bank, sec.materials, {0: ("soil", "su_factor")},
                                hypothesis="undrained")

    def ls(X):
        # The critical circle carries the 'negative effective base normal
        # force' flag, which the search tolerates (as slope.analysis does);
        # with phi = 0 the base normal force does not enter FS.
        fs, conv, _ = inner(X)
        return fs, conv, np.isfinite(fs) & (fs > 0)

    return ls, float(r.fs_min)


def test_undrained_fs_proportional_to_su(undrained):
    # The premise of the closed forms below: FS(f) = FS0 * f exactly.
    ls, fs0 = undrained
    f = np.array([[0.3], [1.0], [1.7], [2.5]])
    fs = ls(f)[0][:, 0]
    np.testing.assert_allclose(fs, fs0 * f[:, 0], rtol=1e-9)


def test_undrained_normal_su_exact(undrained):
    ls, fs0 = undrained
    # COV 0.2 of su: pf = Phi((1/FS0 - 1)/0.2), about 0.2 at FS0 ~ 1.18.
    # P(f < 0) = Phi(-5) = 3e-7, so a negative draw (which the limit state
    # rejects) is unlikely in 4,000 samples; the seed is fixed anyway.
    mu, sd = 1.0, 0.2
    v = random_vector([dict(name="su_factor", dist="normal", mean=mu, std=sd)])
    exact = special.ndtr((1.0 / fs0 - mu) / sd)
    # FORM: exact for a linear limit state of a normal variable; the residual
    # is the finite-difference gradient and the tol_g stopping rule.
    fr = form(ls, v)
    assert fr.converged
    assert fr.beta == pytest.approx(-special.ndtri(exact), abs=1e-5)
    # Point estimates: mean and std of a linear function are exact.
    for pe in (rosenblueth(ls, v), hong(ls, v)):
        assert pe.mean_fs == pytest.approx(fs0 * mu, rel=1e-10)
        assert pe.std_fs == pytest.approx(fs0 * sd, rel=1e-10)
        assert pe.pf_normal == pytest.approx(exact, rel=1e-8)
    mc = monte_carlo(ls, v, 4000, seed=3, level=LEVEL)
    lo, hi = mc.main.estimate.ci
    assert lo <= exact <= hi, (lo, exact, hi)


def test_undrained_lognormal_su_exact(undrained):
    ls, fs0 = undrained
    cov = 0.3
    v = random_vector([dict(name="su_factor", dist="lognormal", mean=1.0, cov=cov)])
    zeta = math.sqrt(math.log1p(cov * cov))
    lam = -0.5 * zeta * zeta
    exact = special.ndtr((math.log(1.0 / fs0) - lam) / zeta)
    fr = form(ls, v)
    assert fr.converged
    assert fr.pf == pytest.approx(exact, rel=1e-4)
    mc = monte_carlo(ls, v, 20000, seed=5, level=LEVEL)
    lo, hi = mc.main.estimate.ci
    assert lo <= exact <= hi, (lo, exact, hi)
    # The FS distribution itself is lognormal(ln FS0 + lam, zeta): its sample
    # log-mean lies within 4 standard errors zeta/sqrt(n).
    lnfs = np.log(mc.fs)
    assert abs(lnfs.mean() - (math.log(fs0) + lam)) < 4 * zeta / math.sqrt(lnfs.size)


# ---------------------------------------------------------------------------
# c'-phi' section: FORM (curvature-corrected) against Monte Carlo and subset

COLS = [("fill", "c"), ("fill", "phi"), ("clay", "c"), ("clay", "phi")]


@pytest.fixture(scope="module")
def two_zone():
    sec = two_zone_section()
    r = centre_lattice(sec, method="bishop", n_slices=30, nx=8, ny=6, n_radii=6)
    return sec, r


def _variables(sec, k):
    base = {"c": 0.3, "phi": 0.1}
    return random_vector([dict(name=f"{p}_{z}", dist="lognormal", mean=getattr(sec.materials[z], p),
                               cov=k * base[p]) for z, p in COLS])


def _breitung(ls, v, fr, h=0.05):
    """Breitung (1984) factor Π(1 + βκᵢ)^(-1/2) from a finite-difference Hessian at u*."""
    u = fr.design_point_u
    n = u.size
    E = np.eye(n) * h

    def G(U):
        return ls(v.to_physical(U))[0][:, 0] - 1.0

    pts = [u]
    for i in range(n):
        pts += [u + E[i], u - E[i]]
        for j in range(i + 1, n):
            pts += [u + E[i] + E[j], u + E[i] - E[j], u - E[i] + E[j], u - E[i] - E[j]]
    g = G(np.array(pts))
    g0 = g[0]
    H = np.zeros((n, n))
    grad = np.zeros(n)
    k = 1
    for i in range(n):
        gp, gm = g[k], g[k + 1]
        grad[i] = (gp - gm) / (2 * h)
        H[i, i] = (gp - 2 * g0 + gm) / h**2
        k += 2
        for j in range(i + 1, n):
            pp, pm, mp, mm = g[k:k + 4]
            H[i, j] = H[j, i] = (pp - pm - mp + mm) / (4 * h * h)
            k += 4
    a = -grad / np.linalg.norm(grad)
    # Tangent-plane basis: the limit state near u* is t = yᵀ(H/|∇G|)y/2 along α.
    Q, _ = np.linalg.qr(np.column_stack([a, np.eye(n)]))
    T = Q[:, 1:n]
    kappa = np.linalg.eigvalsh(T.T @ H @ T / np.linalg.norm(grad))
    return float(np.prod(1.0 + fr.beta * kappa) ** -0.5), kappa


def test_cphi_form_against_monte_carlo(two_zone):
    sec, r = two_zone
    bank = r.bank.subset([r.critical_index])
    ls = SliceBankLimitState(bank, sec.materials, dict(enumerate(COLS)))
    v = _variables(sec, 1.5)  # COV c' 0.45, phi' 0.15: pf ~ 1e-2
    fr = form(ls, v)
    assert fr.converged
    b, kappa = _breitung(ls, v, fr)
    # Tolerance: the Wilson 99.9 % interval of 20,000 samples (pf ~ 1e-2)
    # contains the curvature-corrected FORM pf; FORM's own first-order error
    # is the Breitung factor, asked to be modest (within 30 %) so that the
    # comparison is meaningful and FORM is near the sampled pf.
    mc = monte_carlo(ls, v, 20000, seed=11, level=LEVEL, keep_samples=False)
    lo, hi = mc.main.estimate.ci
    assert 0.7 < b < 1.3, kappa
    assert lo <= fr.pf * b <= hi, (lo, fr.pf, b, hi)


def test_cphi_subset_against_form_small_pf(two_zone):
    """pf ~ 3e-4 (COVs c' 0.3, phi' 0.1): subset simulation against
    curvature-corrected FORM within a factor exp(3 Σδᵢ) (Au & Beck 2001
    upper bracket of the CoV, three standard deviations of ln pf)."""
    sec, r = two_zone
    bank = r.bank.subset([r.critical_index])
    ls = SliceBankLimitState(bank, sec.materials, dict(enumerate(COLS)))
    v = _variables(sec, 1.0)
    fr = form(ls, v)
    b, _ = _breitung(ls, v, fr)
    ss = subset_simulation(ls, v, seed=21, n_per_level=2000)
    ref = fr.pf * b
    assert 1e-5 < ref < 1e-3
    assert abs(math.log(ss.pf / ref)) < 3 * ss.cov_pf_upper, (ss.pf, ref, ss.cov_pf_upper)


def test_system_pf_at_least_fixed_surface(two_zone):
    """Huang, Griffiths & Fenton (2010): per-sample search over the bank
    (which contains the fixed surface) gives FS ≤ fixed-surface FS sample by
    sample, and pf_system ≥ pf_fixed; with two zones of random strength the
    critical surface changes between samples, so pf_system is strictly
    larger here (the count of samples where another surface is critical)."""
    sec, r = two_zone
    counted = np.flatnonzero(r.counted)
    fixed_bank = r.bank.subset([r.critical_index])
    all_bank = r.bank.subset(counted)
    assign = dict(enumerate(COLS))
    ls = LimitState(SliceBankLimitState(fixed_bank, sec.materials, assign),
                    searched=SliceBankLimitState(all_bank, sec.materials, assign))
    v = _variables(sec, 1.5)
    mc = monte_carlo(ls, v, 3000, seed=31, surface="both", keep_samples=False)
    f = mc.surfaces["fixed"].evaluation
    s = mc.surfaces["searched"].evaluation
    ok = f.valid & s.valid
    assert ok.mean() > 0.99
    assert np.all(s.fs[ok] <= f.fs[ok] + 1e-9)
    pf_f = mc.surfaces["fixed"].estimate.pf
    pf_s = mc.surfaces["searched"].estimate.pf
    assert pf_s >= pf_f
    assert np.sum((s.fs < 1) & (f.fs >= 1)) > 0
    assert pf_s > pf_f


def test_research_surface_never_above_the_fixed_surface():
    # Huang, Griffiths & Fenton 2010: the least FS over the trial surfaces of
    # each sample is at most the fixed surface's, so the system pf is at least
    # the single-surface pf; same seed, same samples, compared sample by sample
    from slipfield.slope.case import analyses as analysis
    from slipfield.slope.case.build import load_case
    from support.demos import CASES

    case = load_case(CASES / "levee_soft_clay.toml")
    case.data["analysis"]["hypotheses"] = ["undrained"]
    case.data["analysis"]["methods"] = ["bishop"]
    case.data["search"]["trials"] = 200
    det = analysis.deterministic(case)
    out = {}
    for research in (False, True):
        case.data["reliability"] = {"methods": ["monte-carlo"], "samples": 400, "tornado_k": 2.0,
                                    "research_surface": research}
        out[research] = analysis.single_variable_reliability(case, det, "undrained")
    fixed = np.asarray(out[False]["arrays"]["monte-carlo"]["fs"], float)
    searched = np.asarray(out[True]["arrays"]["monte-carlo"]["fs"], float)
    ok = np.isfinite(fixed) & np.isfinite(searched)
    assert ok.sum() > 350
    assert np.all(searched[ok] <= fixed[ok] + 1e-12)
    assert np.any(searched[ok] < fixed[ok] - 1e-6)   # the search does find other surfaces
    assert out[True]["summary"]["monte-carlo"]["pf"] >= out[False]["summary"]["monte-carlo"]["pf"]
    assert out[True]["summary"]["surface"].startswith("re-searched")
