"""Packaging and public names.

- slipfield installs under its own namespace (``slipfield.fields``,
  ``slipfield.slope``): nothing it installs may shadow another distribution's
  top-level module (PyPI has unrelated projects named ``fields`` and ``slope``).
- Every package folder is listed in pyproject.toml, so nothing is silently
  missing from an installed copy.
- Every name a module lists in ``__all__`` exists (``from m import *`` works).
"""
import importlib
import pkgutil
import tomllib
from pathlib import Path

import pytest

import slipfield.fields
import slipfield.slope

ROOT = Path(__file__).resolve().parents[1]
CONFIG = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]


def _package_folders():
    for src in ("fields", "slope"):
        for init in sorted((ROOT / src).rglob("__init__.py")):
            rel = init.parent.relative_to(ROOT)
            yield "slipfield." + ".".join(rel.parts)


def test_every_package_folder_is_installed_under_the_slipfield_namespace():
    listed = CONFIG["packages"]
    assert sorted(listed) == sorted(_package_folders())
    assert all(name.startswith("slipfield.") for name in listed)
    assert set(CONFIG["package-dir"]) == {"slipfield.fields", "slipfield.slope"}


def _modules():
    for pkg in (slipfield.fields, slipfield.slope):
        yield pkg.__name__
        for info in pkgutil.walk_packages(pkg.__path__, pkg.__name__ + "."):
            yield info.name


@pytest.mark.parametrize("name", sorted(_modules()))
def test_every_name_in_all_exists(name):
    module = importlib.import_module(name)
    missing = [n for n in getattr(module, "__all__", ()) if not hasattr(module, n)]
    assert missing == []
