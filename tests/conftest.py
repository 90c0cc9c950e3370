"""Shared, session-scoped runs of the demo cases (invented scenarios), so each demo is analysed once.

``demo_run(name)`` analyses ``cases/<name>`` with few realisations (structure
and rendering, not statistics), writes its output folder through the same
code as ``slipfield run`` and returns ``(case, typed results, output folder,
results.json as a dict)``.
"""
import json
from pathlib import Path

import pytest

CASES = Path(__file__).resolve().parent.parent / "cases"
DEMO_REALISATIONS = 30  # structure, not statistics: few realisations keep each run short


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    from slipfield.slope.commands.run import analyse_case, write_run

    cache = {}

    def get(name):
        if name not in cache:
            case, res = analyse_case(CASES / name, realisations=DEMO_REALISATIONS, jobs=1)
            out = tmp_path_factory.mktemp("demo-" + Path(name).stem) / "out"
            write_run(case, res, out)
            cache[name] = (case, res, out, json.loads((out / "results.json").read_text(encoding="utf-8")))
        return cache[name]

    return get
