"""The per-realisation search on by default for realisations near failure (issue 15).

Checks: searching only the window [1, 1.10) of bank FS gives, realisation by
realisation, the same failures (FS < 1) as searching every realisation below
1.10 (the search only lowers FS, so a realisation below 1 already fails),
with common random numbers; realisations outside the window keep their bank
FS; case files and the command line switch it on by default and off by
``refine_search = "off"`` / ``--refine-search off``, with names from the
registry; a resume with another setting is refused. Geometry: Griffiths &
Fenton (2004) undrained slope (2H:1V, D = 2), C 0.2, θ 5 m, COV 0.5.
"""
from pathlib import Path

import numpy as np
import pytest

from slipfield.slope.case.build import load_case
from slipfield.slope.cli import main
from slipfield.slope.errors import InputError
from slipfield.slope.simulate import RefineSettings, simulate
from slipfield.slope.simulate.refine_names import (DEFAULT_REFINE_BELOW, DEFAULT_REFINE_SEARCH, FAILURE_FS,
                                                   REFINE_OFF, REFINE_SEARCHES)

from support.problems import gf_problem

SMALL = Path(__file__).resolve().parents[1] / "cases" / "small_cut.toml"


def test_window_from_one_gives_the_failures_of_searching_everything_below():
    p, _ = gf_problem(5.0, 0.5, mean_c=0.2)
    n, seed = 40, 5
    plain = simulate(p, n, seed)
    window = simulate(p, n, seed, refine=RefineSettings(below=1.1, above=FAILURE_FS, search="dynamic-programming"))
    every = simulate(p, n, seed, refine=RefineSettings(below=1.1, search="dynamic-programming"))
    fb = plain.fs
    inside = np.isfinite(fb) & (fb >= 1.0) & (fb < 1.1)
    assert inside.sum() >= 3 and np.sum(fb < 1.0) >= 3       # both sides of 1 are exercised
    assert window.n_searched == int(inside.sum())
    assert every.n_searched == int(np.sum(np.isfinite(fb) & (fb < 1.1)))
    # outside the window the bank's FS stands; inside it the search's lower FS is the same as searching all
    np.testing.assert_array_equal(window.fs[~inside], fb[~inside])
    np.testing.assert_array_equal(window.fs[inside], every.fs[inside])
    assert np.all(every.fs[fb < 1.0] <= fb[fb < 1.0])
    # the failures, realisation by realisation, are those of searching everything below 1.1
    np.testing.assert_array_equal(window.fs < 1.0, every.fs < 1.0)
    assert window.pf == every.pf >= plain.pf


def test_settings_from_a_case_are_on_by_default_and_off_on_request():
    sim = load_case(SMALL).simulation
    s = RefineSettings.from_case(sim)
    assert (s.search, s.above, s.below) == (DEFAULT_REFINE_SEARCH, FAILURE_FS, DEFAULT_REFINE_BELOW)
    assert DEFAULT_REFINE_SEARCH in REFINE_SEARCHES
    assert RefineSettings.from_case(sim, search=REFINE_OFF) is None
    assert RefineSettings.from_case(dict(sim, refine_search=REFINE_OFF)) is None
    assert RefineSettings.from_case(sim, search="nelder-mead", below=1.3).describe()["below"] == 1.3
    with pytest.raises(InputError, match="--refine-below"):
        RefineSettings.from_case(sim, search=REFINE_OFF, below=1.2)
    with pytest.raises(InputError, match="refine_below"):
        RefineSettings.from_case(dict(sim, refine_below=0.95))   # [1, 0.95) searches nothing


def test_command_line_switch_reaches_the_results(tmp_path, capsys):
    import json

    for name in (REFINE_OFF, "nelder-mead"):
        out = tmp_path / name
        assert main(["simulate", str(SMALL), "--out", str(out), "--realisations", "6", "--jobs", "1", "--quiet",
                     "--refine-search", name, "--json"]) == 0
        doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
        refine = doc["simulation"]["refine"]
        if name == REFINE_OFF:
            assert refine is None
        else:
            assert refine["below"] == DEFAULT_REFINE_BELOW and refine["above"] == FAILURE_FS
            assert "n_vertices" in refine                    # the Nelder-Mead settings, not the grid's
    capsys.readouterr()
    # off with a setting it would ignore: refused, naming the option, nothing written
    assert main(["simulate", str(SMALL), "--out", str(tmp_path / "bad"), "--refine-search", REFINE_OFF,
                 "--refine-below", "1.2", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--refine-below" in err and "Traceback" not in err
    assert not (tmp_path / "bad").exists()


def test_resume_with_another_search_setting_is_refused(tmp_path, capsys):
    out = tmp_path / "run"
    args = ["simulate", str(SMALL), "--out", str(out), "--realisations", "4", "--jobs", "1", "--quiet"]
    assert main(args) == 0                                          # the default: dynamic programming
    capsys.readouterr()
    before = sorted(p.name for p in (out / "store").iterdir())
    for other in (REFINE_OFF, "nelder-mead"):
        assert main(args[:5] + ["8"] + args[6:] + ["--resume", "--refine-search", other]) == 2
        err = capsys.readouterr().err
        assert "refinement settings differ" in err, err
    assert sorted(p.name for p in (out / "store").iterdir()) == before
    assert main(args[:5] + ["8"] + args[6:] + ["--resume", "--refine-search", DEFAULT_REFINE_SEARCH]) == 0


def test_mechanisms_in_words_carry_the_counts_and_both_pf():
    from slipfield.slope.report.findings import mechanism_sentence
    from slipfield.slope.simulate.mechanism_results import mechanism_summary

    p, _ = gf_problem(5.0, 0.5, mean_c=0.2)
    r = simulate(p, 20, 5, refine=RefineSettings(below=DEFAULT_REFINE_BELOW, above=FAILURE_FS,
                                                  search="dynamic-programming"))
    m = mechanism_summary(r)
    assert m.n_searched == r.n_searched > 0 and m.window == (FAILURE_FS, DEFAULT_REFINE_BELOW)
    assert sum(m.families.values()) == r.n and m.families.get("dynamic-programming (per realisation)") == r.n_refined
    text = mechanism_sentence(m)
    assert f"ran on the {r.n_searched} realisations" in text and f"lowered {r.n_refined}" in text
    assert f"circles alone {r.pf_circles:.3g}" in text and f"free search {r.pf:.3g}" in text
    assert "[1, 1.1)" in text


def test_search_region_holds_every_accepted_path():
    # fields generated only over part of the grid must cover what the search reads: every vertex of
    # every accepted path (and hence its slice bases) lies inside search_region
    from slipfield.slope.simulate.refinement import search_region

    p, _ = gf_problem(5.0, 0.5, mean_c=0.2)
    st = RefineSettings(below=1.2, search="dynamic-programming")
    r = simulate(p, 10, 5, refine=st)
    x0, x1, y0, y1 = search_region(p, st)
    xy = np.vstack(list(r.searched_surfaces().values()))
    assert xy.size and r.n_refined > 0
    assert np.all((xy[:, 0] >= x0) & (xy[:, 0] <= x1) & (xy[:, 1] >= y0) & (xy[:, 1] <= y1))
    sec = p.section
    assert search_region(p, None) is None
    assert search_region(p, RefineSettings(below=1.3)) == (sec.x_min, sec.x_max, sec.base_y, float(sec.ground[:, 1].max()))
