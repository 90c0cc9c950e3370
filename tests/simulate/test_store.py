"""The result store does not trust its files (issue 11 §1b).

Contract (DEVELOPERS.md, "Seeds"): realisation k depends only on
``realisation_rng(seed, k, ...)``, so a run whose damaged blocks are
recomputed must equal an uninterrupted run bit for bit. Every kind of damage
seen (leftover temporary file, truncated, empty, corrupt, edited, moved
block) is made here by hand and the resumed run compared with ``==``.
"""
from __future__ import annotations

import shutil
import zipfile

import numpy as np
import pytest

from slipfield.fields.marginals import make_marginal
from slipfield.slope.examples import simple_slope
from slipfield.slope.search import lattice_circles
from slipfield.slope.simulate import (RandomProblem, RandomProperty, StoreRepairWarning, load_store, simulate)
from slipfield.slope.strength import Material
from slipfield.slope.surfaces import Circle

N = 230  # three store blocks of 100: two full, one short


def _problem(mean=50.0):
    # invented demo slope: 10 m high 2H:1V, lognormal su, a 3x3x2 circle lattice
    mat = Material("clay", unit_weight=20.0, su_model="constant", su=mean)
    sec = simple_slope(height=10.0, material=mat)
    c = lattice_circles(sec, nx=3, ny=3, n_radii=2)
    surfaces = [Circle(float(x), float(y), float(r)) for x, y, r in zip(c.xc, c.yc, c.radius)]
    prop = RandomProperty("clay", "su", make_marginal("lognormal", mean=mean, cov=0.3), 8.0, 8.0)
    return RandomProblem(sec, "undrained", "bishop", [prop], surfaces, 0, n_slices=15, cell=1.0)


@pytest.fixture(scope="module")
def problem():
    return _problem()


@pytest.fixture(scope="module")
def reference(problem):
    return simulate(problem, N, seed=4, batch=N)


@pytest.fixture(scope="module")
def stored(problem, tmp_path_factory):
    store = tmp_path_factory.mktemp("store") / "run"
    simulate(problem, N, seed=4, batch=50, store=store)
    return store


def _same(a, b):
    np.testing.assert_array_equal(a.fs, b.fs)
    np.testing.assert_array_equal(a.critical_index, b.critical_index)
    np.testing.assert_array_equal(a.fs_fixed, b.fs_fixed)
    for k in ("nonconv", "inadm", "none"):
        np.testing.assert_array_equal(a.flags[k], b.flags[k])


