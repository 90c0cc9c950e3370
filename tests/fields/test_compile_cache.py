"""A read-only installation still imports: numba's compiled-kernel cache gets a folder it can write.

numba (documented behaviour of ``cache=True``) writes next to the source or
under the user's cache folder and fails to decorate a function when it can
write to neither; ``NUMBA_CACHE_DIR`` overrides both.
"""
import os

from slipfield.fields._compile_cache import _writable, choose_cache_dir


def test_neither_place_writable_gives_a_private_temporary_folder(tmp_path):
    env = {"XDG_CACHE_HOME": str(tmp_path / "cache")}
    chosen = choose_cache_dir(str(tmp_path / "pkg"), environ=env, writable=lambda folder: False)
    assert chosen is not None and env["NUMBA_CACHE_DIR"] == chosen
    assert str(os.getuid()) in os.path.basename(chosen)


def test_a_writable_place_or_a_users_choice_is_left_to_numba(tmp_path):
    for writable_one in (str(tmp_path / "pkg"), str(tmp_path / "cache")):
        env = {"XDG_CACHE_HOME": str(tmp_path / "cache")}
        assert choose_cache_dir(str(tmp_path / "pkg"), environ=env,
                                writable=lambda folder, w=writable_one: folder == w) is None
        assert "NUMBA_CACHE_DIR" not in env
    env = {"NUMBA_CACHE_DIR": str(tmp_path / "mine")}
    assert choose_cache_dir(str(tmp_path / "pkg"), environ=env, writable=lambda folder: False) is None
    assert env["NUMBA_CACHE_DIR"] == str(tmp_path / "mine")


def test_writable_looks_at_the_nearest_existing_parent(tmp_path):
    assert _writable(str(tmp_path / "not" / "yet"))
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o500)
    try:
        if os.access(ro, os.W_OK):  # root writes anywhere: the permission cannot be tested here
            return
        assert not _writable(str(ro / "sub"))
    finally:
        ro.chmod(0o700)

