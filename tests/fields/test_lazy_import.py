"""Importing the package, and a simulation that needs none, load no scipy module they do not need (issue 17).

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


def test_simulate_of_a_case_without_site_data_does_not_import_scipy_stats(tmp_path):
    # `slipfield simulate` of the levee demo (normal and lognormal marginals, no site data) needs no
    # scipy.stats: its import was half a second of the command's serial start, before any batch.
    # The same run's interval is Clopper-Pearson's, from scipy.special (checked against
    # scipy.stats.binomtest in tests/reliability/test_rel_stats.py).
    from pathlib import Path

    case = Path(__file__).resolve().parents[2] / "cases" / "levee_soft_clay.toml"
    code = ("import sys; from slipfield.slope.cli import main; "
            f"rc = main(['simulate', {str(case)!r}, '--out', {str(tmp_path / 'out')!r}, '--realisations', '20', "
            "'--jobs', '1', '--quiet', '--refine-search', 'off']); "
            "print(rc, 'scipy.stats' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split()[-2:] == ["0", "False"]
    assert (tmp_path / "out" / "results.json").is_file()
