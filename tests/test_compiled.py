"""The compiled engine's cache place (compiled.py)."""
import os

from thermo_budget.physics import compiled


def test_the_cache_goes_to_the_users_folder_where_the_package_is_read_only(monkeypatch, tmp_path):
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    monkeypatch.setattr(compiled.os, "access", lambda path, mode: False)
    compiled._cache_dir_if_needed()
    assert os.environ["NUMBA_CACHE_DIR"] == os.path.join(str(tmp_path), "thermo_budget", "numba")


def test_the_cache_stays_beside_the_modules_where_it_can_be_written(monkeypatch):
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    monkeypatch.setattr(compiled.os, "access", lambda path, mode: True)
    compiled._cache_dir_if_needed()
    assert "NUMBA_CACHE_DIR" not in os.environ


def test_a_users_choice_of_cache_is_kept(monkeypatch):
    monkeypatch.setenv("NUMBA_CACHE_DIR", "/somewhere/else")
    monkeypatch.setattr(compiled.os, "access", lambda path, mode: False)
    compiled._cache_dir_if_needed()
    assert os.environ["NUMBA_CACHE_DIR"] == "/somewhere/else"