def _truncate(p):
    data = p.read_bytes()
    p.write_bytes(data[: len(data) // 2])


def _empty(p):
    p.write_bytes(b"")


def _corrupt(p):
    data = bytearray(p.read_bytes())
    data[40:400] = bytes(range(256)) + bytes(104)  # inside the first member: zip CRC or npy header breaks
    p.write_bytes(bytes(data))


def _edit(p):
    # a plausible hand edit: one FS value changed, everything else (range, digest, checksum) kept
    with np.load(p) as d:
        arrays = {k: d[k] for k in d.files}
    arrays["fs"] = arrays["fs"].copy()
    arrays["fs"][3] = 0.5
    np.savez(p, **arrays)


def _moved(p):
    # the content of block 0 under the name of block 1: every later realisation would shift
    shutil.copyfile(p.with_name("block_000000.npz"), p)


@pytest.mark.parametrize("damage", [_truncate, _empty, _corrupt, _edit, _moved])
def test_a_bad_block_is_reported_by_name_and_recomputed(problem, reference, stored, tmp_path, damage):
    store = tmp_path / "run"
    shutil.copytree(stored, store)
    bad = store / "block_000001.npz"
    damage(bad)
    with pytest.warns(StoreRepairWarning, match="block_000001.npz"):
        res = simulate(problem, N, seed=4, batch=30, store=store, resume=True)
    _same(reference, res)
    assert any("block_000001.npz" in m for m in res.store_notices)
    # the block was rewritten: the next resume finds nothing to repair
    again = simulate(problem, N, seed=4, store=store, resume=True)
    assert again.store_notices == []
    _same(reference, again)


def test_leftover_temporary_files_are_never_read_as_blocks(problem, reference, stored, tmp_path):
    store = tmp_path / "run"
    shutil.copytree(stored, store)
    # what a kill during a write leaves: the old writer's name and the present one's
    shutil.copyfile(store / "block_000000.npz", store / "block_000001.npz.tmp.npz")
    shutil.copyfile(store / "block_000000.npz", store / ".block_000002.npz.x1y2.part")
    stored_arrays = load_store(store)
    assert stored_arrays["fs"].size == N
    np.testing.assert_array_equal(stored_arrays["fs"], reference.fs)
    np.testing.assert_array_equal(stored_arrays["nonconv"], reference.flags["nonconv"])
    res = simulate(problem, N, seed=4, store=store, resume=True)
    _same(reference, res)
    assert res.store_notices == []


def test_a_block_of_another_run_is_not_accepted(problem, reference, stored, tmp_path):
    # same position, same range, valid checksum, but computed for another seed
    other = tmp_path / "other"
    simulate(problem, N, seed=5, batch=N, store=other)
    store = tmp_path / "run"
    shutil.copytree(stored, store)
    shutil.copyfile(other / "block_000002.npz", store / "block_000002.npz")
    with pytest.warns(StoreRepairWarning, match="block_000002.npz.*another run"):
        res = simulate(problem, N, seed=4, store=store, resume=True)
    _same(reference, res)


def test_blocks_record_range_and_checksum(stored):
    with np.load(stored / "block_000002.npz") as d:
        assert (int(d["_start"]), int(d["_stop"])) == (200, N)
        assert len(str(d["_checksum"])) == 64
    with zipfile.ZipFile(stored / "block_000000.npz") as z:
        assert z.testzip() is None


def test_a_store_of_the_previous_format_is_refused_not_mixed(problem, stored, tmp_path):
    # format 2 kept the search's vertices in a fixed-size record of every realisation; format 3 keeps
    # them for the searched realisations only: a store of format 2 is neither resumed nor read as 3
    import json

    from slipfield.slope.errors import InputError

    store = tmp_path / "run"
    shutil.copytree(stored, store)
    head = json.loads((store / "header.json").read_text())
    head["version"] = 2
    (store / "header.json").write_text(json.dumps(head))
    with pytest.raises(InputError, match="another version of slipfield's store.*version 2"):
        simulate(problem, N, seed=4, store=store, resume=True)
    with pytest.raises(InputError, match="version 2"):
        load_store(store)


def test_searched_surfaces_resume_bit_identical_across_a_cut_block(tmp_path):
    # the searched polylines are sparse rows tagged by realisation: a run stopped inside a block and
    # resumed must give the same rows as one uninterrupted run, for any batch size
    from slipfield.slope.simulate import RefineSettings

    from support.problems import gf_problem

    p, _ = gf_problem(5.0, 0.5, mean_c=0.2, nx=4, ny=4, n_radii=3)
    s = RefineSettings(below=1.1, above=1.0, search="dynamic-programming")
    n = 130
    whole = simulate(p, n, 8, refine=s, batch=n)
    assert len(whole.searched_surfaces()) >= 2
    store = tmp_path / "run"
    simulate(p, 115, 8, refine=s, batch=40, store=store)          # stops inside block 1
    res = simulate(p, n, 8, refine=s, batch=7, store=store, resume=True)
    np.testing.assert_array_equal(res.searched_vertices, whole.searched_vertices)
    np.testing.assert_array_equal(res.fs, whole.fs)
    short = simulate(p, 110, 8, refine=s, store=store, resume=True)   # a shorter run reads fewer rows
    assert set(short.searched_surfaces()) == {k for k in whole.searched_surfaces() if k < 110}
    stored = load_store(store)["sparse_searched_vertices"]
    np.testing.assert_array_equal(stored, whole.searched_vertices)
