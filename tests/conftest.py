"""Fixtures shared by the whole suite.

``demo_run(name)`` runs ``slipfield run`` on a demo case once per test session
(every module that checks a run's outputs reads the same folder instead of
running the demo again); ``demo_analysis(name)`` gives the same run as
``(case, typed results, output folder, results.json as a dict)`` for checks
of the report against the typed results.
"""
import json
import sys
from pathlib import Path

import pytest

from support.demos import CASES, DEMO_REALISATIONS


@pytest.fixture(autouse=True)
def _kernel_threads_restored():
    """Commands bound this process's kernel threads by their ``--jobs`` (``limit_threads``): the
    next test starts with every core, as a fresh process does."""
    yield
    numba = sys.modules.get("numba")
    if numba is not None and numba.get_num_threads() != numba.config.NUMBA_NUM_THREADS:
        numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)


@pytest.fixture(scope="session")
def demo_analysis(tmp_path_factory):
    """Factory: ``(case, RunResults, output folder, results.json dict)`` of ``cases/<name>`` (PNG and SVG)."""
    from slipfield.slope.commands.run import analyse_case, write_run

    done = {}

    def run(name):
        if name not in done:
            case, res = analyse_case(CASES / name, realisations=DEMO_REALISATIONS, jobs=1)
            out = tmp_path_factory.mktemp("demo-" + Path(name).stem) / "out"
            write_run(case, res, out, formats=("png", "svg"))  # the writing `slipfield run` does
            done[name] = (case, res, out, json.loads((out / "results.json").read_text(encoding="utf-8")))
        return done[name]

    return run


@pytest.fixture(scope="session")
def demo_run(demo_analysis):
    """Factory: output folder of the shared run of ``cases/<name>`` (PNG and SVG figures)."""
    return lambda name: demo_analysis(name)[2]


def pytest_collection_modifyitems(items):
    """Tests that read a demo run are slow (a demo run takes tens of seconds):
    ``python -m pytest -m "not slow"`` is the fast subset for local work."""
    for item in items:
        names = getattr(item, "fixturenames", ())
        if "demo_run" in names or "demo_analysis" in names:
            item.add_marker(pytest.mark.slow)
