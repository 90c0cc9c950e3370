"""Each zone's fields are generated on its box of grid cells (slope.simulate.field_box).

What the box must guarantee: every cell the bank reads lies in it (so the
simulated strengths come from generated values, not from the edge rule),
exports hold exactly the values the simulation used, and the box depends
on the section and cell only (a problem and one derived from it draw the
same realisations). The law of the field on a box is the generator's,
checked against the model in tests/fields (circulant embedding, Dietrich &
Newsam 1997); the pf checks against closed forms (infinite slope) run on
box fields in tests/simulate/test_infinite_slope.py.
"""
import numpy as np

import slipfield.slope.simulate.engine as engine
from slipfield.fields.marginals import make_marginal
from slipfield.slope.examples import two_zone_section
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import RandomProblem, RandomProperty, realise_fields
from slipfield.slope.simulate.field_box import field_box
from slipfield.slope.surfaces import Circle


def _problem(surfaces=None, cell=0.5, n_slices=12):
    sec = two_zone_section()
    if surfaces is None:
        circ = lattice_circles(sec, nx=4, ny=3, n_radii=3)
        surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(circ.xc, circ.yc, circ.radius)]
    ln = lambda mean, cov: make_marginal("lognormal", mean=mean, cov=cov)  # noqa: E731
    props = [RandomProperty("fill", "phi", ln(32.0, 0.1), 15.0, 1.5),
             RandomProperty("clay", "c", ln(12.0, 0.3), 20.0, 2.0)]
    return RandomProblem(sec, "drained", "bishop", props, surfaces, 0, n_slices=n_slices, cell=cell)


def test_box_holds_every_cell_the_bank_reads_and_is_smaller_than_the_grid():
    p = _problem()
    st = engine.stencil(p)
    g = p.grid
    for z, (_, cells, _) in st.zones.items():
        box = field_box(p, z)
        i, j = np.divmod(cells, g.ny)
        assert box.i0 <= i.min() and i.max() < box.i1 and box.j0 <= j.min() and j.max() < box.j1
        # local() maps them one to one (no cell falls back on the nearest box cell)
        assert np.array_equal(box.cells()[box.local(cells)], cells)
    # the fill (zone 0) sits in the upper part of the grid: its box is a fraction of it
    assert field_box(p, 0).n_cells < 0.6 * g.n_points


def test_exported_fields_are_the_simulated_ones_and_nan_outside_the_box():
    p = _problem()
    st = engine.prepare(p)
    g = p.grid
    _, fields = realise_fields(p, 7, 3)
    for z, (_, cells, _) in st.zones.items():
        members = engine.zone_members(p, z)
        used = engine.zone_cell_values(p, 7, [3], z, cells, members)
        for i in members:
            exported = fields[p.properties[i].key].reshape(-1)[cells]
            here = ~np.isnan(exported)  # exports hold the cells whose centre is in the zone
            assert here.sum() > 0.5 * cells.size
            np.testing.assert_array_equal(exported[here], used[i][0][here])
        box = field_box(p, z)
        inside = np.zeros(g.n_points, bool)
        inside[box.cells()] = True
        for i in members:
            assert np.all(np.isnan(fields[p.properties[i].key].reshape(-1)[~inside]))


def test_box_depends_on_the_section_when_the_bases_stay_within_reach():
    # 30 slices: short bases, so the boxes are those of the section alone, whatever the bank
    whole = _problem(n_slices=30)
    alone = _problem(surfaces=[whole.surfaces[5]], n_slices=30)
    for z in (0, 1):
        assert field_box(whole, z) == field_box(alone, z)
    np.testing.assert_array_equal(engine.standard_normals(whole, 3, [0, 4], 1, 1),
                                  engine.standard_normals(alone, 3, [0, 4], 1, 1))


def test_derived_problems_draw_the_same_fields():
    # 12 slices: long bases read beyond the reach and widen the boxes; a problem of the fixed
    # surface alone takes the whole problem's boxes, so its realisations are the same
    from slipfield.slope.simulate.studies import fixed_surface_problem

    p = _problem()
    alone = fixed_surface_problem(p)
    fresh = _problem(surfaces=alone.surfaces)  # the same surface, boxes of its own
    assert any(field_box(fresh, z) != field_box(p, z) for z in (0, 1))  # so inheriting matters
    for i, z in ((0, 0), (1, 1)):  # fill.phi in the fill, clay.c in the clay
        assert field_box(alone, z) == field_box(p, z)
        np.testing.assert_array_equal(engine.standard_normals(p, 3, [2], i, z),
                                      engine.standard_normals(alone, 3, [2], i, z))
