"""Mesh input and export of realisations (VTU, XDMF time series, NPZ).

A finite-element model is seeded by reading its mesh (any format meshio
reads: triangles and quadrilaterals, linear or quadratic, whose corner nodes
define the geometry), evaluating a field at the cell centres or as cell
averages over sub-points, and writing the realisations back out.

Formats
-------
VTU
    One file, the mesh plus one data array per realisation
    (``{name}_{k:05d}``), as cell data or point data. All realisations are
    held in memory while meshio writes; use XDMF for long runs.
XDMF
    One mesh and one time step per realisation (time value = realisation
    index ``k``), heavy data in an HDF5 file of the same stem *beside* the
    ``.xdmf`` file (meshio's own writer puts it in the working directory).
    Blocks are streamed: memory O(block).
NPZ
    Regular grids: ``values`` of shape ``(n, nx, ny)`` (index ``[k, i, j]``,
    the grid convention of DEVELOPERS.md), the cell-centre coordinates ``x``
    (nx,) and ``y`` (ny,), the scalars ``x0, y0, dx, dy`` and ``indices``
    (n,), the realisation numbers. Blocks are streamed into the zip entry:
    memory O(block).

Every writer writes to a temporary file in the target directory and renames
it into place only when complete, so a crash never leaves a half-written
file under the final name.
"""
from __future__ import annotations

import os
import shutil
import tempfile
import zipfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import InputError

__all__ = [
    "PlaneMesh",
    "read_mesh",
    "grid_mesh",
    "grid_centre_mesh",
    "cell_centres",
    "cell_areas",
    "cell_quadrature",
    "cell_average",
    "write_vtu",
    "read_vtu",
    "XdmfSeriesWriter",
    "write_xdmf_series",
    "read_xdmf_series",
    "NpzSeriesWriter",
    "write_npz",
    "read_npz",
]

# Cell types accepted and their number of corner nodes. In meshio's (VTK and
# gmsh) node ordering the corners come first, so quadratic cells keep their
# geometry by their first 3 or 4 nodes (straight-sided cells assumed).
_PLANE_CELLS = {"triangle": 3, "triangle6": 3, "triangle7": 3,
                "quad": 4, "quad8": 4, "quad9": 4}
# Lower-dimensional blocks (boundary markers written by mesh generators) are
# skipped; volume cells are refused.
_SKIPPED_CELLS = ("vertex", "line", "line3")


@dataclass(frozen=True)
class PlaneMesh:
    """A 2D mesh of triangles and quadrilaterals in the x–y plane.

    Attributes
    ----------
    points : numpy.ndarray, shape (n_nodes, 2)
        Node coordinates x, y (m).
    cells : tuple of (str, numpy.ndarray)
        Cell blocks ``(type, connectivity)`` in meshio's naming
        (``triangle``, ``quad``, ...). Cell values throughout this module are
        ordered block by block, then by row within a block.
    """

    points: np.ndarray
    cells: tuple

    def __post_init__(self):
        pts = np.asarray(self.points, dtype=float)
        if pts.ndim != 2 or pts.shape[1] != 2:
            raise InputError(f"mesh points must have shape (n_nodes, 2), got {pts.shape}")
        blocks = []
        for ctype, conn in self.cells:
            if ctype not in _PLANE_CELLS:
                raise InputError(
                    f"mesh cell type {ctype!r} is not supported; use triangles or "
                    "quadrilaterals (meshio names triangle, quad and their quadratic forms)"
                )
            conn = np.asarray(conn, dtype=np.int64)
            if conn.ndim != 2 or (conn.size and (conn.min() < 0 or conn.max() >= len(pts))):
                raise InputError(f"mesh block {ctype!r} has node numbers outside 0..{len(pts) - 1}")
            blocks.append((ctype, conn))
        if not blocks:
            raise InputError("mesh has no triangle or quadrilateral cells")
        object.__setattr__(self, "points", pts)
        object.__setattr__(self, "cells", tuple(blocks))

    @property
    def n_cells(self) -> int:
        """Total number of cells over all blocks."""
        return sum(len(c) for _, c in self.cells)

    @property
    def n_nodes(self) -> int:
        """Number of nodes."""
        return len(self.points)

    def block_slices(self) -> list[slice]:
        """Slices of the flat cell order that belong to each block."""
        out, start = [], 0
        for _, conn in self.cells:
            out.append(slice(start, start + len(conn)))
            start += len(conn)
        return out

    def to_meshio(self):
        """The mesh as a ``meshio.Mesh`` (points padded with z = 0)."""
        import meshio

        pts3 = np.column_stack([self.points, np.zeros(len(self.points))])
        return meshio.Mesh(pts3, [(t, c) for t, c in self.cells])


