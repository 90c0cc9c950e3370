"""Output folders: a command never deletes, renames or overwrites a file slipfield did not write.

Issue 11 §1. Every command that writes a folder (run --out, sweep --out,
simulate --out, simulate --export-fields) is refused up front (exit 2, before
any computation) when the folder holds someone else's files, is the current
folder, a file, a symbolic link or cannot be created; a folder holding the
same command's earlier output is reused and only slipfield's files in it are
replaced. The checks are of the file system itself (POSIX modes, os.stat).
"""
from __future__ import annotations

import json
import os
import stat
from pathlib import Path

import pytest

from slipfield.slope.cli import main

CASE = str(Path(__file__).resolve().parent / "cases" / "small_cut.toml")

# the four ways of naming a folder a command writes: (argv before the folder, option, argv after)
WRITERS = {
    "run --out": (["run", CASE, "--quiet", "--realisations", "5", "--out"], "--out", []),
    "sweep --out": (["sweep", CASE, "--quiet", "--realisations", "5", "--out"], "--out", []),
    "simulate --out": (["simulate", CASE, "--quiet", "--realisations", "5", "--out"], "--out", []),
}


def _argv(kind, folder, tmp_path):
    if kind == "simulate --export-fields":
        return (["simulate", CASE, "--quiet", "--realisations", "5", "--out", str(tmp_path / "sim"),
                 "--export-fields", str(folder)], "--export-fields")
    pre, opt, post = WRITERS[kind]
    return pre + [str(folder)] + post, opt


KINDS = [*WRITERS, "simulate --export-fields"]


def _user_folder(path: Path) -> dict:
    path.mkdir()
    (path / "case.toml").write_text("# the engineer's own case file\n")
    (path / "notes").mkdir()
    (path / "notes" / "site visit.txt").write_text("notes that exist nowhere else\n")
    return _snapshot(path)


def _snapshot(path: Path) -> dict:
    return {str(p.relative_to(path)): (p.read_bytes() if p.is_file() else None) for p in sorted(path.rglob("*"))}


@pytest.mark.parametrize("kind", KINDS)
def test_a_folder_of_user_files_is_refused_and_left_as_it_was(kind, tmp_path, capsys):
    folder = tmp_path / "mine"
    before = _user_folder(folder)
    argv, opt = _argv(kind, folder, tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert opt in err and "new" in err and "Traceback" not in err
    assert _snapshot(folder) == before
    assert not (tmp_path / "sim").exists()  # refused before anything was written


@pytest.mark.parametrize("kind", KINDS)
def test_the_current_folder_is_refused_before_any_computation(kind, tmp_path, monkeypatch, capsys):
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    argv, opt = _argv(kind, ".", tmp_path)
    if argv[0] == "run":  # the folder is checked before the case is analysed at all
        import slipfield.slope.commands.run as run_module

        def analysed(*a, **k):
            raise AssertionError("the case was analysed before --out was checked")

        monkeypatch.setattr(run_module, "analyse_case", analysed)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert f"{opt} ." in err and "current folder" in err
    assert list(work.iterdir()) == []


@pytest.mark.parametrize("kind", KINDS)
def test_a_file_or_a_symbolic_link_is_refused_and_not_renamed(kind, tmp_path, capsys):
    target = tmp_path / "report.txt"
    target.write_text("someone's file\n")
    link = tmp_path / "link"
    real = tmp_path / "real"
    real.mkdir()
    link.symlink_to(real, target_is_directory=True)
    for path, word in ((target, "file"), (link, "symbolic link")):
        argv, opt = _argv(kind, path, tmp_path)
        assert main(argv) == 2
        err = capsys.readouterr().err
        assert opt in err and word in err
    assert target.read_text() == "someone's file\n" and link.is_symlink() and list(real.iterdir()) == []
    # nothing renamed aside (old code moved the user's file to a hidden .NAME.old-<pid>)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["link", "real", "report.txt"]


@pytest.mark.parametrize("kind", KINDS)
def test_a_place_that_cannot_be_created_is_refused(kind, tmp_path, capsys):
    blocker = tmp_path / "a file"
    blocker.write_text("x")
    argv, opt = _argv(kind, blocker / "out", tmp_path)
    assert main(argv) == 2
    assert opt in capsys.readouterr().err
    if os.geteuid() != 0:  # root may write anywhere: the mode check below needs an ordinary user
        ro = tmp_path / "read-only"
        ro.mkdir(mode=0o555)
        argv, opt = _argv(kind, ro / "out", tmp_path)
        assert main(argv) == 2
        assert "not writable" in capsys.readouterr().err


def test_the_same_commands_output_is_reused_and_only_its_files_replaced(tmp_path, capsys):
    out = tmp_path / "sweep"
    argv = ["sweep", CASE, "--quiet", "--realisations", "5", "--theta-h", "10,inf", "--theta-v", "2",
            "--out", str(out)]
    assert main(argv) == 0
    marker = json.loads((out / ".slipfield-output.json").read_text())
    assert marker["command"] == "sweep" and "sweep.json" in marker["files"]
    (out / "my notes.txt").write_text("added by the engineer after the first run\n")
    first = json.loads((out / "sweep.json").read_text())
    # the second run has one grid point fewer: its stale figures are slipfield's and go; the note stays
    argv2 = [a if a != "10,inf" else "10" for a in argv]
    assert main(argv2) == 0
    second = json.loads((out / "sweep.json").read_text())
    assert len(second["rows"]) == 1 < len(first["rows"])
    assert (out / "my notes.txt").read_text() == "added by the engineer after the first run\n"
    files = {str(p.relative_to(out)) for p in out.rglob("*") if p.is_file()}
    listed = set(json.loads((out / ".slipfield-output.json").read_text())["files"])
    assert files == listed | {"my notes.txt", ".slipfield-output.json"}
    assert not any(p.name.startswith(".slipfield-partial") for p in out.iterdir())


def test_another_commands_output_needs_overwrite_and_then_only_its_files_go(tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["sweep", CASE, "--quiet", "--realisations", "5", "--theta-h", "inf", "--theta-v", "inf",
                 "--out", str(out)]) == 0
    (out / "keep.txt").write_text("mine\n")
    argv = ["simulate", CASE, "--quiet", "--realisations", "5", "--out", str(out)]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "--out" in err and "slipfield sweep" in err and "--overwrite" in err
    assert (out / "sweep.json").exists()
    assert main(argv + ["--overwrite"]) == 0
    assert not (out / "sweep.json").exists() and (out / "results.json").exists()
    assert (out / "keep.txt").read_text() == "mine\n"


def test_outputs_respect_the_umask(tmp_path):
    old = os.umask(0o027)  # group may read, others nothing: neither 0700 nor 0644
    try:
        out, exp = tmp_path / "sim", tmp_path / "fields"
        assert main(["simulate", CASE, "--quiet", "--realisations", "3", "--out", str(out),
                     "--export-fields", str(exp), "--export-format", "npz"]) == 0
    finally:
        os.umask(old)
    for root in (out, exp):
        for p in [root, *root.rglob("*")]:
            mode = stat.S_IMODE(p.stat().st_mode)
            assert mode == (0o750 if p.is_dir() else 0o640), (p, oct(mode))
