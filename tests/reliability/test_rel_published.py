"""A published slope reliability example: Griffiths & Fenton (2004).

Griffiths & Fenton 2004, "Probabilistic slope stability analysis by finite
elements", JGGE 130(5):507-518. Undrained 2H:1V slope, depth factor D = 2,
mean C = cu/(γH) = 0.25; lognormal cu treated as a *single* random variable
(no spatial variation). Their closed form: FS = 1 at C = 0.17 (Taylor's
charts), so pf = Φ[(ln 0.17 − μ_lnC)/σ_lnC] with σ²_lnC = ln(1 + v²),
μ_lnC = ln 0.25 − σ²_lnC/2, giving pf = 0.0745 (v = 0.25), 0.2809 (v = 0.5)
and 0.4813 (v = 1). These four-decimal pf values, the C = 0.17 and the
FS = 1.47 for C = 0.25 (Taylor 1937/1948 stability charts) are
**recalled from memory**, not read
from the paper here; tolerances below are set for that.

What is checked:

1. The recalled pf values follow from the recalled closed form (so the
   recollection is self-consistent): to ±0.0005, the rounding of a four-
   decimal value plus a margin for a mis-remembered last digit.
2. Our Bishop FS of the critical circle of that slope against Taylor's
   1.47 (recalled): within 2 %. Taylor's charts are read to about two
   significant figures of the stability number (0.17), i.e. ±0.005/0.17
   ≈ ±3 %; 2 % is a little tighter than the chart reading but wider than
   the spread of our search (about 0.2 % between a 12×10×9 and a 20×16×12
   centre lattice).
3. pf of our program (FORM, exact here because FS ∝ cu on a fixed φ = 0
   circle, and crude Monte Carlo) against the published pf: the published
   value must lie between the pf our closed form gives for FS₀(1 ± 2 %),
   the same FS allowance as in 2., propagated; and the Monte Carlo Wilson
   99.9 % interval must contain FORM's pf (a fixed seed fails such a check
   with probability 0.001 for a correct program).
"""
import math

import numpy as np
import pytest
from scipy import special

from slipfield.slope.examples import simple_slope
from slipfield.slope.reliability import form, monte_carlo, pf_lognormal, random_vector
from slipfield.slope.limit_state import SliceBankLimitState
from slipfield.slope.search import centre_lattice
from slipfield.slope.strength import Material

H, GAMMA, C_MEAN = 10.0, 20.0, 0.25
C_CRIT = 0.17                                  # recalled from memory (Griffiths & Fenton 2004)
PUBLISHED = {0.25: 0.0745, 0.5: 0.2809, 1.0: 0.4813}  # recalled from memory
FS_TAYLOR = 1.47                               # recalled from memory (Taylor's charts)
FS_TOL = 0.02


def _pf_closed(v, c_crit):
    s2 = math.log1p(v * v)
    mu = math.log(C_MEAN) - s2 / 2
    return float(special.ndtr((math.log(c_crit) - mu) / math.sqrt(s2)))


@pytest.fixture(scope="module")
def gf_slope():
    m = Material("clay", unit_weight=GAMMA, su_model="constant", su=C_MEAN * GAMMA * H)
    sec = simple_slope(height=H, cot_beta=2.0, depth_factor=2.0, material=m)
    r = centre_lattice(sec, method="bishop", hypothesis="undrained", n_slices=40, nx=12, ny=10,
                       n_radii=9)
    inner = SliceBankLimitState(r.bank.subset([r.critical_index]), sec.materials,
                                {0: ("soil", "su_factor")},
                                hypothesis="undrained")

    def ls(X):
        # The search tolerates the 'negative effective base normal force'
        # flag on its critical circle (as slope.analysis does); with φ = 0 the
        # base normal force does not enter FS.
        fs, conv, _ = inner(X)
        return fs, conv, np.isfinite(fs) & (fs > 0)

    return ls, float(r.fs_min)


@pytest.mark.parametrize("v", sorted(PUBLISHED))
def test_recalled_values_follow_the_closed_form(v):
    assert _pf_closed(v, C_CRIT) == pytest.approx(PUBLISHED[v], abs=5e-4)
    # The same number through our lognormal-FS formula: FS = C/C_crit is
    # lognormal with mean 0.25/0.17 and COV v.
    assert float(pf_lognormal(C_MEAN / C_CRIT, v * C_MEAN / C_CRIT)) == pytest.approx(
        PUBLISHED[v], abs=5e-4)


def test_fs_against_taylor(gf_slope):
    _, fs0 = gf_slope
    assert fs0 == pytest.approx(FS_TAYLOR, rel=FS_TOL)


@pytest.mark.parametrize("v", sorted(PUBLISHED))
def test_pf_against_published(gf_slope, v):
    ls, fs0 = gf_slope
    rv = random_vector([dict(name="su_factor", dist="lognormal", mean=1.0, cov=v)])
    fr = form(ls, rv)
    assert fr.converged
    ours = _pf_closed(v, C_MEAN / fs0)
    assert fr.pf == pytest.approx(ours, rel=1e-4)
    lo = _pf_closed(v, C_MEAN / (fs0 * (1 + FS_TOL)))
    hi = _pf_closed(v, C_MEAN / (fs0 * (1 - FS_TOL)))
    assert lo <= PUBLISHED[v] <= hi, (lo, PUBLISHED[v], hi)
    if v == 0.5:
        mc = monte_carlo(ls, rv, 5000, seed=2004, level=0.999, keep_samples=False)
        a, b = mc.main.estimate.ci
        assert a <= fr.pf <= b, (a, fr.pf, b)