# ---------------------------------------------------------------------------
# reading
def _meshio_read(path: Path, file_format: str | None):
    """meshio.read without its print-and-exit on failure (raises instead)."""
    import meshio
    from meshio import _helpers

    if not path.exists():
        raise InputError(f"mesh file {str(path)!r} not found; check the path")
    try:
        formats = [file_format] if file_format else _helpers._filetypes_from_path(path)
    except Exception as exc:
        raise InputError(
            f"mesh file {str(path)!r}: cannot tell the format from the extension; "
            "pass file_format (one meshio knows, e.g. 'gmsh', 'vtu', 'xdmf')"
        ) from exc
    errors = []
    for fmt in formats:
        reader = _helpers.reader_map.get(fmt)
        if reader is None:
            errors.append(f"unknown format {fmt!r}")
            continue
        try:
            return reader(str(path))
        except (meshio.ReadError, OSError, ValueError, KeyError) as exc:
            errors.append(f"{fmt}: {exc}")
    raise InputError(
        f"mesh file {str(path)!r} could not be read ({'; '.join(errors)}); "
        "check that it is a valid mesh in a format meshio reads"
    )


def read_mesh(path, *, file_format: str | None = None, tol: float = 1e-9) -> PlaneMesh:
    """Read a 2D mesh of triangles/quadrilaterals from any meshio format.

    Parameters
    ----------
    path : str or path-like
        Mesh file (``.msh``, ``.vtu``, ``.vtk``, ``.xdmf``, ``.med``, ...).
    file_format : str, optional
        meshio format name when the extension is ambiguous.
    tol : float
        Allowed spread of the z coordinate (m): the mesh must lie in a plane
        z = constant.

    Returns
    -------
    PlaneMesh
        Points (x, y) in m and the triangle/quadrilateral blocks. Vertex and
        line blocks (boundary markers) are skipped.

    Raises
    ------
    InputError
        Missing or unreadable file, volume cells, a mesh that is not planar,
        or no 2D cells.
    """
    m = _meshio_read(Path(path), file_format)
    pts = np.asarray(m.points, dtype=float)
    if pts.shape[1] == 3:
        zr = np.ptp(pts[:, 2]) if len(pts) else 0.0
        if zr > tol:
            raise InputError(
                f"mesh {str(path)!r} is not planar (z spans {zr:g} m); slipfield "
                "meshes lie in the x-y plane of the cross-section"
            )
        pts = pts[:, :2]
    blocks = []
    for block in m.cells:
        if block.type in _SKIPPED_CELLS:
            continue
        if block.type not in _PLANE_CELLS:
            raise InputError(
                f"mesh {str(path)!r} has {block.type!r} cells; only triangles and "
                "quadrilaterals are supported (export a 2D mesh)"
            )
        blocks.append((block.type, np.asarray(block.data)))
    return PlaneMesh(pts, tuple(blocks))


# ---------------------------------------------------------------------------
# regular grids as meshes
def _grid_params(grid):
    try:
        return (float(grid.x0), float(grid.y0), int(grid.nx), int(grid.ny),
                float(grid.dx), float(grid.dy))
    except AttributeError as exc:
        raise InputError(
            "grid must have x0, y0, nx, ny, dx, dy (a fields.RegularGrid)"
        ) from exc


def _quad_lattice(xs, ys):
    nx, ny = len(xs), len(ys)
    X, Y = np.meshgrid(xs, ys, indexing="ij")
    pts = np.column_stack([X.ravel(), Y.ravel()])
    i, j = np.meshgrid(np.arange(nx - 1), np.arange(ny - 1), indexing="ij")
    i, j = i.ravel(), j.ravel()
    n00 = i * ny + j
    # counter-clockwise: (i,j) (i+1,j) (i+1,j+1) (i,j+1)
    conn = np.column_stack([n00, n00 + ny, n00 + ny + 1, n00 + 1])
    return PlaneMesh(pts, (("quad", conn),))


