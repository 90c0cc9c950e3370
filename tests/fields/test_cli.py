"""Tests of the ``fields`` command line (fields.cli.main)."""
import json
import math

import numpy as np
import pytest

from slipfield.fields.cli import main


def _run(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def test_vrf_json_closed_forms(capsys):
    # Closed forms, Vanmarcke (1983) Random Fields:
    # Markov γ(T) at T/θ = 0.5 -> 0.735759, T/θ = 2 -> 0.377289;
    # squared exponential 0.887096, 0.420423.
    code, out, _ = _run(capsys, ["vrf", "--model", "exponential,gaussian", "--theta", "2.0",
                                 "--lengths", "1,4", "--json"])
    assert code == 0
    doc = json.loads(out)
    assert doc["models"] == ["exponential", "gaussian"]
    assert doc["lengths"] == [1.0, 4.0]
    assert doc["gamma"]["exponential"] == pytest.approx([0.735759, 0.377289], abs=2e-6)
    assert doc["gamma"]["gaussian"] == pytest.approx([0.887096, 0.420423], abs=2e-6)


def test_vrf_text_and_csv(capsys):
    code, out, _ = _run(capsys, ["vrf", "--model", "markov", "--theta", "2", "--lengths", "1"])
    assert code == 0 and "0.735759" in out
    code, out, _ = _run(capsys, ["vrf", "--model", "markov", "--theta", "2", "--lengths", "1,4", "--csv"])
    lines = out.strip().splitlines()
    assert lines[0].split(",")[1] == "markov"
    assert float(lines[2].split(",")[1]) == pytest.approx(0.377289, abs=2e-6)


def test_vrf_rect_against_quadrature(capsys):
    # γ of a rectangle X×Y from its definition (Vanmarcke 1983, eq. for the
    # variance of a local average): γ = 4/(XY) ∫0^X∫0^Y (1-u/X)(1-v/Y) ρ(u,v) du dv
    # for a correlation even in u and v (axis-aligned), integrated by scipy.
    from scipy.integrate import dblquad

    from slipfield.fields import get_model

    X, Y = 20.0, 2.0
    model = get_model("exponential", theta_h=20.0, theta_v=2.0)
    ref, _ = dblquad(lambda v, u: (1 - u / X) * (1 - v / Y) * float(model.correlation(u, v)),
                     0, X, 0, Y, epsabs=1e-10)
    ref *= 4.0 / (X * Y)
    code, out, _ = _run(capsys, ["vrf", "--model", "exponential", "--theta-h", "20", "--theta-v", "2",
                                 "--rect", "20x2", "--json"])
    assert code == 0
    doc = json.loads(out)
    assert doc["kind"] == "rectangle" and doc["rectangles"] == [[20.0, 2.0]]
    assert doc["gamma"]["exponential"][0] == pytest.approx(ref, rel=1e-5)


def test_sample_npz_shape_and_reproducible(tmp_path):
    a, b = tmp_path / "a.npz", tmp_path / "b.npz"
    base = ["sample", "--model", "exponential", "--theta-h", "20", "--theta-v", "2", "--grid", "16x8",
            "--spacing", "0.5", "--n", "20", "--seed", "1", "--method", "fft", "--quiet"]
    assert main(base + ["--batch", "7", "--out", str(a)]) == 0
    assert main(base + ["--batch", "50", "--out", str(b)]) == 0
    fa, fb = np.load(a), np.load(b)
    assert fa["values"].shape == (20, 16, 8)
    np.testing.assert_allclose(fa["x"], 0.25 + 0.5 * np.arange(16))
    np.testing.assert_allclose(fa["y"], 0.25 + 0.5 * np.arange(8))
    # realisation k is identical whatever the batch (DEVELOPERS.md seeding contract)
    np.testing.assert_array_equal(fa["values"], fb["values"])
    c = tmp_path / "c.npz"
    other = [("2" if t == "1" and base[i - 1] == "--seed" else t) for i, t in enumerate(base)]
    assert main(other + ["--out", str(c)]) == 0
    assert not np.array_equal(np.load(c)["values"], fa["values"])


def test_sample_lognormal_mean(tmp_path):
    out = tmp_path / "m.npz"
    n, nx, ny = 400, 8, 4
    assert main(["sample", "--model", "exponential", "--theta", "1", "--grid", f"{nx}x{ny}",
                 "--spacing", "1", "--n", str(n), "--seed", "3", "--marginal", "lognormal",
                 "--mean", "30", "--cov", "0.3", "--quiet", "--out", str(out)]) == 0
    v = np.load(out)["values"]
    # The mean over realisations at one cell has standard error σ/√n with σ = 0.3·30
    # (the marginal's std); 4 standard errors bound a false failure at ~6e-5.
    m = v[:, 0, 0].mean()
    assert abs(m - 30.0) < 4 * 9.0 / math.sqrt(n)
    assert np.all(v > 0)


@pytest.mark.parametrize("argv, word", [
    (["vrf", "--model", "exponential", "--theta", "0"], "--theta"),
    (["vrf", "--model", "exponential", "--theta-h", "2", "--theta-v", "-1"], "--theta-v"),
    (["sample", "--model", "exponential", "--theta", "2", "--grid", "8x8", "--spacing", "1",
      "--marginal", "lognormal", "--mean", "30", "--cov", "-0.1", "--out", "x.npz"], "--cov"),
    (["sample", "--model", "exponential", "--theta", "2", "--grid", "256-64", "--spacing", "1",
      "--out", "x.npz"], "--grid"),
    (["sample", "--model", "exponential", "--theta", "2", "--grid", "256x64", "--spacing", "0.5",
      "--method", "cholesky", "--out", "x.npz"], "fft"),
])
def test_bad_input_exit_2(capsys, tmp_path, monkeypatch, argv, word):
    monkeypatch.chdir(tmp_path)
    code, _, err = _run(capsys, argv)
    assert code == 2
    assert word in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "x.npz").exists()


