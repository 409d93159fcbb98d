"""What a simulated session means against the limits: first crossing, pulls completed under them, peak.

There are up to two limits: the fluid limit on the bulk (reservoir) oil, and an optional limit on
the return-line oil (the rating of the hoses and seals it flows through). Every function takes the
return-line limit as an optional argument (None: no such limit), and a pull counts as completed
only when neither limit was passed.
"""
from __future__ import annotations

import numpy as np

from ..physics.network import OIL
from .solver import Trace


def _first_above_s(values: np.ndarray, time_s: np.ndarray, limit_K: float) -> np.ndarray:
    """Time at which values (M, N) first exceed limit_K, per design (N,); NaN where never.
    Linear interpolation between the recorded points around the crossing."""
    above = values > limit_K
    crossed = above.any(axis=0)
    first = np.argmax(above, axis=0)
    cols = np.arange(values.shape[1])
    prev = np.maximum(first - 1, 0)
    T0, T1 = values[prev, cols], values[first, cols]
    t0, t1 = time_s[prev, cols], time_s[first, cols]
    frac = np.where(T1 > T0, (limit_K - T0) / np.where(T1 > T0, T1 - T0, 1.0), 0.0)
    return np.where(crossed, t0 + np.clip(frac, 0.0, 1.0) * (t1 - t0), np.nan)


def first_crossing_s(trace: Trace, limit_K: float, return_limit_K: float | None = None) -> np.ndarray:
    """Time (s) at which the bulk oil first exceeds limit_K, or the return-line oil return_limit_K
    (whichever comes first), per design (N,); NaN where neither ever does."""
    bulk = _first_above_s(trace.T_K[:, :, OIL], trace.time_s, limit_K)
    if return_limit_K is None:
        return bulk
    line = _first_above_s(trace.return_K, trace.time_s, return_limit_K)
    return np.fmin(bulk, line)


def limit_crossed_first(trace: Trace, limit_K: float, return_limit_K: float | None = None) -> list:
    """Which limit each design passes first: "bulk", "return_line", or None where neither."""
    bulk = _first_above_s(trace.T_K[:, :, OIL], trace.time_s, limit_K)
    line = (np.full_like(bulk, np.nan) if return_limit_K is None
            else _first_above_s(trace.return_K, trace.time_s, return_limit_K))
    return [None if np.isnan(b) and np.isnan(r) else "return_line" if np.isnan(b) or r < b else "bulk"
            for b, r in zip(bulk, line)]


def pulls_completed_under(trace: Trace, limit_K: float, return_limit_K: float | None = None) -> np.ndarray:
    """Pulls from the start completed with neither limit passed, per design (N,) int.
    Counting stops at the first pull during (or before) which a limit is crossed."""
    crossing = first_crossing_s(trace, limit_K, return_limit_K)
    n_pulls = trace.pull_end_s.shape[0]
    done = trace.pull_end_s <= np.where(np.isnan(crossing), np.inf, crossing)[None, :] + 1e-9
    # pulls are in time order, so the completed ones are a prefix
    return np.where(np.isnan(crossing), n_pulls, np.sum(np.cumprod(done, axis=0), axis=0)).astype(int)


def peak_oil_K(trace: Trace) -> np.ndarray:
    """Highest bulk oil temperature over the trace, per design (N,)."""
    return trace.T_K[:, :, OIL].max(axis=0)


def limiting_peak_K(trace: Trace, limit_K: float, return_limit_K: float | None = None) -> np.ndarray:
    """The peak that the searches hold against the bulk limit, per design (N,), K.

    Without a return-line limit it is the bulk peak. With one, it is limit_K plus the larger excess
    over either limit at any point: limit_K + max_t max(T_bulk - limit_K, T_return - return_limit_K).
    So `limiting_peak_K(...) <= limit_K - margin` holds exactly when both oils stay `margin` under
    their own limits.
    """
    bulk = trace.T_K[:, :, OIL]
    if return_limit_K is None:
        return bulk.max(axis=0)
    excess = np.maximum(bulk - limit_K, trace.return_K - return_limit_K)
    return limit_K + excess.max(axis=0)