def grid_mesh(grid) -> PlaneMesh:
    """Quadrilateral mesh whose cells are the grid cells.

    Cell ``i * ny + j`` is grid cell ``(i, j)``, so a flattened field
    ``values.reshape(n, -1)`` is its cell data directly.
    """
    x0, y0, nx, ny, dx, dy = _grid_params(grid)
    return _quad_lattice(x0 + dx * np.arange(nx + 1), y0 + dy * np.arange(ny + 1))


def grid_centre_mesh(grid) -> PlaneMesh:
    """Quadrilateral mesh whose *nodes* are the grid's cell centres.

    Node ``i * ny + j`` is the centre of cell ``(i, j)``: use it to export
    grid values as point data (interpolated linearly by viewers).
    """
    x0, y0, nx, ny, dx, dy = _grid_params(grid)
    if nx < 2 or ny < 2:
        raise InputError("grid needs at least 2 x 2 cells to be exported as point data")
    return _quad_lattice(x0 + dx * (np.arange(nx) + 0.5), y0 + dy * (np.arange(ny) + 0.5))


# ---------------------------------------------------------------------------
# cell geometry and quadrature
def _corners(mesh: PlaneMesh, ctype: str, conn: np.ndarray) -> np.ndarray:
    return mesh.points[conn[:, :_PLANE_CELLS[ctype]]]  # (m, nc, 2)


def cell_areas(mesh: PlaneMesh) -> np.ndarray:
    """Cell areas (m²) by the shoelace formula, flat cell order."""
    out = []
    for ctype, conn in mesh.cells:
        c = _corners(mesh, ctype, conn)
        x, y = c[..., 0], c[..., 1]
        out.append(0.5 * np.abs(np.sum(x * np.roll(y, -1, axis=1) - np.roll(x, -1, axis=1) * y, axis=1)))
    return np.concatenate(out)


def cell_centres(mesh: PlaneMesh) -> np.ndarray:
    """Area centroids of the cells (m), shape (n_cells, 2).

    For a quadrilateral this is the centroid of the area, not the mean of its
    corners (they differ for a non-parallelogram).
    """
    out = []
    for ctype, conn in mesh.cells:
        c = _corners(mesh, ctype, conn)
        x, y = c[..., 0], c[..., 1]
        xn, yn = np.roll(x, -1, axis=1), np.roll(y, -1, axis=1)
        cross = x * yn - xn * y
        a = 0.5 * cross.sum(axis=1)
        cx = ((x + xn) * cross).sum(axis=1) / (6.0 * a)
        cy = ((y + yn) * cross).sum(axis=1) / (6.0 * a)
        out.append(np.column_stack([cx, cy]))
    return np.concatenate(out)


def _gauss01(n):
    t, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (t + 1.0), 0.5 * w


