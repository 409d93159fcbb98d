"""A hot day: the pull count and the cooler needed across ambient temperatures.

Every ambient is one design of a batched integration (`Rig.ambient_K` one per design). The rig
starts at the scenario's start temperature moved by as much as the air is (a rig that starts at
room temperature starts at the warmer room's). Pulls are counted as in the report's
`runs_before_limit` (the planned cycle repeated from the start until a pull passes a limit), up to
a cap; where the cycle's periodic state stays under the limits, the cadence can go on all day.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .planning import GRID_POINTS, GRID_ROUNDS, round_up
from .session_runs import SEARCH_MARGIN_K, limits_K, periodic_state
from ..physics.rig import take_designs
from ..engine.long_session import integrate_session
from ..physics.network import N_NODES
from ..engine.outcome import limiting_peak_K, pulls_completed_under
from ..inputs.scenario import Scenario
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION
from ..engine.solver import integrate
from ..units import ZERO_CELSIUS_K

DEFAULT_RANGE_C = (0.0, 45.0)   # the ambients shown when the scenario's own lies within them
DEFAULT_STEP_K = 5.0
AROUND_K = 15.0                 # otherwise the scenario's ambient +/- this


@dataclass(frozen=True)
class HotDay:
    """Answers per ambient, arrays of shape (A,).

    pulls : pulls before a limit, repeating the cycle; NaN where none is passed within max_pulls
    all_day : the cadence settles under the limits (it can go on all day)
    cooler_W_per_K : the smallest cooler for the planned session (0: none needed; NaN: none can)
    """
    ambients_K: np.ndarray
    pulls: np.ndarray
    all_day: np.ndarray
    cooler_W_per_K: np.ndarray
    max_pulls: int

    def to_json(self) -> dict:
        return {"ambient_C": [round(float(a) - ZERO_CELSIUS_K, 2) for a in self.ambients_K],
                "pulls_before_limit": [None if np.isnan(p) else int(p) for p in self.pulls],
                "all_day": [bool(a) for a in self.all_day],
                "cooler_required_W_per_K": [None if np.isnan(c) else round(float(c), 3) for c in self.cooler_W_per_K],
                "max_pulls": self.max_pulls,
                "notes": ["pulls_before_limit is null where the cycle can go on all day or no pull within "
                          "max_pulls passes a limit; the rig starts as much warmer as the air is"]}

    def summary_text(self, system: str = "SI") -> str:
        from ..units import to_display, unit_label
        lines = []
        for a, p, day, c in zip(self.ambients_K, self.pulls, self.all_day, self.cooler_W_per_K):
            pulls = "all day" if day else (f"more than {self.max_pulls}" if np.isnan(p) else f"{int(p)} pulls")
            cooler = ("no cooler needed" if c == 0 else "no cooler can do it" if np.isnan(c) else
                      f"cooler {to_display(c, 'conductance', system):.1f} {unit_label('conductance', system)}")
            lines.append(f"  on a {to_display(a, 'temperature', system):.0f} {unit_label('temperature', system)} "
                         f"day: {pulls}; {cooler}")
        return "\n".join(lines)


def default_ambients_K(scenario: Scenario) -> np.ndarray:
    """0 to 45 degC in steps of 5 K, or the scenario's ambient +/- 15 K where it lies outside."""
    low, high = DEFAULT_RANGE_C
    if low <= scenario.ambient_K - ZERO_CELSIUS_K <= high:
        return np.arange(low, high + 0.5 * DEFAULT_STEP_K, DEFAULT_STEP_K) + ZERO_CELSIUS_K
    return scenario.ambient_K + np.arange(-AROUND_K, AROUND_K + 0.5 * DEFAULT_STEP_K, DEFAULT_STEP_K)


