"""Fixtures shared by the whole suite.

``demo_run(name)`` runs ``slipfield run`` on a demo case once per test session
(every module that checks a run's outputs reads the same folder instead of
running the demo again).
"""
from pathlib import Path

import pytest

from support.demos import CASES, DEMO_REALISATIONS


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """Factory: output folder of ``run_case`` on ``cases/<name>`` (PNG and SVG figures)."""
    from slipfield.slope.commands.run import run_case

    done = {}

    def run(name):
        if name not in done:
            out = tmp_path_factory.mktemp("demo-" + Path(name).stem) / "out"
            run_case(CASES / name, out, realisations=DEMO_REALISATIONS, jobs=1, figure_formats=("png", "svg"))
            done[name] = out
        return done[name]

    return run


def pytest_collection_modifyitems(items):
    """Tests that read a demo run are slow (a demo run takes tens of seconds):
    ``python -m pytest -m "not slow"`` is the fast subset for local work."""
    for item in items:
        if "demo_run" in getattr(item, "fixturenames", ()):
            item.add_marker(pytest.mark.slow)
