"""The compiled engine's cache place and its thread settings (compiled.py)."""
import os
import shutil
from pathlib import Path

from thermo_budget.physics import compiled

PACKAGE = Path(compiled.__file__).resolve().parent.parent


def _package_copy(tmp_path) -> Path:
    """The kernel packages' modules copied into tmp_path/pkg (what source_stamp reads)."""
    root = tmp_path / "pkg"
    for package in compiled.KERNEL_PACKAGES:
        shutil.copytree(PACKAGE / package, root / package, ignore=shutil.ignore_patterns("__pycache__"))
    return root


def test_the_cache_goes_to_the_users_folder_where_the_package_is_read_only(monkeypatch, tmp_path):
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))
    monkeypatch.setattr(compiled.os, "access", lambda path, mode: False)
    root = _package_copy(tmp_path)
    compiled._cache_dir(root)
    expected = tmp_path / "cache" / "thermo_budget" / f"numba-{compiled.source_stamp(root)}"
    assert os.environ["NUMBA_CACHE_DIR"] == str(expected)


def test_the_cache_stays_in_the_packages_folder_where_it_can_be_written(monkeypatch, tmp_path):
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    root = _package_copy(tmp_path)
    compiled._cache_dir(root)
    assert os.environ["NUMBA_CACHE_DIR"] == str(root / "__pycache__" / f"numba-{compiled.source_stamp(root)}")


def test_a_users_choice_of_cache_is_kept(monkeypatch):
    monkeypatch.setenv("NUMBA_CACHE_DIR", "/somewhere/else")
    monkeypatch.setattr(compiled.os, "access", lambda path, mode: False)
    compiled._cache_dir()
    assert os.environ["NUMBA_CACHE_DIR"] == "/somewhere/else"


def test_an_edit_of_any_kernel_module_moves_the_cache_and_drops_the_old_one(monkeypatch, tmp_path):
    # numba stamps a cached function with its own file only: code that calls a property in oil.py
    # would keep the old property after oil.py changed. The cache's folder follows every kernel
    # module's text, and the folder of the old text is removed.
    monkeypatch.delenv("NUMBA_CACHE_DIR", raising=False)
    root = _package_copy(tmp_path)
    compiled._cache_dir(root)
    before = Path(os.environ["NUMBA_CACHE_DIR"])
    before.mkdir(parents=True)
    oil = root / "physics" / "oil.py"
    oil.write_text(oil.read_text() + "\n# an edit\n")
    monkeypatch.delenv("NUMBA_CACHE_DIR")
    compiled._cache_dir(root)
    after = Path(os.environ["NUMBA_CACHE_DIR"])
    assert after != before and after.parent == before.parent and not before.exists()


def test_a_module_outside_the_kernels_leaves_the_cache_where_it_is(tmp_path):
    root = _package_copy(tmp_path)
    stamp = compiled.source_stamp(root)
    (root / "page").mkdir()
    (root / "page" / "page_cards.py").write_text("x = 1\n")
    assert compiled.source_stamp(root) == stamp


HOST_FIRST = """
import os, sys
os.sched_setaffinity(0, {sorted(os.sched_getaffinity(0))[0]})   # numba's own count: 1 thread
import numba, numpy as np

@numba.njit(parallel=True)
def host_sum(x):
    total = 0.0
    for i in numba.prange(x.size):
        total += x[i]
    return total

host_sum(np.ones(10))                                  # the host's threads have started
sys.path.insert(0, sys.argv[1])
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.engine.solver import integrate
scenario = load_scenario(os.path.join(sys.argv[1], "scenarios", "default.toml"))
rig = build_rig(scenario, oil_volume_m3=np.linspace(0.01, 0.03, 20))
integrate(rig, list(scenario.cycle), scenario.start_K, n_designs=20)

@numba.njit(parallel=True)
def host_max(x):
    top = -np.inf
    for i in numba.prange(x.size):
        top = max(top, x[i])
    return top

print(host_max(np.arange(5.0)))                        # the host compiles again afterwards
"""


def test_a_host_that_started_numbas_threads_first_keeps_working(tmp_path):
    # numba refuses a changed NUMBA_NUM_THREADS once its threads have started, at the host's next
    # compile. The package never writes it (it sets its count per calling thread), so a program that
    # used numba's threads before importing it, with another count than ours, goes on working.
    import subprocess
    import sys
    script = tmp_path / "host.py"
    script.write_text(HOST_FIRST)
    env = {key: value for key, value in os.environ.items() if key != "NUMBA_NUM_THREADS"}
    done = subprocess.run([sys.executable, str(script), str(PACKAGE.parent)], capture_output=True, text=True,
                          env=env, timeout=300)
    assert done.returncode == 0, done.stderr[-2000:]
    assert done.stdout.strip() == "4.0"
