"""Block and dynamic-programming searches (issue 15): closed forms, Taylor's numbers, bad input."""
from __future__ import annotations

import numpy as np
import pytest

from slipfield.slope.case.schema import CaseError, parse_case
from slipfield.slope.cli import main
from slipfield.slope.errors import InputError
from slipfield.slope.examples import simple_slope
from slipfield.slope.search import centre_lattice, evaluate_surfaces, window
from slipfield.slope.search.block import block_polylines
from slipfield.slope.search.dynamic_programming import DP_FAMILY, DPSettings, dp_surface
from slipfield.slope.section import Section
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle, family_of

PHI0_TOL = ("negative-normal", "thrust-outside", "small-m-alpha")  # m_alpha = cos a is harmless for phi = 0


# ------------------------------------------------- long block: infinite slope
def _long_seam(beta=10.0, length=500.0, cover=1.0, seam=0.2):
    """A long 10° slope with a thin weak seam parallel to it, `cover` m below (vertically)."""
    H = length * np.tan(np.radians(beta))
    ground = np.array([[-30.0, 0.0], [0.0, 0.0], [length, H], [length + 30.0, H]])
    mats = {m.name: m for m in (Material("cover", unit_weight=20.0, c=0.0, phi=30.0),
                                Material("weak", unit_weight=20.0, c=2.0, phi=20.0),
                                Material("firm", unit_weight=20.0, c=50.0, phi=35.0))}
    layers = [("cover", "cover", ground - [0.0, cover]), ("seam", "weak", ground - [0.0, cover + seam]),
              ("firm", "firm", None)]
    return Section.from_layers(ground, layers, mats, base_y=-20.0), H


@pytest.mark.parametrize("n_slices", [20, 100])
def test_block_on_a_long_seam_matches_the_infinite_slope(n_slices):
    # 20 slices suffice: slice sides sit at every bend of the block and of the ground line and where
    # the base crosses into another zone (slope.bank.polyline_sides), so each wedge is whole slices
    # (measured +0.54 % at 10 to 100 slices; with equal widths, +1.2 % at 20 slices and 11 % low on
    # the thin-seam section of the next test)
    beta, length, lift = 10.0, 500.0, 0.5
    sec, H = _long_seam(beta, length)
    # Infinite slope, dry (e.g. Duncan, Wright & Brandon 2014, ch. 6): FS = [c' + γ z cos²β tanφ'] /
    # (γ z sinβ cosβ), z the vertical depth of the sliding plane: the base lies half way through the
    # 0.2 m seam under 1 m of cover. The block's wedges are end effects of order z / L = 1/500: the
    # active and passive thrusts (Rankine, c' = 0 cover, about 0.5 γ z² K) change the resistance by
    # about 0.4 %; tolerance 1 % (issue 15).
    z = 1.0 + 0.2 * (1 - lift)
    b = np.radians(beta)
    exact = (2.0 + 20.0 * z * np.cos(b) ** 2 * np.tan(np.radians(20.0))) / (20.0 * z * np.sin(b) * np.cos(b))
    blocks = block_polylines(sec, "seam", entry=(length - 20.0, length + 20.0), exit=(-20.0, 20.0), points=7,
                             lift=lift)
    assert all(family_of(p) == "block" for p in blocks)
    r = evaluate_surfaces(sec, blocks, method="spencer", n_slices=n_slices)
    assert r.fs_min == pytest.approx(exact, rel=0.01)
    # Circles cannot follow a 500 m long, 1.1 m deep plane: the best of a lattice over the whole
    # slope is more than 8 % above it (measured 12.6 % with a finer lattice).
    c = centre_lattice(sec, nx=10, ny=10, n_radii=8, method="spencer", n_slices=40)
    assert c.fs_min > 1.08 * exact


def test_block_on_a_thin_seam_needs_few_slices():
    # Invented 10 m cut over a 0.6 m seam (slope.examples.layered_weak_section): with slice sides at
    # the block's bends and where its wedges cross into the seam, Janbu's simplified FS of a block
    # is the same for any slice count (its geometry is exactly piecewise linear) and Spencer's at 20
    # slices is within 1 % of 400 (measured 0.7 %); with equal widths it was 11 % low at 20.
    from slipfield.slope.examples import layered_weak_section

    sec = layered_weak_section()
    blocks = block_polylines(sec, "seam", entry=(15.0, 30.0), exit=(45.0, 60.0), points=4)
    fine = evaluate_surfaces(sec, blocks, method="spencer", n_slices=400)
    coarse = evaluate_surfaces(sec, blocks, method="spencer", n_slices=20)
    assert coarse.fs_min == pytest.approx(fine.fs_min, rel=0.01)
    j20 = evaluate_surfaces(sec, fine.critical, method="janbu", n_slices=20)
    j400 = evaluate_surfaces(sec, fine.critical, method="janbu", n_slices=400)
    assert j20.fs[0] == pytest.approx(j400.fs[0], rel=1e-9)


