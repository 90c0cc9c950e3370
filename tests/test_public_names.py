"""Every name a module exports in ``__all__`` exists (issue 11: ``from
slope.case.analyses import *`` raised on a name that no longer existed)."""
import importlib
import pkgutil

import slipfield.fields
import slipfield.slope


def _modules():
    for pkg in (slipfield.fields, slipfield.slope):
        yield pkg.__name__
        for info in pkgutil.walk_packages(pkg.__path__, pkg.__name__ + "."):
            yield info.name


def test_every_name_in_all_exists():
    missing = []
    checked = 0
    for name in _modules():
        mod = importlib.import_module(name)
        for n in getattr(mod, "__all__", ()):
            checked += 1
            if not hasattr(mod, n):
                missing.append(f"{name}.{n}")
    assert checked > 50
    assert not missing, missing


def test_star_import_of_the_case_analyses():
    ns = {}
    exec("from slipfield.slope.case.analyses import *", ns)
    assert "deterministic" in ns and "random_problem" in ns