def cell_quadrature(mesh: PlaneMesh, n: int = 2) -> tuple[np.ndarray, np.ndarray]:
    """Sub-points and weights for averaging a field over each cell.

    Quadrilaterals use the n × n Gauss–Legendre product rule through the
    bilinear map of the reference square; triangles the n × n collapsed
    (Duffy) product rule. Either integrates polynomials of degree 2n − 1 in
    each reference direction exactly (Gauss–Legendre on [0, 1]).

    Parameters
    ----------
    mesh : PlaneMesh
    n : int
        Points per reference direction (n² sub-points per cell, n ≥ 1).

    Returns
    -------
    points : numpy.ndarray, shape (n_cells * n², 2)
        Sub-point coordinates (m), cell by cell (cell c owns rows
        ``c*n² : (c+1)*n²``).
    weights : numpy.ndarray, shape (n_cells, n²)
        Quadrature weights (m²); each row sums to the cell's area.
    """
    n = int(n)
    if n < 1:
        raise InputError(f"quadrature points per direction n must be >= 1, got {n}")
    t, w = _gauss01(n)
    U, V = np.meshgrid(t, t, indexing="ij")
    W = np.outer(w, w).ravel()
    u, v = U.ravel(), V.ravel()
    pts_all, w_all = [], []
    for ctype, conn in mesh.cells:
        c = _corners(mesh, ctype, conn)  # (m, nc, 2)
        if _PLANE_CELLS[ctype] == 4:
            N = np.stack([(1 - u) * (1 - v), u * (1 - v), u * v, (1 - u) * v], axis=1)
            dNu = np.stack([-(1 - v), (1 - v), v, -v], axis=1)
            dNv = np.stack([-(1 - u), -u, u, (1 - u)], axis=1)
        else:
            # Duffy collapse: (u, v) -> (xi, eta) = (u, v (1 - u)), |J| = 1 - u
            xi, eta = u, v * (1 - u)
            N = np.stack([1 - xi - eta, xi, eta], axis=1)
            dNxi = np.array([[-1.0, 1.0, 0.0]])
            dNeta = np.array([[-1.0, 0.0, 1.0]])
            dNu = np.repeat(dNxi, len(u), 0)
            dNv = np.repeat(dNeta, len(u), 0)
        p = np.einsum("qk,mkd->mqd", N, c)
        ju = np.einsum("qk,mkd->mqd", dNu, c)
        jv = np.einsum("qk,mkd->mqd", dNv, c)
        det = np.abs(ju[..., 0] * jv[..., 1] - ju[..., 1] * jv[..., 0])
        if _PLANE_CELLS[ctype] == 3:
            det = det * (1 - u)[None, :]
        pts_all.append(p.reshape(-1, 2))
        w_all.append(det * W[None, :])
    return np.concatenate(pts_all), np.concatenate(w_all)


def cell_average(values, weights) -> np.ndarray:
    """Average sub-point values over cells.

    Parameters
    ----------
    values : array_like, shape (n, n_cells * q) or (n_cells * q,)
        Field values at the points of :func:`cell_quadrature`.
    weights : array_like, shape (n_cells, q)
        Its weights (m²).

    Returns
    -------
    numpy.ndarray, shape (n, n_cells) or (n_cells,)
        Area-weighted cell averages. Average a Gaussian field before applying
        a marginal to get the local average of the Gaussian; average after to
        get the arithmetic average of the property.
    """
    w = np.asarray(weights, dtype=float)
    v = np.asarray(values, dtype=float)
    m, q = w.shape
    if v.shape[-1] != m * q:
        raise InputError(
            f"values have {v.shape[-1]} sub-points per realisation but the weights "
            f"describe {m} cells x {q} points = {m * q}"
        )
    vr = v.reshape(v.shape[:-1] + (m, q))
    return np.einsum("...mq,mq->...m", vr, w) / w.sum(axis=1)


# ---------------------------------------------------------------------------
# atomic writes
def _tmp_beside(path: Path, suffix: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix, dir=path.parent)
    os.close(fd)
    return Path(name)


def _as_rows(values, n_items, what):
    v = np.asarray(values, dtype=float)
    if v.ndim == 1:
        v = v[None, :]
    if v.ndim != 2 or v.shape[1] != n_items:
        raise InputError(
            f"{what}: values must have shape (n, {n_items}) (one row per realisation), got {np.shape(values)}"
        )
    return v


def _centre_count(mesh, centre):
    if centre == "cell":
        return mesh.n_cells
    if centre == "node":
        return mesh.n_nodes
    raise InputError(f"centre must be 'cell' or 'node', got {centre!r}")


def _split_cells(mesh, row):
    return [row[s] for s in mesh.block_slices()]


