"""The ready-to-pull schedule: each planned pull started after its planned wait, lengthened where
needed so that the pull ends under the limit (or, with session.ready_temperature, not before the
oil has cooled to it); and the extra wait before one pull, which the live forecast uses too."""
from __future__ import annotations

import numpy as np

from ..engine.long_session import PERIODIC_TOLERANCE_K
from ..physics.network import N_NODES, OIL
from ..engine.outcome import limiting_peak_K, peak_oil_K
from .planning import GRID_POINTS, batched_threshold, time_constant_s
from .session_runs import SEARCH_MARGIN_K, limits_K
from ..physics.rig import take_designs
from ..inputs.scenario import Scenario, limit_K
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION, Step
from ..engine.solver import integrate
from ..units import ZERO_CELSIUS_K


def _pull_and_wait_blocks(scenario: Scenario):
    """The planned session cut into blocks: (waits before the pull, the pull), in order."""
    blocks, waits = [], []
    for step in scenario.steps:
        if step.is_pull:
            blocks.append((waits, step))
            waits = []
        else:
            waits.append(step)
    return blocks


def _run_steps(rig, steps, X):
    return integrate(rig, steps, X, n_designs=np.asarray(X).reshape(-1, N_NODES).shape[0], resolution=PLAN_RESOLUTION)


def _schedule_as_planned(scenario: Scenario, session) -> list[dict] | None:
    """The ready-to-pull schedule read off the planned session's trace (design 0), if no pull needs
    a longer wait: every pull peaks at least SEARCH_MARGIN_K under the limit and no ready
    temperature is set. None otherwise. Same rows as the block-by-block search would give."""
    if scenario.ready_temperature_K is not None:
        return None
    limit, return_limit = limits_K(scenario)
    oil = session.T_K[:, 0, OIL]
    line = session.return_K[:, 0]
    rows, planned_wait = [], 0.0
    # the recorded points of each step, from the step indices (in order): one search, not one scan a step
    firsts = np.searchsorted(session.step_index, np.arange(len(scenario.steps)), side="left")
    ends = np.searchsorted(session.step_index, np.arange(len(scenario.steps)), side="right")
    for index, step in enumerate(scenario.steps):
        if not step.is_pull:
            planned_wait += step.duration_s
            continue
        start, end = firsts[index] - 1, ends[index]
        peak = float(oil[start:end].max())
        peak_return = float(line[start:end].max())
        if peak > limit - SEARCH_MARGIN_K or (return_limit is not None and peak_return > return_limit - SEARCH_MARGIN_K):
            return None
        rows.append({"index": len(rows) + 1, "start_s": round(float(session.time_s[start, 0]), 2),
                     "start_C": round(float(oil[start]) - ZERO_CELSIUS_K, 3), "peak_C": round(peak - ZERO_CELSIUS_K, 3),
                     "peak_return_C": round(peak_return - ZERO_CELSIUS_K, 3),
                     "wait_before_s": round(planned_wait, 2), "planned_wait_s": round(planned_wait, 2),
                     "extra_wait_s": 0.0})
        planned_wait = 0.0
    return rows


def ready_schedule(scenario: Scenario, notes: list, session=None) -> list[dict]:
    """Ready-to-pull schedule: each planned pull starts after its planned wait, lengthened where
    needed so that the pull peaks at the limit at most (or, with session.ready_temperature, not
    before the oil has cooled to it). Waits keep their engine state (off or idle).

    session : optional session_trace of the scenario's rig; where it shows that no pull needs a
    longer wait, the schedule is read off it.
    """
    as_planned = None if session is None else _schedule_as_planned(scenario, session)
    if as_planned is not None:
        return as_planned
    limit, _ = limit_K(scenario)
    rig = build_rig(scenario)
    X = np.full((1, N_NODES), scenario.start_K)
    t = 0.0
    rows = []
    off = Step(kind="wait", duration_s=1.0, engine="off")
    extra = None
    blocks = _pull_and_wait_blocks(scenario)
    per_cycle = sum(step.is_pull for step in scenario.cycle)
    pull_starts = []       # the state at each pull's start (after its wait), K
    for index, (waits, pull) in enumerate(blocks, start=1):
        planned_wait = sum(step.duration_s for step in waits)
        if waits:
            trace = _run_steps(rig, waits, X)
            X, t = trace.final_K, t + planned_wait
        cool_step = waits[-1] if waits else off
        extra = extra_wait_s(scenario, rig, X, pull, cool_step, limit, guess=extra)
        if extra is None:
            notes.append(("pull_not_scheduled", {"index": index, "engine": cool_step.engine,
                                                 "ready_temperature": scenario.ready_temperature_K is not None}))
            break
        if extra > 0:
            X = _run_steps(rig, [cool_step.with_duration(extra)], X).final_K
            t += extra
        start_C = float(X[0, OIL]) - ZERO_CELSIUS_K
        pull_starts.append(X[0].copy())
        trace = _run_steps(rig, [pull], X)
        peak_C = float(peak_oil_K(trace)[0]) - ZERO_CELSIUS_K
        peak_return_C = float(trace.return_K[:, 0].max()) - ZERO_CELSIUS_K
        rows.append({"index": index, "start_s": round(t, 2), "start_C": round(start_C, 3), "peak_C": round(peak_C, 3),
                     "peak_return_C": round(peak_return_C, 3),
                     "wait_before_s": round(planned_wait + extra, 2), "planned_wait_s": round(planned_wait, 2),
                     "extra_wait_s": round(extra, 2)})
        X, t = trace.final_K, t + pull.duration_s
        period = _schedule_settled(pull_starts, rows, per_cycle) if index < len(blocks) else 0
        if period:
            return rows + _repeated_rows(rows, period, len(blocks) - index)
    return rows


