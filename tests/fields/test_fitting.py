"""Statistics fitted from profiles (fields.fitting, `slipfield fields fit`).

Profiles are simulated here by a Cholesky factor of the closed-form
correlation written out in the test (Markov ρ = exp(−2|τ|/θ), squared
exponential ρ = exp(−π τ²/θ²), Vanmarcke 1983, Random Fields, table 5.1),
not by the package's generators.

Statistical argument of the coverage check: the profile-likelihood interval
{θ : 2[ℓ(θ̂) − ℓ(θ)] ≤ χ²₁(0.95)} covers the true θ with probability → 0.95
(Wilks 1938, likelihood-ratio theorem).  The brief asks for coverage of at
least 90 %: with N repetitions the number of covering intervals is
Binomial(N, p); the test fails only when that count is below the 0.1 %
quantile of Binomial(N, 0.90), so a method with true coverage ≥ 90 % fails
it with probability ≤ 0.001.
"""
import json
import math

import numpy as np
import pytest
from scipy import stats

from slipfield.fields.cli import main as fields_main
from slipfield.fields.errors import InputError
from slipfield.fields.fitcommand import read_profile_csv
from slipfield.fields.fitting import Profile, fit_profiles

RHO = {"exponential": lambda t, th: np.exp(-2.0 * t / th),
       "gaussian": lambda t, th: np.exp(-math.pi * (t / th) ** 2)}


def _simulate(model, theta, depth, n, seed):
    C = RHO[model](np.abs(depth[:, None] - depth[None, :]), theta) + 1e-8 * np.eye(depth.size)
    L = np.linalg.cholesky(C)
    return (L @ np.random.default_rng(seed).standard_normal((depth.size, n))).T


@pytest.mark.parametrize("model", ["exponential", "gaussian"])
@pytest.mark.parametrize("theta", [1.0, 3.0])
def test_theta_v_interval_covers_the_true_value(model, theta):
    n_rep = 30
    depth = np.arange(0.25, 30.0, 0.5)          # 60 readings over 30 m
    Z = _simulate(model, theta, depth, n_rep, seed=11 + int(theta))
    covered = 0
    for r in range(n_rep):
        value = 20.0 + 1.5 * depth + 4.0 * Z[r]  # linear trend, σ = 4
        fit = fit_profiles(Profile(0.0, depth, value), model=model, trend="linear")
        lo, hi = fit.theta_v_ci
        assert lo <= fit.theta_v <= hi
        covered += lo <= theta <= hi
    k_min = stats.binom.ppf(0.001, n_rep, 0.90)
    assert covered >= k_min, f"{covered}/{n_rep} intervals cover θv = {theta} m (need ≥ {k_min:g})"


def test_trend_and_cov_recovered_within_their_standard_errors():
    # 20 independent profiles (θv = 1 m, 60 readings each) pooled as one
    # data set with a common trend. GLS slope and σ̂ compared with the truth
    # at 4 standard errors of the spread over the 20 single-profile fits.
    depth = np.arange(0.25, 30.0, 0.5)
    Z = _simulate("exponential", 1.0, depth, 20, seed=5)
    fits = [fit_profiles(Profile(0.0, depth, 20.0 + 1.5 * depth + 4.0 * z), trend="linear") for z in Z]
    g = np.array([f.gradient for f in fits])
    s = np.array([f.sigma for f in fits])
    assert abs(g.mean() - 1.5) <= 4 * g.std(ddof=1) / math.sqrt(g.size)
    assert abs(s.mean() - 4.0) <= 4 * s.std(ddof=1) / math.sqrt(s.size) + 0.1  # REML σ̂ bias O(1/n)
    # COV about the trend = σ / mean trend over the data (20 + 1.5·15 = 42.5 at mid-depth)
    assert fits[0].cov == pytest.approx(fits[0].sigma / fits[0].mean)
    assert fits[0].mean == pytest.approx(np.mean(fits[0].trend_at(depth)))


def test_pure_noise_gives_theta_below_the_sampling_interval():
    # White noise: the lag-one sample correlation is ≈ N(0, 1/n) (Bartlett
    # 1946).  θ ≥ Δ for the Markov model means ρ(Δ) ≥ e⁻² = 0.135, i.e.
    # 0.135·√200 = 1.9 standard deviations: probability ≤ 0.03 per profile.
    # With 12 profiles, 3 or more such fits have probability 0.005
    # (Binomial(12, 0.03)).
    dz, n = 0.1, 200
    depth = dz * (np.arange(n) + 0.5)
    rng = np.random.default_rng(2)
    above = 0
    for _ in range(12):
        fit = fit_profiles(Profile(0.0, depth, 5.0 + rng.standard_normal(n)), trend="constant")
        above += fit.theta_v >= dz
    assert above <= 2