# ---------------------------------------------------------------------------
# VTU
def write_vtu(path, mesh: PlaneMesh, values, *, centre: str = "cell", name: str = "field",
              indices=None) -> Path:
    """Write realisations on a mesh to one VTU file.

    Parameters
    ----------
    path : str or path-like
        Target ``.vtu`` file.
    mesh : PlaneMesh
        The mesh (see :func:`grid_mesh` for a regular grid).
    values : array_like, shape (n, n_cells) or (n, n_nodes)
        One row per realisation (property units).
    centre : {'cell', 'node'}
        Cell data or point data.
    name : str
        Array name stem; realisation k is stored as ``{name}_{k:05d}``.
    indices : array_like of int, optional
        Realisation numbers of the rows (default 0..n-1).

    Returns
    -------
    pathlib.Path
        The written file.
    """
    import meshio

    path = Path(path)
    v = _as_rows(values, _centre_count(mesh, centre), "write_vtu")
    idx = np.arange(len(v)) if indices is None else np.asarray(indices, dtype=int)
    if len(idx) != len(v):
        raise InputError(f"write_vtu: {len(idx)} indices for {len(v)} rows of values")
    m = mesh.to_meshio()
    keys = [f"{name}_{int(k):05d}" for k in idx]
    if centre == "cell":
        m.cell_data = {key: _split_cells(mesh, row) for key, row in zip(keys, v)}
    else:
        m.point_data = {key: row for key, row in zip(keys, v)}
    tmp = _tmp_beside(path, ".vtu")
    try:
        meshio.write(str(tmp), m, file_format="vtu")
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()
    return path


def read_vtu(path, *, name: str = "field"):
    """Read a VTU file written by :func:`write_vtu`.

    Returns
    -------
    mesh : PlaneMesh
    values : numpy.ndarray, shape (n, n_cells) or (n, n_nodes)
    indices : numpy.ndarray of int, shape (n,)
    centre : str
        ``'cell'`` or ``'node'``.
    """
    path = Path(path)
    m = _meshio_read(path, "vtu")
    mesh = read_mesh(path, file_format="vtu")
    stem = f"{name}_"
    cell_keys = sorted(k for k in m.cell_data if k.startswith(stem))
    point_keys = sorted(k for k in m.point_data if k.startswith(stem))
    if cell_keys:
        keep = [i for i, b in enumerate(m.cells) if b.type in _PLANE_CELLS]
        vals = np.array([np.concatenate([m.cell_data[k][i] for i in keep]) for k in cell_keys])
        keys, centre = cell_keys, "cell"
    elif point_keys:
        vals = np.array([m.point_data[k] for k in point_keys])
        keys, centre = point_keys, "node"
    else:
        raise InputError(f"{str(path)!r} holds no arrays named {stem}*; check name=")
    idx = np.array([int(k[len(stem):]) for k in keys])
    return mesh, vals, idx, centre


# ---------------------------------------------------------------------------
# XDMF time series
class XdmfSeriesWriter:
    """Stream realisations on one mesh into an XDMF time series.

    The time value of each step is the realisation index k. The HDF5 file
    ``<stem>.h5`` is written beside the ``.xdmf``; both are built in a
    temporary directory beside the target and moved into place (HDF5 first)
    when the writer closes without error.

    Parameters
    ----------
    path : str or path-like
        Target ``.xdmf`` file.
    mesh : PlaneMesh
    centre : {'cell', 'node'}
    name : str
        Name of the attribute in every step.

    Examples
    --------
    >>> with XdmfSeriesWriter("out/f.xdmf", mesh) as w:   # doctest: +SKIP
    ...     for block in blocks:
    ...         w.write(values_block, indices_block)
    """

    def __init__(self, path, mesh: PlaneMesh, *, centre: str = "cell", name: str = "field"):
        self.path = Path(path).absolute()
        if self.path.suffix.lower() not in (".xdmf", ".xmf"):
            raise InputError(f"XDMF output {str(path)!r} must end in .xdmf")
        self.mesh = mesh
        self.centre = centre
        self.name = name
        self.n_items = _centre_count(mesh, centre)
        self.n_written = 0
        self._writer = None
        self._tmpdir = None

    def __enter__(self):
        from meshio.xdmf import TimeSeriesWriter

        self.path.parent.mkdir(parents=True, exist_ok=True)
        self._tmpdir = Path(tempfile.mkdtemp(prefix=f".{self.path.name}.", dir=self.path.parent))
        tmp_xdmf = self._tmpdir / self.path.name
        tmp_h5 = self._tmpdir / (self.path.stem + ".h5")

        class _Beside(TimeSeriesWriter):
            # meshio opens "<stem>.h5" relative to the working directory;
            # open it at an absolute path beside the xdmf instead (the XML
            # refers to it by its basename, hence relative to the xdmf).
            def __enter__(inner):
                import h5py

                inner.h5_filename = str(tmp_h5)
                inner.h5_file = h5py.File(inner.h5_filename, "w")
                return inner

        self._writer = _Beside(tmp_xdmf).__enter__()
        m = self.mesh.to_meshio()
        self._writer.write_points_cells(m.points, m.cells)
        return self

    def write(self, values, indices=None):
        """Append realisations.

        Parameters
        ----------
        values : array_like, shape (b, n_items)
            One row per realisation.
        indices : array_like of int, optional
            Realisation numbers (default continues from the last one written).
        """
        if self._writer is None:
            raise RuntimeError("XdmfSeriesWriter.write called outside its 'with' block")
        v = _as_rows(values, self.n_items, "XdmfSeriesWriter.write")
        idx = (np.arange(self.n_written, self.n_written + len(v)) if indices is None
               else np.asarray(indices, dtype=int))
        if len(idx) != len(v):
            raise InputError(f"XdmfSeriesWriter.write: {len(idx)} indices for {len(v)} rows")
        for k, row in zip(idx, v):
            if self.centre == "cell":
                self._writer.write_data(int(k), cell_data={self.name: _split_cells(self.mesh, row)})
            else:
                self._writer.write_data(int(k), point_data={self.name: row})
        self.n_written += len(v)

    def __exit__(self, exc_type, exc, tb):
        try:
            w, self._writer = self._writer, None
            w.__exit__(exc_type, exc, tb)
            if exc_type is None:
                os.replace(self._tmpdir / (self.path.stem + ".h5"), self.path.with_suffix(".h5"))
                os.replace(self._tmpdir / self.path.name, self.path)
        finally:
            shutil.rmtree(self._tmpdir, ignore_errors=True)
        return False