def _schedule_settled(pull_starts: list, rows: list, per_cycle: int, tolerance_K: float = PERIODIC_TOLERANCE_K) -> int:
    """The period (in pulls) of a schedule that has become periodic, 0 where it has not: one cycle or,
    where the searched extra waits alternate between two neighbouring lattice points (_threshold_near)
    once the limit governs, two. Periodic: the last period's rows have the extra waits of the period
    before, and the state at its pulls' start can change by less than tolerance_K in all later
    periods (the last change d and the contraction rho of the last two give d rho / (1 - rho), as
    for a long session, long_session.py)."""
    for p in (per_cycle, 2 * per_cycle):
        if len(pull_starts) < 3 * p or any(a["extra_wait_s"] != b["extra_wait_s"] for a, b in zip(rows[-p:], rows[-2 * p:-p])):
            continue
        last = max(float(np.max(np.abs(pull_starts[-1 - i] - pull_starts[-1 - i - p]))) for i in range(p))
        before = max(float(np.max(np.abs(pull_starts[-1 - i - p] - pull_starts[-1 - i - 2 * p]))) for i in range(p))
        if last == 0.0:
            return p
        rho = last / before if before > 0 else np.inf
        if rho < 1.0 and last + last * rho / (1.0 - rho) < tolerance_K:
            return p
    return 0


def _repeated_rows(rows: list, per_cycle: int, count: int) -> list:
    """The next `count` rows of a periodic schedule: the last period's rows (per_cycle of them) again,
    one period later each."""
    period_s = rows[-1]["start_s"] - rows[-1 - per_cycle]["start_s"]
    more = []
    for j in range(count):
        source = rows[len(rows) - per_cycle + j % per_cycle]
        more.append({**source, "index": len(rows) + j + 1,
                     "start_s": round(source["start_s"] + (j // per_cycle + 1) * period_s, 2)})
    return more


def extra_wait_s(scenario, rig, X, pull: Step, cool_step: Step, limit: float, guess: float | None = None) -> float | None:
    """Extra cooling (s) before `pull` so that its peak stays at or below the limit, or, in the
    ready-temperature mode, until the oil has cooled to the ready temperature. None if impossible.
    guess : optional extra wait of the pull before (s); where it is positive, the search starts
    near it (WARM_RANGE) and falls back to the full search when the answer is not in that range."""
    ready = scenario.ready_temperature_K

    def passes(extras):
        n = extras.size
        trace = integrate(take_designs(rig, np.zeros(n, int)), [cool_step, pull], np.repeat(X, n, axis=0),
                          n_designs=n, durations_s=[extras, pull.duration_s], resolution=PLAN_RESOLUTION)
        pulled = limiting_peak_K(trace, limit, scenario.return_line_max_temperature_K) <= limit - SEARCH_MARGIN_K
        if ready is not None:
            after_wait = trace.T_K[trace.step_index == 0][-1][:, OIL]
            pulled &= after_wait <= ready + 1e-9
        return pulled

    if guess is not None and guess > 0:
        warm = _threshold_near(passes, guess)
        if warm is not None:
            return warm
    longest = 8.0 * time_constant_s(scenario)
    if not np.isfinite(longest):
        return 0.0 if passes(np.array([0.0]))[0] else None
    extra = batched_threshold(passes, 1.0, longest, floor=0.0)
    return None if np.isnan(extra) else extra


# Where the pull before needed an extra wait, the next one's is searched first between these
# fractions of it: a long day settles into waits that change little from pull to pull.
WARM_RANGE = (0.8, 1.25)


def _threshold_near(passes, guess: float) -> float | None:
    """The smallest passing value on a lattice, searched in two batches: the points of a lattice
    of step 2^n (about GRID_POINTS of them) in WARM_RANGE times guess, then the 31 points of a lattice
    32 times finer inside the bracket found. None where the range holds no bracket (its lowest
    point passes, or none does). Being a lattice point, the answer depends on the state alone, not
    on the guess (within one power of two), so a settled schedule repeats exactly; it passes, as
    batched_threshold's."""
    low, high = WARM_RANGE[0] * guess, WARM_RANGE[1] * guess
    step = 2.0 ** np.floor(np.log2((high - low) / GRID_POINTS))
    grid = step * np.arange(np.ceil(low / step), np.floor(high / step) + 1.0)
    ok = passes(grid)
    if not ok.any() or ok[0]:
        return None
    first = int(np.argmax(ok))
    finer = grid[first - 1] + step / 32.0 * np.arange(1.0, 32.0)
    ok = passes(finer)
    return float(finer[int(np.argmax(ok))]) if ok.any() else float(grid[first])
