"""Bad input, tried as a new user would: the demo cases mutated.

Every mutation must be refused by ``slipfield check`` and by ``slipfield
run`` with exit 2, a message that names the key (and says what to do), no
traceback and no internal name, before anything is written (issue 11, item 2
and "Done when"). These checks are of slipfield's own schema; the demos are
invented scenarios. The commands run in-process (``slope.cli.main``) and stop
in the up-front checks, so the whole file takes seconds.
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest

from slipfield.slope.cli import main

CASES = Path(__file__).resolve().parents[1] / "cases"
LEVEE = (CASES / "levee_soft_clay.toml").read_text(encoding="utf-8")
CUT = (CASES / "cut_residual_soil.toml").read_text(encoding="utf-8")

# words that must never reach a user: Python internals and private names
INTERNAL = re.compile(r"Traceback|np\.float64|RandomProblem|base_y|_[a-z]+\(|Error:|simulate: n must|\bself\b")


def sub(text, old, new, count=1):
    assert old in text, f"mutation target not in the demo: {old!r}"
    return text.replace(old, new, count)


def add(text, extra):
    return text + "\n" + extra + "\n"


# (id, mutated case text, text the message must contain (the key))
MUTATIONS = [
    # wrong types
    ("cov-as-text", sub(LEVEE, "cov = 0.3", 'cov = "0.3"'), "random[0].cov"),
    ("realisations-fraction", sub(CUT, "realisations = 1000", "realisations = 1.5"), "simulation.realisations"),
    ("ground-not-points", sub(LEVEE, "ground = [[-40.0, 0.0], [-14.5, 0.0]", "ground = [-40.0, [-14.5, 0.0]"),
     "section.ground"),
    ("hypotheses-text", sub(LEVEE, 'hypotheses = ["undrained", "drained"]', 'hypotheses = "undrained"'),
     "analysis.hypotheses"),
    ("water-filled-number", add(CUT, "[tension_crack]\ndepth = 2.0\nwater_filled = 1"), "tension_crack.water_filled"),
    # missing keys
    ("no-ground", sub(LEVEE, "ground = [[-40.0, 0.0], [-14.5, 0.0], [-2.0, 5.0], [2.0, 5.0], [14.5, 0.0], [40.0, 0.0]]\n",
                      ""), "section.ground"),
    ("no-unit-weight", sub(LEVEE, "unit_weight = 16.0\n", ""), "material[1].unit_weight"),
    ("no-theta-v", sub(LEVEE, "theta_v = 1.5\n", ""), "random[1].theta_v"),
    ("middle-layer-no-bottom", sub(CUT, "bottom = [[0.0, 4.0], [70.0, 0.3]]\n", ""), "section.layer[1].bottom"),
    ("triangular-without-mode", sub(CUT, 'distribution = "lognormal"\ncov = 0.5',
                                    'distribution = "triangular"\nlower = 2.0\nupper = 12.0'), "random[0].distribution"),
    ("window-without-exit", sub(CUT, "exit = [30.0, 45.0]\n", ""), "search.exit"),
    # impossible values
    ("negative-theta", sub(LEVEE, "theta_h = 30.0                       # m", "theta_h = -30.0"), "random[0].theta_h"),
    ("zero-realisations", sub(LEVEE, "realisations = 1000", "realisations = 0"), "simulation.realisations"),
    ("zero-jobs", sub(LEVEE, "jobs = 2", "jobs = 0"), "simulation.jobs"),
    ("negative-batch", sub(CUT, "batch = 100", "batch = -5"), "simulation.batch"),
    ("negative-seed", sub(LEVEE, "seed = 2026", "seed = -1"), "simulation.seed"),
    ("rho-above-one", sub(LEVEE, "rho = -0.4", "rho = 1.5"), "cross_correlation[0].rho"),
    ("phi-above-90", sub(CUT, "phi = 31.0", "phi = 95.0"), "material[0].phi"),
    ("negative-surcharge", sub(CUT, "q = 15.0", "q = -15.0"), "surcharge[0].q"),
    ("surcharge-reversed", sub(CUT, "x_from = 4.0 ", "x_from = 14.0 "), "surcharge[0]"),
    ("kh-above-one", add(CUT, "[seismic]\nkh = 1.5"), "seismic.kh"),
    ("angle-out-of-range", sub(CUT, "angle = -3.0                          #", "angle = -200.0  #"), "random[0].angle"),
    ("exceedance-above-one", sub(LEVEE, "annual_probability = 0.02", "annual_probability = 2.0"),
     "risk.hypothesis[0].annual_probability"),
    ("sweep-negative-theta", sub(LEVEE, 'theta_h = [5.0, 15.0, 30.0, 60.0, "inf"]', "theta_h = [5.0, -1.0]"),
     "sweep.theta_h"),
    ("tornado-zero", sub(LEVEE, "tornado_k = 2.0", "tornado_k = 0.0"), "reliability.tornado_k"),
    ("x-range-reversed", sub(LEVEE, "x_range = [0.0, 20.0]", "x_range = [20.0, 0.0]"), "search.x_range"),
    ("refine-below-zero", sub(CUT, "batch = 100", "batch = 100\nrefine_below = 0.0"), "simulation.refine_below"),
    # the per-realisation search (on by default, issue 15): a window [1, refine_below) that is empty, an
    # unknown name, settings that do nothing with the search off
    ("refine-below-one", sub(CUT, "batch = 100", "batch = 100\nrefine_below = 1.0"), "simulation.refine_below"),
    ("refine-search-unknown", sub(CUT, "batch = 100", 'batch = 100\nrefine_search = "simplex"'),
     "simulation.refine_search"),
    ("refine-off-with-below", sub(LEVEE, "batch = 100", 'batch = 100\nrefine_search = "off"\nrefine_below = 1.2'),
     "simulation.refine_below"),
    # issue 15's search families (the levee judged by Spencer, which suits blocks and paths)
    ("block-zone-missing", add(sub(LEVEE, 'method = "bishop"', 'method = "spencer"'),
                               '[[search.block]]\nzone = "slimes"\nentry = [0.0, 10.0]\nexit = [16.0, 30.0]'),
     "search.block[0].zone"),
    ("block-exit-off-ground", add(sub(LEVEE, 'method = "bishop"', 'method = "spencer"'),
                                  '[[search.block]]\nzone = "foundation"\nentry = [0.0, 10.0]\nexit = [45.0, 60.0]'),
     "search.block[0].exit"),
    ("block-one-point", add(sub(LEVEE, 'method = "bishop"', 'method = "spencer"'),
                            '[[search.block]]\nzone = "foundation"\nentry = [0.0, 10.0]\nexit = [16.0, 30.0]\n'
                            'points = 1'), "search.block[0].points"),
    ("paths-two-columns", add(sub(LEVEE, 'method = "bishop"', 'method = "spencer"'),
                              "[search.dynamic_programming]\ncolumns = 2"), "search.dynamic_programming.columns"),
    ("refine-off-with-method", sub(LEVEE, "batch = 100", 'batch = 100\nrefine_search = "off"\nrefine_method = "janbu"'),
     "simulation.refine_method"),
    ("min-depth-too-deep", sub(LEVEE, "min_depth = 1.0", "min_depth = 100.0"), "search.min_depth"),
    ("unit-weight-field", sub(CUT, 'theta_h = "inf"\ntheta_v = "inf"', 'theta_h = 20.0\ntheta_v = "inf"'), "random[5]"),
    ("normal-may-be-negative", sub(LEVEE, 'property = "c"\ndistribution = "lognormal"\ncov = 0.4',
                                   'property = "c"\ndistribution = "normal"\ncov = 0.4'), "random[3].distribution"),
    ("bounded-below-zero", sub(LEVEE, 'property = "c"\ndistribution = "lognormal"\ncov = 0.4',
                               'property = "c"\ndistribution = "uniform"\nlower = -1.0\nupper = 7.0'),
     "random[3].distribution"),
    # typos
    ("key-typo", sub(LEVEE, "unit_weight = 18.5 ", "unit_wieght = 18.5 "), "unit_wieght"),
    ("table-typo", sub(LEVEE, "[simulation]", "[simulations]"), "[simulations]"),
    ("method-typo", sub(LEVEE, 'method = "bishop" ', 'method = "bishops" '), "analysis.method"),
    ("search-kind-typo", sub(LEVEE, 'kind = "centre-lattice"', 'kind = "center-lattice"'), "search.kind"),
    ("distribution-typo", sub(LEVEE, 'distribution = "lognormal"', 'distribution = "lognormel"'),
     "random[0].distribution"),
    ("model-typo", sub(LEVEE, 'model = "exponential"', 'model = "exponentail"'), "random[0].model"),
    ("field-method-typo", sub(LEVEE, 'field_method = "fft"', 'field_method = "fast"'), "simulation.field_method"),
    ("averaging-typo", sub(LEVEE, 'averaging = "base-average"', 'averaging = "mean"'), "simulation.averaging"),
    ("hypothesis-typo", sub(LEVEE, 'hypotheses = ["undrained", "drained"]', 'hypotheses = ["undrained", "wet"]'),
     "analysis.hypotheses"),
    ("estimator-typo", sub(CUT, 'methods = ["monte-carlo", "point-estimate", "form"]',
                           'methods = ["monte-carlo", "importance"]'), "reliability.methods"),
    ("zone-material-typo", sub(LEVEE, 'material = "soft clay"\npolygon', 'material = "soft clai"\npolygon'),
     "section.zone[1].material"),
    ("correlated-unknown-property", sub(LEVEE, '"soft clay.phi"]', '"soft clay.cohesion"]'),
     "cross_correlation[0].between"),
    ("piezometric-zone-typo", sub(CUT, 'zone = "upper residual"', 'zone = "upper residuals"'),
     "water.piezometric[0].zone"),
    ("circle-radius", sub(LEVEE, 'kind = "centre-lattice"\ntrials = 1200\nx_range = [0.0, 20.0]                # circle centres (m)\ny_range = [6.0, 20.0]',
                          'kind = "fixed"\ncircle = { x = 6.0, y = 12.0, radius = 14.0 }'), "search.circle.radius"),
    ("toml-syntax", sub(LEVEE, "bottom = -12.0 ", "bottom = = -12.0 "), "line"),
    # overlapping or gapped zones, crossing layers, water outside
    ("zones-overlap", sub(LEVEE, "[[-40.0, -12.0], [40.0, -12.0], [40.0, 0.0], [-40.0, 0.0]]",
                          "[[-40.0, -12.0], [40.0, -12.0], [40.0, 0.0], [0.0, 2.0], [-40.0, 0.0]]"), "overlap"),
    ("zones-gap", sub(LEVEE, "[[-40.0, -12.0], [40.0, -12.0], [40.0, 0.0], [-40.0, 0.0]]",
                      "[[-40.0, -12.0], [40.0, -12.0], [40.0, -1.0], [-40.0, -1.0]]"), "section"),
    ("layers-cross", sub(CUT, "bottom = [[0.0, 13.0], [70.0, 9.3]]", "bottom = [[0.0, 13.0], [70.0, -0.7]]"),
     "section.layer[1].bottom"),
    ("phreatic-outside", sub(LEVEE, "phreatic = [[-40.0, 0.0], [-8.0, 0.0], [0.0, 1.0], [8.0, 0.0], [40.0, 0.0]]",
                             "phreatic = [[100.0, 0.0], [200.0, 0.0]]"), "water.phreatic"),
    # unknown names, duplicates, keys that would do nothing
    ("material-twice", add(CUT, '[[material]]\nname = "saprolite"\nunit_weight = 21.0\nc = 30.0\nphi = 36.0'),
     "material[3].name"),
    ("pair-correlated-twice", add(LEVEE, '[[cross_correlation]]\nbetween = ["soft clay.phi", "soft clay.c"]\nrho = -0.2'),
     "cross_correlation[1]"),
    ("never-together", add(LEVEE, '[[cross_correlation]]\nbetween = ["soft clay.su", "soft clay.phi"]\nrho = 0.3'),
     "cross_correlation[1]"),
    ("random-on-unused-material", add(LEVEE, '[[material]]\nname = "spare"\nunit_weight = 18.0\nc = 1.0\nphi = 30.0\n'
                                      '[[random]]\nmaterial = "spare"\nproperty = "c"\ncov = 0.2\ntheta_h = 10.0\n'
                                      'theta_v = 1.0'), "random[4].material"),
    ("su-random-but-drained-only", re.sub(r'\[\[risk\.hypothesis\]\]\nname = "undrained"\n[^\[]*', "",
                                          sub(LEVEE, 'hypotheses = ["undrained", "drained"]', 'hypotheses = ["drained"]')),
     "random[0].property"),
    ("window-key-in-lattice", sub(LEVEE, "min_depth = 1.0", "min_depth = 1.0\nentry = [-20.0, -5.0]"), "search.entry"),
    ("lattice-key-in-window", sub(CUT, "min_depth = 1.0", "min_depth = 1.0\nx_range = [20.0, 40.0]"),
     "search.x_range"),
    ("nu-without-matern", sub(LEVEE, 'model = "exponential"', 'model = "exponential"\nnu = 2.5'), "random[0].nu"),
    ("interslice-without-mp", sub(LEVEE, 'methods = ["bishop", "spencer", "morgenstern-price"]',
                                  'methods = ["bishop", "spencer"]'), "analysis.interslice"),
    ("window-outside-ground", sub(CUT, "entry = [2.0, 20.0]", "entry = [2.0, 200.0]"), "search.entry"),
    # absurd sizes: refused by the memory estimate
    ("realisations-1e12", sub(LEVEE, "realisations = 1000", "realisations = 1000000000000"),
     "simulation.realisations"),
    ("samples-1e12", sub(LEVEE, "samples = 5000", "samples = 1000000000000"), "reliability.samples"),
    ("trials-1e9", sub(LEVEE, "trials = 1200", "trials = 1000000000"), "search.trials"),
    ("cell-1e-6", sub(LEVEE, "cell = 0.5", "cell = 1e-6"), "simulation.cell"),
    ("slices-1e7", sub(LEVEE, "slices = 30", "slices = 10000000"), "analysis.slices"),
    ("dense-generator-too-big", sub(CUT, 'field_method = "fft"', 'field_method = "cholesky"'),
     "simulation.field_method"),
]


def _call(argv, capsys):
    code = main(argv)
    out = capsys.readouterr()
    return code, out.out + out.err


@pytest.mark.parametrize("text,key", [m[1:] for m in MUTATIONS], ids=[m[0] for m in MUTATIONS])
def test_mutation_refused_by_check_and_run(text, key, tmp_path, capsys):
    case = tmp_path / "case.toml"
    case.write_text(text, encoding="utf-8")
    before = sorted(tmp_path.rglob("*"))
    for argv in (["check", str(case)], ["run", str(case), "--out", str(tmp_path / "out"), "--quiet"]):
        code, msg = _call(argv, capsys)
        assert code == 2, (argv[0], msg)
        assert key in msg, (argv[0], msg)
        assert not INTERNAL.search(msg), (argv[0], msg)
        # one problem, one message (the header line and one item)
        assert msg.count("\n  - ") <= 1, (argv[0], msg)
    assert sorted(tmp_path.rglob("*")) == before  # nothing written, no staging folder left


def test_at_least_forty_mutations():
    assert len(MUTATIONS) >= 40
    assert len({m[0] for m in MUTATIONS}) == len(MUTATIONS)
    assert all(m[1] not in (LEVEE, CUT) for m in MUTATIONS)


@pytest.mark.parametrize("argv,option", [
    (["run", "{case}", "--realisations", "0"], "--realisations"),
    (["run", "{case}", "--realisations", "-3"], "--realisations"),
    (["run", "{case}", "--jobs", "0"], "--jobs"),
    (["run", "{case}", "--jobs", "two"], "--jobs"),
    (["simulate", "{case}", "--out", "{out}", "--batch", "0"], "--batch"),
    (["simulate", "{case}", "--out", "{out}", "--seed", "-1"], "--seed"),
    (["simulate", "{case}", "--out", "{out}", "--refine-below", "-1"], "--refine-below"),
    (["simulate", "{case}", "--out", "{out}", "--refine-method", "bishop"], "--refine-method"),
    (["simulate", "{case}", "--out", "{out}", "--refine-search", "simplex"], "--refine-search"),
    (["run", "{case}", "--out", "{out}", "--refine-search", "circles"], "--refine-search"),
    (["sweep", "{case}", "--out", "{out}", "--refine-search", ""], "--refine-search"),
    (["sweep", "{case}", "--out", "{out}", "--realisations", "0"], "--realisations"),
    (["fields", "sample", "--model", "exponential", "--theta", "5", "--grid", "8x8", "--spacing", "1",
      "--out", "{out}/a.npz", "--n", "0"], "--n"),
    (["fields", "sample", "--model", "exponential", "--theta", "5", "--grid", "8x8", "--spacing", "1",
      "--out", "{out}/a.npz", "--seed", "-2"], "--seed"),
    (["fields", "sample", "--model", "exponential", "--theta", "5", "--grid", "8x8", "--spacing", "1",
      "--out", "{out}/a.npz", "--method", "dense"], "--method"),
])
def test_options_refused_at_parse_time(argv, option, tmp_path, capsys):
    argv = [a.format(case=CASES / "levee_soft_clay.toml", out=tmp_path / "out") for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert option in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()


def test_run_case_refuses_zero_realisations_from_python(tmp_path):
    """The Python call refuses 0 as the command line does (it used to run the case's 1000)."""
    from slipfield.slope.commands.run import run_case
    from slipfield.slope.errors import InputError

    with pytest.raises(InputError, match="--realisations"):
        run_case(CASES / "levee_soft_clay.toml", tmp_path / "out", realisations=0)
    assert not (tmp_path / "out").exists()


def test_negative_value_threshold_of_a_normal_marginal(tmp_path, capsys):
    """The refusal states P(X < 0) of the normal marginal (scipy.stats.norm as reference) and the run's count;
    the demo's normal unit weight (cov 0.05: P = Φ(-20), about 3e-89) is accepted."""
    from scipy.stats import norm

    text = sub(LEVEE, 'property = "c"\ndistribution = "lognormal"\ncov = 0.4',
               'property = "c"\ndistribution = "normal"\ncov = 0.4')
    case = tmp_path / "case.toml"
    case.write_text(text, encoding="utf-8")
    code, msg = _call(["check", str(case)], capsys)
    assert code == 2
    p = float(re.search(r"probability ([0-9.e-]+);", msg).group(1))
    assert p == pytest.approx(norm.cdf(-1 / 0.4), rel=0.01)
    assert "lognormal" in msg and "truncated-normal" in msg
    # a smaller spread, whose expected count of negative values in the run is below the threshold, runs
    case.write_text(text.replace('distribution = "normal"\ncov = 0.4', 'distribution = "normal"\ncov = 0.15'),
                    encoding="utf-8")
    code, msg = _call(["check", str(case)], capsys)
    assert code == 0, msg
