"""A reliability method that cannot reach an answer reports its own status.

Issue 11: FORM aborted the whole run ("use a positive marginal", though every
marginal was lognormal) when the slope's FS was well below 1: its line search
steps far out in standard-normal space, where a lognormal phi' exceeds 90
degrees and tan(phi') turns negative. The other methods must still run and
the failed one must say why in its own row.
"""
from pathlib import Path

import numpy as np

from slipfield.slope.case.analyses import deterministic, single_variable_reliability
from slipfield.slope.case.build import load_case

CASES = Path(__file__).resolve().parents[2] / "cases"


def _weak_cut(tmp_path):
    # the cut demo with weak residual soils (invented): FS ~ 0.4 drained
    text = (CASES / "cut_residual_soil.toml").read_text()
    for a, b in (("c = 6.0", "c = 0.5"), ("phi = 31.0", "phi = 14.0"),
                 ("c = 12.0", "c = 1.0"), ("phi = 26.0", "phi = 12.0")):
        assert a in text
        text = text.replace(a, b, 1)
    p = tmp_path / "weak_cut.toml"
    p.write_text(text)
    case = load_case(str(p))
    case.analysis["hypotheses"] = ["drained"]
    case.analysis["methods"] = [case.analysis["method"]]
    return case


def test_form_failure_is_reported_in_its_row_and_the_others_run(tmp_path):
    case = _weak_cut(tmp_path)
    case.data.setdefault("reliability", {})["samples"] = 400
    det = deterministic(case)
    assert det["drained"]["methods"]["bishop"]["fs"] < 0.6
    out = single_variable_reliability(case, det, "drained")["summary"]
    for m in case.data["reliability"]["methods"]:
        assert m in out
    # every lognormal Monte Carlo sample is admissible: pf of a slope at FS ~ 0.4 is near 1
    mc = out["monte-carlo"]
    assert mc["pf"] > 0.9
    form = out["form"]
    if "beta" not in form:
        # its own status, with the reason, in its own row
        assert form["status"].startswith("not computed: ") and len(form["status"]) > 20
        assert "φ' reached" in form["status"] and "90°" in form["status"]   # what happened, not "use a positive marginal"
    else:
        assert np.isfinite(form["beta"]) and form["beta"] < 0