def test_block_wedges_follow_rankine_angles():
    sec, H = _long_seam()
    blocks = block_polylines(sec, "seam", entry=(490.0, 510.0), exit=(-10.0, 10.0), points=2, lift=0.5,
                             hypothesis="drained")
    p = blocks[0].points
    # mass moves toward -x: the passive wedge is at the left end, in the c' = 0, φ' = 30° cover:
    # Rankine (1857) passive plane at 45° - φ/2 = 30°, active at 45° + φ/2 = 60° to the horizontal
    left = np.degrees(np.arctan2(p[0, 1] - p[1, 1], p[1, 0] - p[0, 0]))
    right = np.degrees(np.arctan2(p[-1, 1] - p[-2, 1], p[-1, 0] - p[-2, 0]))
    assert left == pytest.approx(30.0, abs=0.5)
    assert right == pytest.approx(60.0, abs=0.5)


# ------------------------------------------------------ Taylor's numbers --
def _taylor_section(beta):
    cot = 1e-3 if beta == 90 else 1.0 / np.tan(np.radians(beta))  # x must increase: a 1 cm wide "vertical" face
    return simple_slope(10.0, cot, 3.0, material=Material("clay", unit_weight=20.0, su_model="constant", su=50.0)), cot


@pytest.mark.parametrize("beta,ns", [(90, 0.261), (75, 0.219)])
def test_taylor_numbers_with_every_family_that_can_express_them(beta, ns):
    # Taylor (1937) stability numbers c/(F γ H), φ = 0, toe circles, recalled from memory: 0.261
    # (vertical), 0.219 (75°); within 1 % (issue 15) by each family that can express a toe mechanism
    # in a homogeneous slope: circles (Spencer and Bishop), the dynamic-programming paths from the
    # best circle and the Nelder-Mead polyline refinement. Blocks cannot: their base follows a zone.
    # Measured: circles 0.2189 and 0.2606 (-0.05 %, -0.1 %); dynamic programming 0.2199 (+0.4 %) and
    # 0.2610. The path may only go below the circle (Ns up). (1.2 % above 0.219 was measured when this
    # test was first written, before the later changes to Spencer's root finding of issue 11.)
    from slipfield.slope.search import refine

    sec, cot = _taylor_section(beta)
    L = 10.0 * cot
    kw = dict(upslope=(L + 0.5, L + 15.0), downslope=(-3.0, 0.0), n_up=20, n_down=5, n_radii=20, max_angle=89.0,
              min_angle=5.0, hypothesis="undrained", tolerate=PHI0_TOL)
    circ = window(sec, method="spencer", **kw)
    bishop = window(sec, method="bishop", **kw)
    paths = dp_surface(sec, circ.critical, hypothesis="undrained", n_slices=60)
    assert paths and all(family_of(p) == DP_FAMILY for p in paths)
    r = evaluate_surfaces(sec, paths, method="spencer", hypothesis="undrained", n_slices=60, tolerate=PHI0_TOL)
    nm = refine(sec, circ.critical, n_vertices=8, method="spencer", hypothesis="undrained", n_slices=60,
                max_evaluations=60, tolerate=PHI0_TOL)
    ns_of = lambda fs: 50.0 / (20.0 * 10.0 * fs)  # noqa: E731 - c / (F γ H)
    for name, fs in (("circles, Spencer", circ.fs_min), ("circles, Bishop", bishop.fs_min),
                     ("dynamic programming", r.fs_min), ("Nelder-Mead polyline", nm.fs_min)):
        assert ns_of(fs) == pytest.approx(ns, rel=0.01), name
    assert ns_of(r.fs_min) >= ns_of(circ.fs_min) * (1 - 1e-3)


