"""Design sweep: pulls before the limit and peak temperature over a grid of oil volumes and coolers,
computed as one vectorised integration over all designs at once."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .outcome import peak_oil_K
from .planning import MAX_PULLS, periodic_state, runs_before_limit, session_outcome, session_trace
from .scenario import Scenario, build_rig, limit_K


@dataclass
class SweepResult:
    """Grid results, arrays of shape (V, K): V oil volumes (L at 15 degC) by K coolers (W/K of ETD).

    runs_before_limit : pulls completed under the limit repeating the cycle from the start; NaN
        where the cadence is sustainable (unlimited) or no crossing came within max_pulls.
    sustainable : the periodic steady state peaks below the limit.
    peak_C : highest bulk oil temperature over the planned session.
    pulls_under_limit : pulls of the planned session completed under the limit.
    """
    oil_volumes_L: np.ndarray
    coolers_W_per_K: np.ndarray
    runs_before_limit: np.ndarray
    sustainable: np.ndarray
    peak_C: np.ndarray
    pulls_under_limit: np.ndarray
    pulls_planned: int
    limit_C: float
    max_pulls: int

    def to_dict(self) -> dict:
        runs = [[None if np.isnan(v) else int(v) for v in row] for row in self.runs_before_limit]
        return {"oil_volumes_L": self.oil_volumes_L.round(6).tolist(),
                "coolers_W_per_K": self.coolers_W_per_K.round(6).tolist(),
                "runs_before_limit": runs, "sustainable": self.sustainable.tolist(),
                "peak_C": self.peak_C.round(3).tolist(), "pulls_under_limit": self.pulls_under_limit.tolist(),
                "pulls_planned": self.pulls_planned, "limit_C": round(self.limit_C, 3), "max_pulls": self.max_pulls,
                "notes": ["runs_before_limit is null where the cadence is sustainable (it can go on all day)"]}

    def summary_text(self) -> str:
        enough = self.pulls_under_limit >= self.pulls_planned
        lines = [f"{self.oil_volumes_L.size} oil volumes x {self.coolers_W_per_K.size} coolers; "
                 f"limit {self.limit_C:.1f} degC; planned session {self.pulls_planned} pulls",
                 f"designs that finish the planned session: {int(enough.sum())} of {enough.size}",
                 f"designs that can go on all day: {int(self.sustainable.sum())}"]
        for j, cooler in enumerate(self.coolers_W_per_K):
            ok = np.flatnonzero(enough[:, j])
            smallest = f"{self.oil_volumes_L[ok[0]]:.1f} L" if ok.size else "none in range"
            lines.append(f"  cooler {cooler:8.1f} W/K: smallest oil volume that finishes: {smallest}")
        return "\n".join(lines)


def sweep(scenario: Scenario, oil_volumes_L, coolers_W_per_K, max_pulls: int = MAX_PULLS) -> SweepResult:
    """Evaluate every (oil volume, cooler) pair of the grid in one batch (tank scaled geometrically)."""
    volumes = np.asarray(oil_volumes_L, dtype=float)
    coolers = np.asarray(coolers_W_per_K, dtype=float)
    V, K = np.meshgrid(volumes, coolers, indexing="ij")
    rig = build_rig(scenario, oil_volume_m3=V.ravel() / 1000.0, cooler_W_K=K.ravel())
    n = V.size
    limit, _ = limit_K(scenario)
    session = session_trace(scenario, rig, n)
    peak, under = session_outcome(scenario, rig, n, trace=session)
    _, periodic_peak, converged = periodic_state(scenario, rig, n)
    sustainable = converged & (periodic_peak <= limit) & (peak <= limit)
    runs = runs_before_limit(scenario, rig, n, sustainable, max_pulls, session=session)
    shape = V.shape
    return SweepResult(oil_volumes_L=volumes, coolers_W_per_K=coolers, runs_before_limit=runs.reshape(shape),
                       sustainable=sustainable.reshape(shape), peak_C=(peak_oil_K(session) - 273.15).reshape(shape),
                       pulls_under_limit=under.reshape(shape), pulls_planned=len([s for s in scenario.steps if s.is_pull]),
                       limit_C=limit - 273.15, max_pulls=max_pulls)
