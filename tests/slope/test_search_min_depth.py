"""``[search] min_depth`` excludes shallower surfaces, counted under their own reason (issue 11, item 2).

On a dry cohesionless face the critical circle is as shallow as the search
allows and its FS tends to the infinite-slope value tanφ'/tanβ (Duncan,
Wright & Brandon 2014, Soil Strength and Slope Stability, 2nd ed., ch. 6:
infinite slope in dry cohesionless soil); with a minimum depth every counted
surface is at least that deep, so the critical FS can only be higher. The
key used to be read by no code: the critical surface stayed at a few
centimetres with ``min_depth = 5``. The section is invented.
"""
import math

from slipfield.slope.case.analyses import deterministic
from slipfield.slope.case.build import load_case
from slipfield.slope.search import MIN_DEPTH_REASON, surface_depth

SAND = """
[section]
ground = [[0.0, 10.0], [10.0, 10.0], [30.0, 0.0], [50.0, 0.0]]
bottom = -10.0
[[section.zone]]
name = "sand"
material = "sand"
polygon = [[0.0, -10.0], [50.0, -10.0], [50.0, 0.0], [30.0, 0.0], [10.0, 10.0], [0.0, 10.0]]
[[material]]
name = "sand"
unit_weight = 19.0
c = 0.0
phi = 35.0
[analysis]
methods = ["bishop", "spencer"]
[search]
trials = 1000
"""
FS_INFINITE = math.tan(math.radians(35.0)) / 0.5  # face 2H:1V, tanβ = 0.5


def _critical(tmp_path, extra):
    p = tmp_path / "sand.toml"
    p.write_text(SAND + extra, encoding="utf-8")
    res = deterministic(load_case(p))["drained"]
    bank = res["bank"]
    return res["methods"], float(surface_depth(bank.bank)[bank.critical_index])


def test_min_depth_excludes_shallower_surfaces(tmp_path):
    shallow, d0 = _critical(tmp_path, "min_depth = 0.1\n")
    deep, d5 = _critical(tmp_path, "min_depth = 5.0\n")
    # the shallow search reaches the infinite-slope value from above (closed form; 3 % for the finite
    # lattice of circles, whose shallowest usable circle still has some curvature)
    assert FS_INFINITE <= shallow["bishop"]["fs"] <= 1.03 * FS_INFINITE
    assert d0 < 1.0
    assert d5 >= 5.0 and deep["bishop"]["fs"] > shallow["bishop"]["fs"]
    for m in ("bishop", "spencer"):  # counted, with their own reason, for every method's row
        assert deep[m]["not_counted"][MIN_DEPTH_REASON] > shallow[m]["not_counted"].get(MIN_DEPTH_REASON, 0)
        assert deep[m]["n_trials"] == shallow[m]["n_trials"]


def test_other_methods_added_later_give_the_same_results_in_the_same_order(tmp_path):
    # `slipfield run` evaluates the methods other than the run method after its random analyses (their
    # kernels may still be compiling in the pool): on the same bank they must give the same numbers,
    # listed in the case's order, as evaluating them with the search
    from slipfield.slope.case.analyses import add_other_methods

    p = tmp_path / "sand.toml"
    p.write_text(SAND.replace('methods = ["bishop", "spencer"]', 'methods = ["spencer", "bishop", "ordinary"]'),
                 encoding="utf-8")
    case = load_case(p)
    whole = deterministic(case)
    later = deterministic(case, other_methods=False)
    assert list(later["drained"]["methods"]) == ["bishop"]
    add_other_methods(case, later)
    for h in whole:
        assert list(later[h]["methods"]) == list(whole[h]["methods"]) == ["bishop", "spencer", "ordinary"]
        for m, block in whole[h]["methods"].items():
            assert later[h]["methods"][m]["fs"] == block["fs"]
            assert later[h]["methods"][m]["critical_index"] == block["critical_index"]


def test_other_methods_on_a_worker_give_the_same_results(tmp_path):
    # `slipfield run --jobs N` (N > 1) sends them to a worker of its pool while it goes on, so that only
    # the kernels they reach are compiled, there: the same dicts (numbers, order) as in this process
    import os

    from slipfield.slope.case.analyses import add_other_methods, other_methods_results
    from slipfield.slope.simulate.executors import stop_workers, submit_to_worker

    p = tmp_path / "sand.toml"
    p.write_text(SAND.replace('methods = ["bishop", "spencer"]', 'methods = ["spencer", "bishop", "ordinary"]'),
                 encoding="utf-8")
    case = load_case(p)
    here = deterministic(case, other_methods=False)
    there = deterministic(case, other_methods=False)
    banks = {h: {"bank": d["bank"]} for h, d in there.items()}
    try:
        pid = submit_to_worker(os.getpid, n_jobs=2).result()
        results = submit_to_worker(other_methods_results, case, banks, n_jobs=2).result()
    finally:
        stop_workers()
    assert pid != os.getpid()  # it ran in a worker
    add_other_methods(case, here)
    add_other_methods(case, there, results)
    for h in here:
        assert here[h]["methods"] == there[h]["methods"]  # every number and name, in the same order
        assert list(here[h]["methods"]) == list(there[h]["methods"]) == ["bishop", "spencer", "ordinary"]