# ------------------------------------------------------- homogeneous slope --
def test_dynamic_programming_never_above_the_best_circle_on_a_homogeneous_slope():
    # c' = 10 kPa, φ' = 25°, 10 m high 2H:1V slope (invented): the critical surface of a
    # homogeneous c-φ slope is close to a circle (e.g. Duncan, Wright & Brandon 2014, ch. 7), so
    # the search from the best circle must end at or below it, and not far below (2 %).
    sec = simple_slope(10.0, 2.0, 2.0)
    circ = centre_lattice(sec, nx=10, ny=10, n_radii=8, method="spencer", n_slices=40)
    paths = dp_surface(sec, circ.critical, n_slices=40, settings=DPSettings(columns=20, nodes=15, passes=2))
    r = evaluate_surfaces(sec, paths, method="spencer", n_slices=40)
    assert r.counted.any()
    assert r.fs_min <= circ.fs_min * (1 + 1e-4)
    assert r.fs_min >= circ.fs_min * 0.98


@pytest.mark.parametrize("beta", [90, 75, "2H:1V"])
def test_dynamic_programming_on_homogeneous_phi0_slope_is_near_circular(beta):
    # Homogeneous φ = 0 slopes (issue 15: "a near-circular surface with FS within 0.5 % of the
    # circle's"). 90° and 75° with the firm base out of reach (D = 3: the base is 20 m below the toe;
    # Taylor's toe circles reach about 1 m below the toe): the critical surface is Taylor's (1937) toe
    # circle. 2H:1V with D = 4 (base 30 m below the toe): there Spencer's method gives free paths 10-11 %
    # below the best circle (measured 1.265-1.30 against 1.4214: its statical freedom, not a mechanism:
    # each passes every limit-equilibrium check), and as chains of rigid blocks with optimised interfaces
    # (the upper bound of Donald & Chen 1997) they are less critical than the circle's chords (measured
    # 1.52-1.58 against 1.457), so slope.search.path_acceptance refuses them and the search keeps the
    # circle, counting the refusals. The search returns a surface within 0.5 % of the circle in FS and
    # within 3 % of its radius everywhere (on 75° a path, measured -0.44 %; elsewhere the circle).
    from slipfield.slope.search.dynamic_programming import dynamic_programming
    from slipfield.slope.search.path_acceptance import KINEMATIC_REASON

    if beta == "2H:1V":
        sec = simple_slope(10.0, 2.0, 4.0, material=Material("clay", unit_weight=20.0, su_model="constant", su=50.0))
        kw = dict(upslope=(20.5, 49.0), downslope=(-29.0, 0.0), n_up=20, n_down=10, n_radii=20)
    else:
        sec, cot = _taylor_section(beta)
        L = 10.0 * cot
        kw = dict(upslope=(L + 0.5, L + 15.0), downslope=(-3.0, 0.0), n_up=20, n_down=5, n_radii=20,
                  max_angle=89.0, min_angle=5.0)
    circ = window(sec, method="spencer", hypothesis="undrained", tolerate=PHI0_TOL, **kw)
    r = dynamic_programming(sec, start=circ.critical, hypothesis="undrained", n_slices=60, tolerate=PHI0_TOL)
    assert r.counted.any()
    assert r.fs_min == pytest.approx(circ.fs_min, rel=0.005)
    assert r.fs_min <= circ.fs_min * (1 + 1e-9)
    c = circ.critical
    crit = r.critical
    if isinstance(crit, Circle):
        assert crit == c
    else:
        p = crit.points[1:-1]
        off = np.abs(np.hypot(p[:, 0] - c.xc, p[:, 1] - c.yc) - c.radius)
        assert off.max() < 0.03 * c.radius
    assert circ.critical.yc - circ.critical.radius > sec.base_y + 5.0    # the base is out of reach
    if beta == "2H:1V":
        # the rule did the work: the paths themselves are far below the circle by limit equilibrium
        raw = evaluate_surfaces(sec, dp_surface(sec, c, hypothesis="undrained", n_slices=60), method="spencer",
                                hypothesis="undrained", n_slices=60, tolerate=PHI0_TOL)
        assert np.nanmin(np.where(raw.counted, raw.fs, np.nan)) < 0.95 * circ.fs_min
        assert r.rejected[KINEMATIC_REASON] >= 1


def test_dp_settings_refuse_fewer_than_three_vertices():
    with pytest.raises(InputError, match="columns"):
        DPSettings(columns=2)
    with pytest.raises(InputError, match="nodes"):
        DPSettings(nodes=1)


