"""Zone crossings of polylines, one line and several at once (slope.bank.zone_crossings_many).

Checked against closed-form intersections of straight lines with the zone
boundaries of an invented two-zone embankment (``examples.two_zone_section``:
fill above y = 4 m up to x = 36 m, clay below and beyond). A bank of several
polylines reads every line's crossings in one pass (issue 17: the per-realisation
search builds such banks thousands of times).
"""
import numpy as np

from slipfield.slope.bank import build_bank, zone_crossings, zone_crossings_many
from slipfield.slope.examples import two_zone_section
from slipfield.slope.surfaces import Polyline


def _line(x0, y0, x1, y1):
    return Polyline([[x0, y0], [x1, y1]])


def test_crossings_are_the_closed_form_intersections():
    sec = two_zone_section()
    # from the crest (10, 12) down to (30, 0): leaves the fill through its base y = 4 at x = 10 + 8 / 0.6
    a = _line(10.0, 12.0, 30.0, 0.0)
    # rising from the clay (5, 2) into the fill (15, 8): through y = 4 at x = 5 + 10 * 2 / 6
    b = _line(5.0, 2.0, 15.0, 8.0)
    c = _line(50.0, -1.0, 70.0, -1.0)  # wholly in the clay: no crossing
    got = zone_crossings_many(sec, [a, b, c], [10.0, 5.0, 50.0], [30.0, 15.0, 70.0])
    # the zone is read just above the line (1e-7 of the ground's 12 m of relief), so the crossing is
    # where the line's point 1.2e-6 m higher passes y = 4
    eps = 1e-7 * 12.0
    np.testing.assert_allclose(got[0], [10.0 + (8.0 + eps) / 0.6], rtol=0, atol=2e-9 * 20.0)
    np.testing.assert_allclose(got[1], [5.0 + (2.0 - eps) / 0.6], rtol=0, atol=2e-9 * 10.0)
    assert got[2].size == 0
    # each line alone gives the same abscissae as in the batch, bit for bit
    for line, lo, hi, want in zip((a, b, c), (10.0, 5.0, 50.0), (30.0, 15.0, 70.0), got):
        assert np.array_equal(zone_crossings(sec, line, lo, hi), want)
    assert zone_crossings_many(sec, [], [], []) == []


def test_a_bank_of_polylines_puts_a_slice_side_at_each_crossing():
    sec = two_zone_section()
    lines = [Polyline([[12.0, 12.0], [30.0, 2.0], [44.0, 0.0]]), Polyline([[16.0, 12.0], [34.0, 1.0], [44.0, 0.0]])]
    bank = build_bank(sec, lines, n_slices=20)
    for r, line in enumerate(lines):
        cross = zone_crossings(sec, line, line.points[0, 0], line.points[-1, 0])
        assert cross.size == 1
        sides = np.r_[bank.x_left[r], bank.x_right[r, -1]]
        # the bank's sliding frame may run toward -x; the side sits at the crossing either way
        assert np.min(np.abs(np.abs(sides) - cross[0])) < 1e-9
