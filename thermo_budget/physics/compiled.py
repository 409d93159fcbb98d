"""The one door to numba: the decorators that compile the physics (`kernel` for functions,
`ufunc` for scalar correlations that numpy callers use on arrays), with their cache placed where
this installation can write it.

Compiled code is cached (numba's `cache=True`): the first run on a machine compiles the kernel
(seconds), later processes load it (README "Performance"). The cache sits in __pycache__ beside
the modules; where the package's folder is not writable (a system install), in the user's cache
folder (NUMBA_CACHE_DIR, unless the user has set it).
"""
from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np


def _cache_dir_if_needed() -> None:
    if os.environ.get("NUMBA_CACHE_DIR"):
        return
    here = Path(__file__).resolve().parent.parent
    cache = here / "__pycache__"
    if os.access(cache, os.W_OK) if cache.exists() else os.access(here, os.W_OK):
        return
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    os.environ["NUMBA_CACHE_DIR"] = os.path.join(base, "thermo_budget", "numba")


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


def _threads_if_unset() -> None:
    """At most MAX_THREADS threads for the parallel kernels, and OpenMP's waiting threads asleep
    rather than spinning (the page's browser shares the cores), unless the user has set either."""
    os.environ.setdefault("NUMBA_NUM_THREADS", str(max(1, min(os.cpu_count() or 1, MAX_THREADS))))
    os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")


# A batch of designs is shared among this many threads at most: past a few, waking them for a step
# of a few hundred microseconds costs more than it saves.
MAX_THREADS = 4

_cache_dir_if_needed()
_threads_if_unset()
numba = _import_numba()


def kernel(function):
    """Compile a function of floats and float arrays (nopython, cached)."""
    return numba.njit(cache=True, error_model="numpy")(function)


def parallel_kernel(function):
    """Compile a function whose `prange` loop runs on a thread per core (nopython, cached). Its
    iterations must be independent: then its results are those of the serial kernel, to the bit."""
    return numba.njit(cache=True, error_model="numpy", parallel=True)(function)


prange = numba.prange
_threads_usable: list = []


def threads_usable() -> bool:
    """Whether the parallel kernels run on a thread pool that lasts (OpenMP or TBB, numba's own
    check, done once): numba's fallback (workqueue) starts its threads at every call, slower than
    one thread for the engine's short calls, and cannot be entered from two threads at once."""
    if not _threads_usable:
        usable = False
        if numba.config.NUMBA_NUM_THREADS > 1:
            for layer in ("omp", "tbb"):
                try:
                    __import__(f"numba.np.ufunc.{layer}pool")
                except ImportError:
                    continue
                if numba.config.THREADING_LAYER in ("default", "threadsafe", layer):
                    numba.config.THREADING_LAYER = layer
                    usable = True
                break
        _threads_usable.append(usable)
    return _threads_usable[0]


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
