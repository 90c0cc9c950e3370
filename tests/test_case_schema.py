"""The case-file reader: every problem reported at once, with line and key.

These checks are of slipfield's own schema (no outside source is involved);
the demo cases are invented scenarios.
"""
from pathlib import Path

import pytest

from slipfield.slope.case.build import load_case
from slipfield.slope.case.schema import CaseError, parse_case

CASES = Path(__file__).resolve().parents[1] / "cases"

GOOD = """
[section]
ground = [[0, 10], [20, 10], [40, 0], [60, 0]]
bottom = -10
[[section.zone]]
name = "all"
material = "clay"
polygon = [[0, -10], [60, -10], [60, 0], [40, 0], [20, 10], [0, 10]]
[[material]]
name = "clay"
unit_weight = 18
c = 5
phi = 25
"""


def test_demo_cases_load():
    for path in sorted(CASES.glob("*.toml")):
        case = load_case(path)
        assert case.section.zone_names
        assert case.data["simulation"]["realisations"] >= 1


def test_good_case_gets_defaults():
    data = parse_case(GOOD)
    assert data["analysis"]["method"] == "bishop"
    assert data["simulation"]["averaging"] == "base-average"
    assert data["seismic"]["kh"] == 0.0


def test_every_problem_is_listed_with_line_and_key():
    text = GOOD + """
[[random]]
material = "clay"
property = "phi"
cov = -0.1
theta_h = 0
theta_v = 2
[simulation]
realisatons = 10
"""
    with pytest.raises(CaseError) as info:
        parse_case(text, "bad.toml")
    err = info.value
    assert len(err.problems) == 3, err.problems
    text_lines = text.splitlines()
    by_key = {p.split(": ", 1)[1].split(" ")[0]: p for p in err.problems}
    # each message carries the line of the offending key
    for key, word in (("random[0].cov", "cov"), ("random[0].theta_h", "theta_h")):
        msg = by_key[key]
        line = int(msg.split(":")[0].split()[1])
        assert text_lines[line - 1].strip().startswith(word)
    assert any("did you mean 'realisations'" in p for p in err.problems)
    assert str(err).startswith("bad.toml: 3 problems")


def test_undefined_material_and_random_reference():
    text = GOOD.replace('material = "clay"\npolygon', 'material = "sand"\npolygon') + """
[[random]]
material = "silt"
property = "c"
cov = 0.3
theta_h = 10
theta_v = 1
"""
    with pytest.raises(CaseError) as info:
        parse_case(text)
    msgs = "\n".join(info.value.problems)
    assert "'sand' is not defined" in msgs
    assert "'silt' matches no [[material]]" in msgs


def test_toml_syntax_error_names_the_line():
    with pytest.raises(CaseError) as info:
        parse_case("[section]\nground = [[0, 1], [2, 3]\n")
    assert "line" in str(info.value)


def test_geometry_problem_becomes_case_error(tmp_path):
    # a zone that leaves a gap under the slope: the section builder refuses it
    text = GOOD.replace("[[0, -10], [60, -10], [60, 0], [40, 0], [20, 10], [0, 10]]",
                        "[[0, -10], [60, -10], [60, 0], [0, 10]]")
    p = tmp_path / "gap.toml"
    p.write_text(text)
    with pytest.raises(CaseError) as info:
        load_case(p)
    assert "gap.toml" in str(info.value)


def test_inf_theta_accepted_and_cross_correlation_checked():
    text = GOOD + """
[[random]]
material = "clay"
property = "phi"
cov = 0.1
theta_h = "inf"
theta_v = "inf"
[[cross_correlation]]
between = ["clay.phi", "clay.c"]
rho = -0.5
"""
    with pytest.raises(CaseError) as info:
        parse_case(text)
    assert len(info.value.problems) == 1
    assert "'clay.c' is not a random property" in info.value.problems[0]


def test_unit_weight_field_is_refused_with_the_fix():
    text = GOOD + """
[[random]]
material = "clay"
property = "unit_weight"
cov = 0.05
theta_h = 10
theta_v = "inf"
"""
    with pytest.raises(CaseError) as info:
        parse_case(text)
    assert len(info.value.problems) == 1
    assert 'theta_h = "inf"' in info.value.problems[0] and "random[0]" in info.value.problems[0]
    parse_case(text.replace("theta_h = 10", "theta_h = \"inf\""))  # one variable per zone is accepted