# ------------------------------------------------------------- bad input --
_CASE = """
[section]
ground = [[0.0, 10.0], [25.0, 10.0], [45.0, 0.0], [75.0, 0.0]]
bottom = -12.0
[[section.layer]]
name = "upper"
material = "clay"
bottom = -0.4
[[section.layer]]
name = "seam"
material = "seam"
bottom = -1.0
[[section.layer]]
name = "lower"
material = "clay"
[[material]]
name = "clay"
unit_weight = 20.0
c = 20.0
phi = 28.0
[[material]]
name = "seam"
unit_weight = 20.0
c = 0.0
phi = 12.0
[analysis]
hypotheses = ["drained"]
methods = ["spencer"]
method = "{method}"
[search]
kind = "centre-lattice"
trials = 100
[[search.block]]
zone = "{zone}"
entry = {entry}
exit = {exit}
{extra}
[search.dynamic_programming]
columns = {columns}
{dp_extra}
"""


def _case(method="spencer", zone="seam", entry="[10.0, 30.0]", columns=20, exit="[45.0, 65.0]", extra="",
          dp_extra=""):
    return _CASE.format(method=method, zone=zone, entry=entry, columns=columns, exit=exit, extra=extra,
                        dp_extra=dp_extra)


def test_good_block_case_parses():
    case = parse_case(_case())
    assert case["search"]["block"][0]["points"] == 10
    assert case["search"]["dynamic_programming"]["passes"] == 3


@pytest.mark.parametrize("kw,key", [
    (dict(zone="slimes"), "search.block[0].zone"),
    (dict(entry="[100.0, 120.0]"), "search.block[0].entry"),
    (dict(entry="[30.0, 10.0]"), "search.block[0].entry"),
    (dict(exit="[80.0, 95.0]"), "search.block[0].exit"),       # beyond the ground line (x 0 to 75 m)
    (dict(exit="[-30.0, -5.0]"), "search.block[0].exit"),
    (dict(extra="points = 1"), "search.block[0].points"),       # fewer than 2 points per range
    (dict(extra="lift = 1.0"), "search.block[0].lift"),
    (dict(columns=2), "search.dynamic_programming.columns"),    # fewer than 3 vertices
    (dict(dp_extra="nodes = 2"), "search.dynamic_programming.nodes"),
    (dict(method="bishop"), "analysis.method"),
])
def test_bad_search_families_name_the_key(kw, key):
    with pytest.raises(CaseError) as e:
        parse_case(_case(**kw))
    assert key in str(e.value)


def test_bad_block_exits_2_before_any_output(tmp_path, capsys):
    case = tmp_path / "bad.toml"
    case.write_text(_case(zone="slimes"))
    out = tmp_path / "out"
    assert main(["run", str(case), "--out", str(out), "--quiet"]) == 2
    assert "search.block[0].zone" in capsys.readouterr().err
    assert not out.exists()


def test_block_zone_missing_from_library_call_names_the_key():
    sec = simple_slope()
    with pytest.raises(InputError, match="search.block.zone"):
        block_polylines(sec, "slimes", entry=(25.0, 35.0), exit=(-10.0, 0.0))


def test_case_bank_holds_every_family():
    from slipfield.slope.case.analyses import trial_surfaces
    from slipfield.slope.case.build import build_section, Case

    data = parse_case(_case())
    case = Case("<test>", data, build_section(data))
    res = trial_surfaces(case, "drained", "spencer")
    fams = {family_of(s) for s in res.surfaces}
    assert fams == {"circle", "block", DP_FAMILY}
    fam_crit = family_of(res.critical)
    # the seam (c' = 0, φ' = 12°) governs: a surface along it, not a circle through the stiff clay
    assert fam_crit in ("block", DP_FAMILY)
    blocks = [i for i, s in enumerate(res.surfaces) if family_of(s) == "block"]
    assert res.fs_min <= np.nanmin(np.where(res.counted[blocks], res.fs[blocks], np.inf))
    assert isinstance(res.surfaces[0], Circle)


def test_block_whose_wedges_cannot_reach_the_zone_names_the_key():
    # entry and exit 1.5 m apart over a 1 m deep seam: Rankine wedges (60° and 30° in the
    # φ' = 30° cover) need about 2.3 m between them to reach it, so no block exists
    sec, _ = _long_seam()
    with pytest.raises(InputError, match=r"search\.block"):
        block_polylines(sec, "seam", entry=(100.0, 101.0), exit=(99.0, 99.5), points=3, key="search.block[0]")