def write_xdmf_series(path, mesh: PlaneMesh, values, *, centre: str = "cell",
                      name: str = "field", indices=None) -> Path:
    """Write realisations (rows of ``values``) as an XDMF time series.

    See :class:`XdmfSeriesWriter` for streaming in blocks.
    """
    with XdmfSeriesWriter(path, mesh, centre=centre, name=name) as w:
        w.write(values, indices)
    return Path(path)


def read_xdmf_series(path, *, name: str = "field"):
    """Read an XDMF time series written by :class:`XdmfSeriesWriter`.

    Returns
    -------
    mesh : PlaneMesh
    values : numpy.ndarray, shape (n, n_items)
    indices : numpy.ndarray of int, shape (n,)
        The time values (realisation numbers).
    centre : str
    """
    import meshio
    from meshio.xdmf import TimeSeriesReader

    path = Path(path)
    if not path.exists():
        raise InputError(f"XDMF file {str(path)!r} not found; check the path")
    try:
        with TimeSeriesReader(path) as r:
            pts, cells = r.read_points_cells()
            mesh = PlaneMesh(np.asarray(pts)[:, :2],
                             tuple((c.type, c.data) for c in cells if c.type in _PLANE_CELLS))
            rows, idx, centre = [], [], "cell"
            for k in range(r.num_steps):
                t, pdata, cdata = r.read_data(k)
                if name in cdata:
                    rows.append(np.concatenate([np.asarray(b) for b in cdata[name]]))
                elif name in pdata:
                    rows.append(np.asarray(pdata[name]))
                    centre = "node"
                else:
                    raise InputError(f"{str(path)!r} step {k} holds no array {name!r}; check name=")
                idx.append(int(round(t)))
    except (meshio.ReadError, OSError, KeyError) as exc:
        raise InputError(f"XDMF file {str(path)!r} could not be read: {exc}") from exc
    return mesh, np.array(rows), np.array(idx), centre


