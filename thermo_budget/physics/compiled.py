"""The one door to numba: the decorators that compile the physics (`kernel` for functions,
`ufunc` for scalar correlations that numpy callers use on arrays), with their cache placed where
this installation can write it.

Compiled code is cached (numba's `cache=True`): the first run on a machine compiles the kernel
(seconds), later processes load it (README "Performance"). The cache sits in the package's
__pycache__, or where the package's folder is not writable (a system install) in the user's cache
folder, in a folder named after a digest of the kernels' sources (NUMBA_CACHE_DIR, unless the user
has set it): an edit or an upgrade compiles afresh.
"""
from __future__ import annotations

import hashlib
import importlib
import os
import shutil
import sys
from functools import lru_cache
from pathlib import Path

import numpy as np


# The packages whose modules hold compiled code or the constants it reads (physics/, engine/).
KERNEL_PACKAGES = ("physics", "engine")


def source_stamp(package_root: Path) -> str:
    """A digest of every module of KERNEL_PACKAGES under package_root. numba stamps a cached
    function with its own file only, so an edit (or an upgrade) that changes a function it calls in
    another file would load stale code; the cache's folder is named after this stamp instead."""
    digest = hashlib.sha256()
    for package in KERNEL_PACKAGES:
        for path in sorted((package_root / package).glob("*.py")):
            digest.update(path.name.encode())
            digest.update(path.read_bytes())
    return digest.hexdigest()[:16]


def _cache_dir(here: Path | None = None) -> None:
    """NUMBA_CACHE_DIR, unless the user has set it: numba-<source stamp> in the package's __pycache__,
    or in the user's cache folder where the package's folder is not writable (a system install).
    Folders of other stamps beside it (older sources) are removed. here : the package's folder."""
    if os.environ.get("NUMBA_CACHE_DIR"):
        return
    here = Path(__file__).resolve().parent.parent if here is None else here
    cache = here / "__pycache__"
    if not (os.access(cache, os.W_OK) if cache.exists() else os.access(here, os.W_OK)):
        base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
        cache = Path(base) / "thermo_budget"
    folder = cache / f"numba-{source_stamp(here)}"
    os.environ["NUMBA_CACHE_DIR"] = str(folder)
    for old in cache.glob("numba-*") if cache.is_dir() else ():
        if old != folder:
            shutil.rmtree(old, ignore_errors=True)


def _import_numba():
    """numba, imported without scipy: numba checks scipy's version on import and looks for scipy's
    BLAS when it sets up its numpy support (numba.np.arraymath), which a run otherwise never loads
    (tests/test_cli.py checks it; about 0.1 s). So the kernels use no BLAS (no np.dot, no @ on
    arrays): they write their loops. scipy stays importable afterwards."""
    hide = "scipy" not in sys.modules
    if hide:
        sys.modules["scipy"] = None          # `import scipy...` raises ImportError; numba skips both
    try:
        import numba
        import numba.np.arraymath  # noqa: F401  (its BLAS check, done now while scipy is hidden)
    finally:
        if hide:
            del sys.modules["scipy"]
    return numba


# A batch of designs is shared among this many threads at most: past a few, waking them for a step
# of a few hundred microseconds costs more than it saves. (Set with numba.set_num_threads, never
# through NUMBA_NUM_THREADS: numba refuses a changed count once its threads have started.)
MAX_THREADS = 4

_cache_dir()
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")   # waiting threads sleep: the page's browser shares the cores
numba = _import_numba()


def kernel(function):
    """Compile a function of floats and float arrays (nopython, cached)."""
    return numba.njit(cache=True, error_model="numpy")(function)


def parallel_kernel(function):
    """Compile a function whose `prange` loop runs on a thread per core (nopython, cached). Its
    iterations must be independent: then its results are those of the serial kernel, to the bit."""
    return numba.njit(cache=True, error_model="numpy", parallel=True)(function)


prange = numba.prange


@lru_cache(maxsize=None)
def threads_usable() -> bool:
    """Whether the parallel kernels run on a thread pool that lasts (OpenMP or TBB, numba's own
    modules for them, probed once) with more than one thread: numba's fallback (workqueue) starts
    its threads at every call, slower than one thread for the engine's short calls, and cannot be
    entered from two threads at once."""
    if numba.config.NUMBA_NUM_THREADS <= 1 or numba.config.THREADING_LAYER not in ("default", "threadsafe", "omp",
                                                                                    "tbb"):
        return False
    return any(_loads(f"numba.np.ufunc.{layer}pool") for layer in ("omp", "tbb"))


def _loads(module: str) -> bool:
    try:
        importlib.import_module(module)
    except ImportError:
        return False
    return True


def use_threads() -> None:
    """At most MAX_THREADS threads for the parallel kernels that this thread calls (numba's count is
    the calling thread's own)."""
    numba.set_num_threads(min(numba.config.NUMBA_NUM_THREADS, MAX_THREADS))


def ufunc(function):
    """Compile a scalar function of floats (a correlation, a property) for compiled callers; numpy
    callers pass floats, or arrays through `elementwise`. (numba's own ufuncs are rebuilt at every
    import, seconds of start-up; these load from the cache.)"""
    return kernel(function)


def elementwise(function):
    """A compiled scalar function applied to floats or arrays (broadcast) from numpy: a float where
    every argument is one, else an array of their broadcast shape."""
    def apply(*args):
        if all(np.ndim(a) == 0 for a in args):
            return function(*(float(a) for a in args))
        shaped = np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in args])
        out = np.empty(shaped[0].shape)
        flat = [a.ravel() for a in shaped]
        for i in range(out.size):
            out.flat[i] = function(*(float(a[i]) for a in flat))
        return out
    apply.__doc__ = function.__doc__
    return apply
