"""The library's export_realisations follows the output-folder rules of the command line.

Issue noticed last session: ``export_realisations(directory)`` wrote into any
folder, where ``slipfield simulate --export-fields`` refuses a folder with
files slipfield did not write. Now both refuse it, and nothing is written.
"""
import numpy as np
import pytest

from slipfield.slope.commands.export import export_realisations
from slipfield.slope.commands.folders import MARKER
from slipfield.slope.errors import InputError
from slipfield.slope.simulate import simulate
from support.problems import gf_problem


@pytest.fixture(scope="module")
def run():
    p, _ = gf_problem(5.0, 0.3, nx=3, ny=3, n_radii=2)
    return p, simulate(p, 4, 7)


def test_a_folder_with_the_users_files_is_refused_and_left_alone(tmp_path, run):
    p, r = run
    mine = tmp_path / "field_clay_su.npz"          # the name an export would write
    mine.write_text("the user's own file\n")
    with pytest.raises(InputError, match=r"directory .*holds files slipfield did not write.*new or empty folder"):
        export_realisations(p, r, 7, tmp_path, "npz")
    assert mine.read_text() == "the user's own file\n"
    assert sorted(q.name for q in tmp_path.iterdir()) == ["field_clay_su.npz"]


def test_a_new_folder_appears_with_its_marker_and_is_replaced_by_the_next_export(tmp_path, run):
    p, r = run
    out = tmp_path / "export"
    export_realisations(p, r, 7, out, "npz")
    names = {q.name for q in out.iterdir()}
    assert MARKER in names and "fields.json" in names and "realisations.csv" in names
    first = np.load(out / "field_clay_su.npz")["values"]
    (out / "notes.txt").write_text("added by the user\n")
    export_realisations(p, r, 7, out, "npz", indices=[1, 2])   # its own earlier output: replaced
    assert np.array_equal(np.load(out / "field_clay_su.npz")["values"], first[[1, 2]], equal_nan=True)
    assert (out / "notes.txt").read_text() == "added by the user\n"


def test_bad_arguments_leave_no_folder_behind(tmp_path, run):
    p, r = run
    with pytest.raises(InputError, match="indices"):
        export_realisations(p, r, 7, tmp_path / "new" / "export", "npz", indices=[99])
    assert list(tmp_path.iterdir()) == []