# ---------------------------------------------------------------------------
# NPZ
class NpzSeriesWriter:
    """Stream grid realisations into an NPZ file, block by block.

    The ``values`` entry is an ``.npy`` of shape ``(n, nx, ny)`` written
    straight into the (uncompressed, zip64) archive, so only one block is
    ever in memory. ``np.load`` reads the result like any ``np.savez`` file.

    Parameters
    ----------
    path : str or path-like
        Target ``.npz``.
    grid : RegularGrid-like
        Needs ``x0, y0, nx, ny, dx, dy``.
    n : int
        Total number of realisations that will be written.
    indices : array_like of int, optional
        Realisation numbers stored as ``indices`` (default 0..n-1).
    dtype : numpy dtype
        Storage type of ``values`` (float64 by default; float32 halves the
        file).
    extra : dict, optional
        Further small arrays to store (e.g. ``seed``).
    """

    def __init__(self, path, grid, n: int, *, indices=None, dtype=np.float64, extra=None):
        self.path = Path(path)
        self.x0, self.y0, self.nx, self.ny, self.dx, self.dy = _grid_params(grid)
        self.n = int(n)
        if self.n < 1:
            raise InputError(f"number of realisations n must be >= 1, got {n}")
        self.indices = (np.arange(self.n) if indices is None
                        else np.asarray(indices, dtype=np.int64))
        if len(self.indices) != self.n:
            raise InputError(f"NpzSeriesWriter: {len(self.indices)} indices for n = {self.n}")
        self.dtype = np.dtype(dtype)
        self.extra = dict(extra or {})
        self.n_written = 0
        self._zip = self._entry = self._tmp = None

    def __enter__(self):
        self._tmp = _tmp_beside(self.path, ".npz")
        self._zip = zipfile.ZipFile(self._tmp, "w", zipfile.ZIP_STORED, allowZip64=True)
        small = {
            "x": self.x0 + self.dx * (np.arange(self.nx) + 0.5),
            "y": self.y0 + self.dy * (np.arange(self.ny) + 0.5),
            "x0": np.float64(self.x0), "y0": np.float64(self.y0),
            "dx": np.float64(self.dx), "dy": np.float64(self.dy),
            "indices": self.indices,
            **{k: np.asarray(v) for k, v in self.extra.items()},
        }
        for key, arr in small.items():
            with self._zip.open(key + ".npy", "w", force_zip64=True) as fh:
                np.lib.format.write_array(fh, np.asarray(arr), allow_pickle=False)
        self._entry = self._zip.open("values.npy", "w", force_zip64=True)
        header = {"descr": np.lib.format.dtype_to_descr(self.dtype), "fortran_order": False,
                  "shape": (self.n, self.nx, self.ny)}
        np.lib.format.write_array_header_2_0(self._entry, header)
        return self

    def write(self, block):
        """Append realisations, ``block`` of shape (b, nx, ny) or (b, nx*ny)."""
        if self._entry is None:
            raise RuntimeError("NpzSeriesWriter.write called outside its 'with' block")
        b = np.asarray(block)
        if b.ndim == 2 and b.shape[1] == self.nx * self.ny:
            b = b.reshape(len(b), self.nx, self.ny)
        if b.ndim != 3 or b.shape[1:] != (self.nx, self.ny):
            raise InputError(
                f"NpzSeriesWriter.write: block must have shape (b, {self.nx}, {self.ny}), got {np.shape(block)}"
            )
        if self.n_written + len(b) > self.n:
            raise InputError(f"NpzSeriesWriter: more than the declared n = {self.n} realisations")
        self._entry.write(np.ascontiguousarray(b, dtype=self.dtype).tobytes())
        self.n_written += len(b)

    def __exit__(self, exc_type, exc, tb):
        try:
            self._entry.close()
            self._zip.close()
            if exc_type is None:
                if self.n_written != self.n:
                    raise InputError(
                        f"NpzSeriesWriter: {self.n_written} realisations written, {self.n} declared"
                    )
                os.replace(self._tmp, self.path)
        finally:
            if self._tmp.exists():
                self._tmp.unlink()
        return False


def write_npz(path, grid, values, *, indices=None, dtype=np.float64, extra=None) -> Path:
    """Write grid realisations ``values`` (n, nx, ny) to an NPZ file.

    See :class:`NpzSeriesWriter` for the content and for streaming.
    """
    v = np.asarray(values)
    if v.ndim == 2:
        v = v[None]
    with NpzSeriesWriter(path, grid, len(v), indices=indices, dtype=dtype, extra=extra) as w:
        w.write(v)
    return Path(path)


def read_npz(path) -> dict:
    """Read an NPZ file into a dict of arrays (fully loaded, file closed)."""
    path = Path(path)
    if not path.exists():
        raise InputError(f"NPZ file {str(path)!r} not found; check the path")
    with np.load(path, allow_pickle=False) as f:
        return {k: f[k] for k in f.files}
