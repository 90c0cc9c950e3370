"""Round trips of the field exports (NPZ, VTU cell/point data, XDMF series)
and the mesh geometry helpers of fields.io."""
import numpy as np
import pytest

from slipfield.fields import RegularGrid
from slipfield.fields import io as fio
from slipfield.fields.errors import InputError

GRID = RegularGrid(1.0, -2.0, 5, 3, 0.5, 0.25)


def _vals(n, m, seed=0):
    return np.random.default_rng(seed).standard_normal((n, m))


def test_npz_round_trip_streamed(tmp_path):
    p = tmp_path / "f.npz"
    v = _vals(7, 15).reshape(7, 5, 3)
    with fio.NpzSeriesWriter(p, GRID, 7, extra={"seed": np.int64(4)}) as w:
        w.write(v[:3])
        w.write(v[3:].reshape(4, 15))
    # np.load is the outside reader: the archive must be a plain NPZ
    with np.load(p) as f:
        np.testing.assert_array_equal(f["values"], v)
        np.testing.assert_allclose(f["x"], 1.0 + 0.5 * (np.arange(5) + 0.5))
        np.testing.assert_allclose(f["y"], -2.0 + 0.25 * (np.arange(3) + 0.5))
        np.testing.assert_array_equal(f["indices"], np.arange(7))
        assert int(f["seed"]) == 4
    d = fio.read_npz(p)
    assert d["values"].shape == (7, 5, 3)


def test_npz_atomic_on_error(tmp_path):
    p = tmp_path / "f.npz"
    with pytest.raises(InputError):
        with fio.NpzSeriesWriter(p, GRID, 4) as w:
            w.write(_vals(2, 15))  # 2 of the 4 declared: incomplete
    assert not p.exists()
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("centre", ["cell", "node"])
def test_vtu_round_trip(tmp_path, centre):
    mesh = fio.grid_mesh(GRID) if centre == "cell" else fio.grid_centre_mesh(GRID)
    m = mesh.n_cells if centre == "cell" else mesh.n_nodes
    v = _vals(3, m, 1)
    p = tmp_path / "f.vtu"
    fio.write_vtu(p, mesh, v, centre=centre, indices=[4, 5, 6])
    mesh2, v2, idx, c2 = fio.read_vtu(p)
    assert c2 == centre
    np.testing.assert_array_equal(idx, [4, 5, 6])
    np.testing.assert_allclose(v2, v)
    np.testing.assert_allclose(mesh2.points, mesh.points)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["f.vtu"]


@pytest.mark.parametrize("centre", ["cell", "node"])
def test_xdmf_series_round_trip_h5_beside(tmp_path, monkeypatch, centre):
    # run from another directory: the .h5 must land beside the .xdmf, not in cwd
    elsewhere = tmp_path / "cwd"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    mesh = fio.grid_mesh(GRID)
    m = mesh.n_cells if centre == "cell" else mesh.n_nodes
    v = _vals(5, m, 2)
    p = tmp_path / "out" / "f.xdmf"
    with fio.XdmfSeriesWriter(p, mesh, centre=centre) as w:
        w.write(v[:2])
        w.write(v[2:])
    assert sorted(x.name for x in p.parent.iterdir()) == ["f.h5", "f.xdmf"]
    assert list(elsewhere.iterdir()) == []
    monkeypatch.chdir(tmp_path)
    mesh2, v2, idx, c2 = fio.read_xdmf_series(p)
    assert c2 == centre
    np.testing.assert_array_equal(idx, np.arange(5))
    np.testing.assert_allclose(v2, v)
    assert mesh2.n_cells == mesh.n_cells


def test_xdmf_atomic_on_error(tmp_path):
    p = tmp_path / "f.xdmf"
    with pytest.raises(RuntimeError):
        with fio.XdmfSeriesWriter(p, fio.grid_mesh(GRID)) as w:
            w.write(_vals(1, 15))
            raise RuntimeError("crash")
    assert list(tmp_path.iterdir()) == []


def test_read_mesh_mixed_and_geometry(tmp_path):
    import meshio

    # unit square split into a quad [0,1]x[0,0.5] and two triangles above:
    # areas and centroids by hand (shoelace / triangle centroid = mean of corners)
    pts = np.array([[0, 0, 0], [1, 0, 0], [1, 0.5, 0], [0, 0.5, 0], [1, 1, 0], [0, 1, 0]], float)
    m = meshio.Mesh(pts, [("quad", np.array([[0, 1, 2, 3]])),
                          ("triangle", np.array([[3, 2, 4], [3, 4, 5]])),
                          ("line", np.array([[0, 1]]))])
    p = tmp_path / "m.vtu"
    meshio.write(p, m)
    mesh = fio.read_mesh(p)
    assert mesh.n_cells == 3
    np.testing.assert_allclose(fio.cell_areas(mesh), [0.5, 0.25, 0.25])
    np.testing.assert_allclose(fio.cell_centres(mesh),
                               [[0.5, 0.25], [2 / 3, 2 / 3], [1 / 3, 5 / 6]])
    qp, qw = fio.cell_quadrature(mesh, 2)
    np.testing.assert_allclose(qw.sum(axis=1), fio.cell_areas(mesh))
    # 2x2 Gauss integrates the linear field x exactly: cell average of x = centroid x
    avg = fio.cell_average(qp[:, 0], qw)
    np.testing.assert_allclose(avg, fio.cell_centres(mesh)[:, 0], atol=1e-12)


def test_read_mesh_errors(tmp_path):
    with pytest.raises(InputError, match="not found"):
        fio.read_mesh(tmp_path / "none.msh")
    import meshio

    pts = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
    p = tmp_path / "tet.vtu"
    meshio.write(p, meshio.Mesh(pts, [("tetra", np.array([[0, 1, 2, 3]]))]))
    with pytest.raises(InputError):
        fio.read_mesh(p)