def hot_day(scenario: Scenario, ambients_K=None, max_pulls: int | None = None) -> HotDay:
    """Pull count, all-day cadence and the cooler needed at each ambient (K); see the module."""
    ambients = default_ambients_K(scenario) if ambients_K is None else np.asarray(ambients_K, dtype=float)
    n = ambients.size
    pulls_planned = sum(step.is_pull for step in scenario.steps)
    per_cycle = sum(step.is_pull for step in scenario.cycle)
    max_pulls = max(4 * pulls_planned, 40) if max_pulls is None else max_pulls
    limit, return_limit = limits_K(scenario)
    starts = np.repeat((scenario.start_K + ambients - scenario.ambient_K)[:, None], N_NODES, axis=1)
    possible = (ambients < limit) & (starts[:, 0] < limit)   # a room at the limit leaves no pull

    rig = build_rig(scenario).with_changes(ambient_K=ambients)
    _, periodic_peak, converged = periodic_state(scenario, rig, n, X0=starts)
    stop_K = limit if return_limit is None else min(limit, return_limit)
    cycles = -(-(max_pulls + 1) // per_cycle)   # one pull past max_pulls, so a count of max_pulls is seen
    trace = integrate(rig, list(scenario.cycle) * cycles, starts, n_designs=n, resolution=PLAN_RESOLUTION,
                      stop_above_K=stop_K)
    under = pulls_completed_under(trace, limit, return_limit).astype(float)
    crossed = under < trace.pull_end_s.shape[0]
    all_day = possible & converged & (periodic_peak <= limit) & ~crossed
    pulls = np.where(crossed & (under <= max_pulls), under, np.nan)
    pulls = np.where(possible, pulls, 0.0)
    return HotDay(ambients_K=ambients, pulls=pulls, all_day=all_day,
                  cooler_W_per_K=_coolers_needed(scenario, ambients, starts, possible), max_pulls=max_pulls)


def _coolers_needed(scenario: Scenario, ambients, starts, possible) -> np.ndarray:
    """The smallest cooler (W/K) that finishes the planned session at each ambient: a batched
    search, every ambient's candidates in one integration per round (GRID_ROUNDS rounds of
    GRID_POINTS candidates, the first geometric, then linear inside the bracket found)."""
    limit, return_limit = limits_K(scenario)
    n = ambients.size
    peak_power = max(step.peak_power_W() for step in scenario.cycle)
    largest = 20.0 * peak_power / np.maximum(limit - ambients, 1.0)
    base = build_rig(scenario, cooler_W_K=0.0)

    def passes(candidates):          # candidates (n, k) W/K -> (n, k) bool
        k = candidates.shape[1]
        index = np.repeat(np.arange(n), k)
        rig = take_designs(base, np.zeros(n * k, int)).with_changes(
            ambient_K=ambients[index], cooler_W_K=candidates.ravel())
        trace = integrate_session(rig, scenario, starts[index], n_designs=n * k, resolution=PLAN_RESOLUTION)
        return (limiting_peak_K(trace, limit, return_limit) <= limit - SEARCH_MARGIN_K).reshape(n, k)

    grid = np.concatenate([np.zeros((n, 1)), np.geomspace(1e-5 * largest, largest, GRID_POINTS).T], axis=1)
    answer = np.full(n, np.nan)
    for _ in range(GRID_ROUNDS):
        ok = passes(grid)
        found = ok.any(axis=1)
        first = np.argmax(ok, axis=1)
        rows = np.arange(n)
        answer = np.where(found, grid[rows, first], answer)
        lower = np.where(first > 0, grid[rows, np.maximum(first - 1, 0)], grid[rows, 0])
        if not found.any() or (answer[found] == 0.0).all():
            break
        upper = np.where(found, answer, largest)
        grid = lower[:, None] + (upper - lower)[:, None] * np.linspace(0.0, 1.0, GRID_POINTS + 1)[None, 1:]
        grid[answer == 0.0] = 0.0
    answer = np.array([round_up(a, 3) if np.isfinite(a) else np.nan for a in answer])
    return np.where(possible, answer, np.nan)
