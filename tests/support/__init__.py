"""Helpers shared by test modules (importable as ``support``: pytest's ``pythonpath``
setting in pyproject.toml puts ``tests/`` on the path, so no test imports another
test module)."""
