"""The public Python API: ``__all__`` of the packages, and the README's example run as written.

The example is taken from README.md (the ```python block under "Python API")
and executed with the demo case's path made absolute and the working folder
set to a temporary one, so what the README shows is what works.
"""
import re

import numpy as np
import pytest

import slipfield.fields
import slipfield.slope
from support.demos import CASES

README = CASES.parent / "README.md"


def test_public_names_are_the_documented_ones():
    assert set(slipfield.slope.__all__) == {"load_case", "deterministic", "single_variable_reliability",
                                            "random_problem", "run_case", "export_realisations",
                                            "factor_of_safety", "InputError"}
    for pkg in (slipfield.slope, slipfield.fields):
        for name in pkg.__all__:
            assert getattr(pkg, name) is not None


@pytest.mark.slow
def test_readme_example_runs_as_written(tmp_path, monkeypatch, capsys):
    text = README.read_text(encoding="utf-8")
    section = text[text.index("## Python API"):]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    code = code.replace('"cases/', f'"{CASES.as_posix()}/')
    monkeypatch.chdir(tmp_path)
    namespace = {}
    exec(compile(code, "README.md", "exec"), namespace)
    result = namespace["result"]
    assert result.fs.shape == (200,)
    assert 0.0 <= result.pf <= 1.0 and result.pf == np.mean(result.fs[np.isfinite(result.fs)] < 1.0)
    exported = sorted(p.name for p in (tmp_path / "levee-fields").iterdir())
    assert "realisations.csv" in exported
    printed = capsys.readouterr().out.split()
    assert float(printed[0]) == namespace["det"]["undrained"]["methods"]["bishop"]["fs"]
