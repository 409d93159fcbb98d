"""The ready-to-pull schedule: each planned pull started after its planned wait, lengthened where
needed so that the pull ends under the limit (or, with session.ready_temperature, not before the
oil has cooled to it); and the extra wait before one pull, which the live forecast uses too."""
from __future__ import annotations

import numpy as np

from .network import N_NODES, OIL
from .outcome import limiting_peak_K, peak_oil_K
from .planning import SEARCH_MARGIN_K, batched_threshold, limits_K, take_designs, time_constant_s
from .scenario import Scenario, limit_K
from .rig_build import build_rig
from .session import PLAN_RESOLUTION, Step
from .solver import integrate
from .units import ZERO_CELSIUS_K


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
    for index, step in enumerate(scenario.steps):
        if not step.is_pull:
            planned_wait += step.duration_s
            continue
        points = np.flatnonzero(session.step_index == index)
        start = points[0] - 1
        peak = float(oil[start:points[-1] + 1].max())
        peak_return = float(line[start:points[-1] + 1].max())
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
    for index, (waits, pull) in enumerate(_pull_and_wait_blocks(scenario), start=1):
        planned_wait = sum(step.duration_s for step in waits)
        if waits:
            trace = _run_steps(rig, waits, X)
            X, t = trace.final_K, t + planned_wait
        cool_step = waits[-1] if waits else off
        extra = extra_wait_s(scenario, rig, X, pull, cool_step, limit)
        if extra is None:
            notes.append(("pull_not_scheduled", {"index": index, "engine": cool_step.engine,
                                                 "ready_temperature": scenario.ready_temperature_K is not None}))
            break
        if extra > 0:
            X = _run_steps(rig, [cool_step.with_duration(extra)], X).final_K
            t += extra
        start_C = float(X[0, OIL]) - ZERO_CELSIUS_K
        trace = _run_steps(rig, [pull], X)
        peak_C = float(peak_oil_K(trace)[0]) - ZERO_CELSIUS_K
        peak_return_C = float(trace.return_K[:, 0].max()) - ZERO_CELSIUS_K
        rows.append({"index": index, "start_s": round(t, 2), "start_C": round(start_C, 3), "peak_C": round(peak_C, 3),
                     "peak_return_C": round(peak_return_C, 3),
                     "wait_before_s": round(planned_wait + extra, 2), "planned_wait_s": round(planned_wait, 2),
                     "extra_wait_s": round(extra, 2)})
        X, t = trace.final_K, t + pull.duration_s
    return rows


def extra_wait_s(scenario, rig, X, pull: Step, cool_step: Step, limit: float) -> float | None:
    """Extra cooling (s) before `pull` so that its peak stays at or below the limit, or, in the
    ready-temperature mode, until the oil has cooled to the ready temperature. None if impossible."""
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

    longest = 8.0 * time_constant_s(scenario)
    if not np.isfinite(longest):
        return 0.0 if passes(np.array([0.0]))[0] else None
    extra = batched_threshold(passes, 1.0, longest, floor=0.0)
    return None if np.isnan(extra) else extra