def test_help_each(capsys):
    for sub in ("vrf", "sample"):
        with pytest.raises(SystemExit) as e:
            main([sub, "--help"])
        assert e.value.code == 0
        assert "--model" in capsys.readouterr().out


@pytest.mark.parametrize("ext", ["vtu", "xdmf"])
def test_sample_mesh_formats_match_npz(tmp_path, ext):
    # the same seed gives the same realisations whatever the output format
    from slipfield.fields import io as fio

    base = ["sample", "--model", "gaussian", "--theta", "2", "--grid", "6x4", "--spacing", "0.5",
            "--n", "3", "--seed", "5", "--batch", "2", "--quiet"]
    assert main(base + ["--out", str(tmp_path / "a.npz")]) == 0
    assert main(base + ["--out", str(tmp_path / f"a.{ext}")]) == 0
    ref = np.load(tmp_path / "a.npz")["values"].reshape(3, -1)
    reader = fio.read_vtu if ext == "vtu" else fio.read_xdmf_series
    _, vals, idx, centre = reader(tmp_path / f"a.{ext}")
    assert centre == "cell"
    np.testing.assert_array_equal(idx, [0, 1, 2])
    np.testing.assert_allclose(vals, ref)


def test_sample_beta_bounds(tmp_path):
    out = tmp_path / "b.npz"
    assert main(["sample", "--model", "exponential", "--theta", "2", "--grid", "8x8", "--spacing", "1",
                 "--n", "20", "--marginal", "beta", "--mean", "30", "--cov", "0.1", "--lower", "20",
                 "--upper", "40", "--quiet", "--out", str(out)]) == 0
    v = np.load(out)["values"]
    assert v.min() >= 20 and v.max() <= 40


def test_sample_on_mesh_cell_centres(tmp_path):
    # a 4x2 quad mesh equal to a grid: the Cholesky field at its cell centres
    # must equal the Cholesky field on the same grid cells (same points, same seed)
    from slipfield.fields import RegularGrid
    from slipfield.fields import io as fio

    grid = RegularGrid(0.0, 0.0, 4, 2, 1.0, 1.0)
    mesh = fio.grid_mesh(grid)
    mpath = tmp_path / "m.vtu"
    fio.write_vtu(mpath, mesh, np.zeros((1, mesh.n_cells)))
    base = ["sample", "--model", "exponential", "--theta", "2", "--n", "4", "--seed", "9",
            "--method", "cholesky", "--quiet"]
    assert main(base + ["--mesh", str(mpath), "--out", str(tmp_path / "a.vtu")]) == 0
    assert main(base + ["--grid", "4x2", "--spacing", "1", "--out", str(tmp_path / "a.npz")]) == 0
    _, vals, _, _ = fio.read_vtu(tmp_path / "a.vtu")
    np.testing.assert_allclose(vals, np.load(tmp_path / "a.npz")["values"].reshape(4, -1), atol=1e-12)


@pytest.mark.parametrize("name,existing", [("f.npz", "f.npz"), ("f.vtu", "f.vtu"), ("f.xdmf", "f.h5")])
def test_sample_never_replaces_an_existing_file(tmp_path, capsys, name, existing):
    # issue noticed last session: `fields sample --out FILE` overwrote a file it had not written
    mine = tmp_path / existing
    mine.write_text("the user's own notes\n")
    argv = ["sample", "--model", "exponential", "--theta", "2", "--grid", "4x4", "--spacing", "1",
            "--n", "2", "--quiet", "--out", str(tmp_path / name)]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "--out" in err and "give a new file name" in err and existing in err
    assert mine.read_text() == "the user's own notes\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == [existing]      # nothing else written


def test_sample_refuses_a_folder_as_output(tmp_path, capsys):
    (tmp_path / "d.npz").mkdir()
    assert main(["sample", "--model", "exponential", "--theta", "2", "--grid", "4x4", "--spacing", "1",
                 "--quiet", "--out", str(tmp_path / "d.npz")]) == 2
    assert "is a folder" in capsys.readouterr().err
