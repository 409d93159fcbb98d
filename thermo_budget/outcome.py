"""What a simulated session means against the fluid limit: first crossing, pulls completed under it."""
from __future__ import annotations

import numpy as np

from .network import OIL
from .solver import Trace


def first_crossing_s(trace: Trace, limit_K: float) -> np.ndarray:
    """Time (s) at which the bulk oil first exceeds limit_K, per design (N,); NaN where it never does.
    Linear interpolation between the recorded points around the crossing."""
    oil = trace.T_K[:, :, OIL]
    above = oil > limit_K
    crossed = above.any(axis=0)
    first = np.argmax(above, axis=0)
    cols = np.arange(oil.shape[1])
    prev = np.maximum(first - 1, 0)
    T0, T1 = oil[prev, cols], oil[first, cols]
    t0, t1 = trace.time_s[prev, cols], trace.time_s[first, cols]
    frac = np.where(T1 > T0, (limit_K - T0) / np.where(T1 > T0, T1 - T0, 1.0), 0.0)
    return np.where(crossed, t0 + np.clip(frac, 0.0, 1.0) * (t1 - t0), np.nan)


def pulls_completed_under(trace: Trace, limit_K: float) -> np.ndarray:
    """Pulls from the start completed with the bulk oil never above the limit, per design (N,) int.
    Counting stops at the first pull during (or before) which the limit is crossed."""
    crossing = first_crossing_s(trace, limit_K)
    n_pulls = trace.pull_end_s.shape[0]
    done = trace.pull_end_s <= np.where(np.isnan(crossing), np.inf, crossing)[None, :] + 1e-9
    # pulls are in time order, so the completed ones are a prefix
    return np.where(np.isnan(crossing), n_pulls, np.sum(np.cumprod(done, axis=0), axis=0)).astype(int)


def peak_oil_K(trace: Trace) -> np.ndarray:
    """Highest bulk oil temperature over the trace, per design (N,)."""
    return trace.T_K[:, :, OIL].max(axis=0)
