"""Importing the package loads no scipy module it does not need (issue 17).

A short ``slipfield fields sample`` run spent three quarters of its time
importing scipy.stats through ``fields/__init__``; names are now imported
on first use. Checked in a fresh interpreter (this test process has
imported everything already).
"""
import subprocess
import sys

import slipfield.fields


def test_package_import_and_command_parser_load_no_heavy_module():
    # the slipfield command builds its parser (method names from the registry) before any work:
    # that must not import the compiled kernels (numba) either
    code = ("import sys, slipfield.fields, slipfield.fields.cli, slipfield.slope.cli; "
            "slipfield.slope.cli.build_parser(); "
            "print(sorted(m for m in ('scipy.stats', 'scipy.special', 'scipy.linalg', 'gstools', 'numba') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_every_public_name_still_resolves():
    for name in slipfield.fields.__all__:
        assert getattr(slipfield.fields, name) is not None, name
    assert set(slipfield.fields.__all__) <= set(dir(slipfield.fields))