def test_several_profiles_estimate_theta_h():
    # four profiles 4 m apart, θh = 10 m, θv = 1 m; three data sets: with
    # interval coverage ≥ 0.9 each, 2 or more misses have probability 0.028
    xs, depth = np.array([0.0, 4.0, 8.0, 16.0]), np.arange(0.25, 15.0, 0.5)
    P = np.array([(x, d) for x in xs for d in depth])
    C = np.exp(-2.0 * np.hypot((P[:, 0, None] - P[None, :, 0]) / 10.0,
                               (P[:, 1, None] - P[None, :, 1]) / 1.0))
    L = np.linalg.cholesky(C)
    rng = np.random.default_rng(3)
    miss_h = miss_v = 0
    for _ in range(3):
        v = 30.0 - 0.5 * P[:, 1] + 3.0 * (L @ rng.standard_normal(len(P)))
        profs = [Profile(x, depth, v[i * depth.size:(i + 1) * depth.size]) for i, x in enumerate(xs)]
        fit = fit_profiles(profs, model="exponential", trend="linear")
        miss_h += not fit.theta_h_ci[0] <= 10.0 <= fit.theta_h_ci[1]
        miss_v += not fit.theta_v_ci[0] <= 1.0 <= fit.theta_v_ci[1]
    assert miss_h <= 1 and miss_v <= 1


def test_bad_profiles_are_refused():
    with pytest.raises(InputError, match="two readings at depth"):
        Profile(0.0, [1.0, 1.0, 2.0], [1.0, 2.0, 3.0])
    with pytest.raises(InputError, match="too few"):
        fit_profiles(Profile(0.0, [1.0, 2.0, 3.0, 4.0], [1.0, 2.0, 3.0, 1.0]), trend="linear")
    with pytest.raises(InputError, match="values > 0"):
        fit_profiles(Profile(0.0, np.arange(10.0), np.arange(10.0) - 1), log=True)
    with pytest.raises(InputError, match="unknown"):
        fit_profiles(Profile(0.0, np.arange(10.0), np.ones(10)), model="wavy")


def _write_csv(path, depth, value, x=None):
    lines = ["x,depth,value" if x is not None else "depth,value"]
    for z, v in zip(depth, value):
        lines.append((f"{x}," if x is not None else "") + f"{z},{v}")
    path.write_text("\n".join(lines) + "\n")


def test_command_writes_a_block_the_case_reader_accepts(tmp_path, capsys):
    from slipfield.slope.case.schema import SCHEMA

    depth = np.arange(0.25, 20.0, 0.5)
    value = 12.0 + 1.2 * depth + 2.0 * _simulate("exponential", 1.5, depth, 1, seed=9)[0]
    _write_csv(tmp_path / "cpt1.csv", depth, value)
    out = tmp_path / "fit"
    rc = fields_main(["fit", str(tmp_path / "cpt1.csv"), "--material", "soft clay", "--property", "su",
                      "--log", "--theta-h", "30", "--out", str(out)])
    assert rc == 0
    text = (out / "random_block.toml").read_text()
    assert text == capsys.readouterr().out.split("# wrote")[0]
    import tomllib
    block = tomllib.loads(text)["random"][0]
    assert set(block) <= set(SCHEMA["random"])
    summary = json.loads((out / "fit.json").read_text())
    assert block["theta_v"] == pytest.approx(summary["theta_v"], rel=1e-2)
    assert block["theta_h"] == 30
    assert (out / "fit_profiles.png").stat().st_size > 0 and (out / "fit_correlation.png").stat().st_size > 0
    # a second run never overwrites what is there
    assert fields_main(["fit", str(tmp_path / "cpt1.csv"), "--out", str(out)]) == 2


def test_command_names_the_file_and_row_of_a_bad_reading(tmp_path, capsys):
    p = tmp_path / "cpt.csv"
    p.write_text("depth,value\n0.5,10\n1.0,eleven\n1.5,12\n")
    with pytest.raises(InputError, match=r"cpt.csv, row 3"):
        read_profile_csv(p)
    assert fields_main(["fit", str(p), "--out", str(tmp_path / "o")]) == 2
    assert "row 3" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_command_refuses_an_existing_file_as_its_folder_before_fitting(tmp_path, capsys):
    # --out naming a file ended in a traceback (FileExistsError) after the fit; now exit 2 up front
    depth = np.arange(0.25, 5.0, 0.5)
    _write_csv(tmp_path / "cpt1.csv", depth, 12.0 + depth)
    mine = tmp_path / "notes.txt"
    mine.write_text("mine\n")
    assert fields_main(["fit", str(tmp_path / "cpt1.csv"), "--out", str(mine)]) == 2
    err = capsys.readouterr().err
    assert "--out" in err and "an existing file, not a folder" in err
    assert mine.read_text() == "mine\n"
