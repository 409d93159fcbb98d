"""The forecast from an estimated present state: when the next planned pull may start, how many
pulls still fit at the planned cadence, and whether a running pull will cross the limit.

Each answer is one integration (or one batched search) of the planned steps from the estimated
state, with the planning answers' own search (`ready_schedule.extra_wait_s`, the same margin below the
limit), so a forecast agrees with `run` started from the same state.

An unmodelled heat flow into the oil that the estimate has found (W, state_estimate) is carried
into the next pull's ready time when it adds heat: its effect is the oil's linear response to it
over the wait (its last DISTURBANCE_HORIZON_S at most) and the pull. A flow that takes heat out is left out (the safe side). It is not
carried into pulls_left: a missing thermal mass gives back only the heat it holds, not a steady
flow all day.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..physics.network import OIL, Rig
from ..planning.bands import order_statistic
from ..engine.outcome import first_crossing_s, limiting_peak_K, pulls_completed_under
from ..planning.planning import batched_threshold, time_constant_s
from ..planning.session_runs import SEARCH_MARGIN_K
from ..physics.rig import take_designs
from ..planning.ready_schedule import extra_wait_s
from ..inputs.scenario import Scenario
from ..engine.session import Resolution, Step
from ..engine.solver import integrate
from .state_estimate import transition_matrix
from ..inputs.uncertainty import factor_values, sample_rig, standard_normals

LIVE_MAX_PULLS = 200          # pulls_left counts this far; beyond, the cadence is taken as all-day
PULL_HORIZON_S = 600.0        # a running pull is followed this far past its planned end for seconds_to_limit
PULL_RESOLUTION = Resolution(pull_substeps=4, curve_substeps=12, max_substep_s=5.0, max_substeps=400)
# Past its planned end a running pull is followed in steps of a minute, two sub-steps each, until
# the oil crosses the limit (the crossing is interpolated between them; the oil rises about linearly).
HORIZON_STEP_S = 60.0
HORIZON_RESOLUTION = Resolution(pull_substeps=2, curve_substeps=4, max_substep_s=30.0, max_substeps=4)
CADENCE_RESOLUTION = Resolution(pull_substeps=1, curve_substeps=8, max_substep_s=120.0, max_substeps=6)
OFF = Step(kind="wait", duration_s=1.0, engine="off")
# An unmodelled heat flow is taken to act over at most this much of the wait before the next pull
# (engineering judgement: a missing mass gives back the heat it holds within minutes, not all day).
DISTURBANCE_HORIZON_S = 600.0
SHOWN_PULLS = 3               # pulls of the forecast path drawn after the ready time
CONFIDENCE_SAMPLES = 32       # rigs drawn from the scenario's [uncertainty] for the answers at its confidence
PULL_CHUNK = 20               # pulls integrated at a time when counting the pulls left


@dataclass(frozen=True)
class Forecast:
    """What the present state means for the plan. Times are log times (s), temperatures K.

    next_pull_ready_s, wait_s : when the next planned pull may start and still end under the
        limit, and the seconds from now until then, in every state (through the rest of a running
        pull; over the limit, the cooling after which the next pull ends at the limit); None when
        no wait is long enough. pulls_left : pulls that still start and end under the limit along
        the rest of the planned day: the next at its ready time (or its planned time, if later),
        then the planned pulls and waits (None: more than LIVE_MAX_PULLS, the cadence can go on).
    pull_ends_over_limit, seconds_to_limit : for a running pull (False and None otherwise);
        seconds_to_limit counts to the moment the oil would reach the limit if the pull went on
        at its power (None if not within PULL_HORIZON_S past its planned end).
    path_time_s, path_oil_K : the forecast oil temperature: the rest of a running pull, the wait
        until ready, the next pull and the cadence after it.
    """
    next_pull_ready_s: float | None
    wait_s: float | None
    pulls_left: int | None
    pull_ends_over_limit: bool
    seconds_to_limit: float | None
    next_pull_index: int
    path_time_s: np.ndarray
    path_oil_K: np.ndarray


def planned_pull(scenario: Scenario, index: int) -> tuple[Step, list[Step]]:
    """The index-th pull of the cadence (0 = the session's first) and the waits planned before it.
    Past the planned session the cycle goes on repeating."""
    cycle = list(scenario.cycle)
    where = [j for j, step in enumerate(cycle) if step.is_pull]
    if not where:
        raise ValueError("the cycle has no pull")
    j = where[index % len(where)]
    if index == 0:
        return cycle[j], cycle[:j]
    before = where[(index - 1) % len(where)]
    return cycle[j], (cycle[before + 1:j] if j > before else cycle[before + 1:] + cycle[:j])


def cadence_steps(scenario: Scenario, first_index: int, n_pulls: int) -> list[Step]:
    """The planned pulls first_index .. first_index + n_pulls - 1 with the waits between them (the
    waits before the first are left out)."""
    steps = [planned_pull(scenario, first_index)[0]]
    for index in range(first_index + 1, first_index + n_pulls):
        pull, waits = planned_pull(scenario, index)
        steps += waits + [pull]
    return steps


def _run(rig: Rig, steps: list[Step], X_K: np.ndarray, t0: float, resolution: Resolution, stop_above_K=None):
    return integrate(rig, steps, X_K[None, :], start_time_s=t0, resolution=resolution, stop_above_K=stop_above_K)


def count_pulls(scenario: Scenario, rigs: Rig, n: int, limit_K: float, X_K: np.ndarray, next_index: int,
                max_pulls: int = LIVE_MAX_PULLS, enough: int | None = None):
    """Pulls each of n designs still completes under the limit at the planned cadence from states
    X_K (n, k), taken at the start of pull `next_index`. Returns ((n,) counts, inf beyond
    max_pulls; the trace of the first PULL_CHUNK pulls).

    The cadence is integrated PULL_CHUNK pulls at a time, each design until it crosses the limit.
    It stops early once `enough` designs have crossed (the others then count as inf: a lower
    quantile needs only the smallest counts), and once the designs still going have settled into
    a repeating cycle: the state at a chunk's end moved less than at the one before, by a ratio r,
    and the peak plus the rest of that geometric approach (change r / (1 - r)) stays under the
    limit by the planning margin."""
    per_cycle = sum(step.is_pull for step in scenario.cycle)
    chunk = per_cycle * int(np.ceil(PULL_CHUNK / per_cycle))
    counts, X = np.full(n, np.nan), np.array(X_K, dtype=float, copy=True)
    done, first, last_change = 0, None, None
    while done < max_pulls:
        active = np.flatnonzero(np.isnan(counts))
        size = min(chunk, max_pulls - done)
        steps = ([] if done == 0 else planned_pull(scenario, next_index + done)[1]) + cadence_steps(
            scenario, next_index + done, size)
        trace = integrate(take_designs(rigs, active), steps, X[active], n_designs=active.size,
                          resolution=CADENCE_RESOLUTION, stop_above_K=limit_K)
        first = trace if first is None else first
        under = pulls_completed_under(trace, limit_K)
        crossed = ~np.isnan(first_crossing_s(trace, limit_K))
        counts[active[crossed]] = done + under[crossed]
        change = float(np.max(np.abs(trace.final_K[~crossed] - X[active[~crossed]]))) if (~crossed).any() else 0.0
        X[active] = trace.final_K
        done += size
        going = np.isnan(counts)
        if not going.any() or (enough is not None and np.count_nonzero(~going) >= enough):
            break
        if last_change is not None and size == chunk and change < last_change:
            r = change / last_change
            peak = float(trace.T_K[:, ~crossed, OIL].max())
            if peak + change * r / (1.0 - r) < limit_K - SEARCH_MARGIN_K:
                break
        last_change = change if size == chunk else None
    counts[np.isnan(counts)] = np.inf
    counts[counts >= max_pulls] = np.inf
    return counts, first


def pulls_left(scenario: Scenario, rig: Rig, limit_K: float, X_K: np.ndarray, next_index: int,
               max_pulls: int = LIVE_MAX_PULLS):
    """Pulls that still fit under the limit at the planned cadence from state X_K, taken at the
    start of pull `next_index`: the planned pulls and waits from it on. Returns (count or None
    beyond max_pulls, the trace of the first pulls, its time from 0)."""
    counts, trace = count_pulls(scenario, rig, 1, limit_K, np.asarray(X_K, dtype=float)[None, :], next_index, max_pulls)
    return (None if not np.isfinite(counts[0]) else int(counts[0])), trace


def ready_extra_s(scenario: Scenario, rig: Rig, X_K: np.ndarray, pull: Step, cool: Step, limit_K: float,
                  disturbance_W: float = 0.0, rigs: Rig | None = None, n: int = 1,
                  confidence: float = 1.0) -> float | None:
    """Wait (s) in the `cool` engine state before `pull` so that it ends under the limit, from state
    X_K (k,). From a state under the limit, with no added heat flow and no samples, this is the
    planning search itself. Otherwise the same batched search over the pull's own points (the oil
    may start over the limit: it then cools first), each candidate run for each of the n sampled
    `rigs` (or `rig` alone), passing when a fraction `confidence` of them end under the limit with
    the oil's linear response to `disturbance_W` (from `rig`) added to their peaks."""
    X = np.asarray(X_K, dtype=float)[None, :]
    if disturbance_W <= 0.0 and rigs is None and X[0, OIL] <= limit_K - SEARCH_MARGIN_K:
        return extra_wait_s(scenario, rig, X, pull, cool, limit_K)
    rigs, k = (rig, 1) if rigs is None else (rigs, n)
    nodes = X.shape[1]
    pulled = transition_matrix(rig, X[0], X[0], pull) if disturbance_W > 0 else None
    ready_K, return_limit = scenario.ready_temperature_K, scenario.return_line_max_temperature_K

    def rise_K(extra: float) -> float:
        """The oil's response at the pull's end to the heat flow over the wait (its last
        DISTURBANCE_HORIZON_S at most) and the pull."""
        waited = transition_matrix(rig, X[0], X[0], cool.with_duration(min(extra, DISTURBANCE_HORIZON_S)))
        return float((pulled[:nodes, :nodes] @ waited[:nodes, nodes] + pulled[:nodes, nodes])[OIL]) * disturbance_W

    def passes(extras):
        c = extras.size
        trace = integrate(take_designs(rigs, np.tile(np.arange(k), c)), [cool, pull], np.repeat(X, c * k, axis=0),
                          n_designs=c * k, durations_s=[np.repeat(extras, k), pull.duration_s],
                          resolution=CADENCE_RESOLUTION)
        waited, pulled = trace.step_index == 0, trace.step_index == 1
        during = replace(trace, T_K=trace.T_K[pulled], return_K=trace.return_K[pulled])
        rise = np.array([rise_K(float(e)) for e in extras]) if disturbance_W > 0 else np.zeros(c)
        peak = limiting_peak_K(during, limit_K, return_limit).reshape(c, k) + rise[:, None]
        ok = peak <= limit_K - SEARCH_MARGIN_K
        if ready_K is not None:
            ok &= (trace.T_K[waited][-1][:, OIL] <= ready_K + 1e-9).reshape(c, k)
        return ok.mean(axis=1) >= confidence - 1e-9

    longest = 8.0 * time_constant_s(scenario)
    extra = batched_threshold(passes, 1.0, longest if np.isfinite(longest) else 1e6, floor=0.0)
    return None if np.isnan(extra) else extra


def sampled_rigs(scenario: Scenario, rig: Rig, n: int = CONFIDENCE_SAMPLES) -> Rig | None:
    """n rigs (one design each) drawn from the scenario's uncertainty model about `rig`, the same
    scrambled Sobol points as the planning band; None when the band is off."""
    model = scenario.uncertainty
    if not model.spreads:
        return None
    return sample_rig(rig, factor_values(model, standard_normals(model, n)))


def pulls_left_at_confidence(scenario: Scenario, rigs: Rig, n: int, limit_K: float, X_K, next_index: int,
                             wait: Step | None, confidence: float, max_pulls: int = LIVE_MAX_PULLS):
    """The pull count that at least a fraction `confidence` of the sampled rigs reach after `wait`
    (if any) from state X_K (the lower quantile of their counts); None when that many go beyond
    max_pulls. A rig counts from the end of the wait, as `pulls_left` does."""
    X = np.repeat(np.asarray(X_K, dtype=float)[None, :], n, axis=0)
    if wait is not None:
        X = integrate(rigs, [wait], X, n_designs=n, resolution=CADENCE_RESOLUTION).final_K
    q = 1.0 - confidence
    enough = max(int(np.ceil(q * n)), 1)              # the order statistic's rank (bands.order_statistic)
    counts, _ = count_pulls(scenario, rigs, n, limit_K, X, next_index, max_pulls, enough)
    value = order_statistic(counts, q)                 # as the planning band reads its quantiles
    return None if not np.isfinite(value) else int(value)


def _rest_of_pull(rig: Rig, pull: Step, remaining_s: float, X: np.ndarray, now_s: float, limit_K: float):
    """A running pull: (its trace to its planned end or None, the seconds from now until the oil
    would reach the limit if the pull went on at its power (None beyond PULL_HORIZON_S past its
    end))."""
    rest, crossing = None, float("nan")
    if remaining_s > 0:
        rest = _run(rig, [pull.with_duration(remaining_s)], X, now_s, PULL_RESOLUTION)
        crossing = float(first_crossing_s(rest, limit_K)[0])
        X = rest.final_K[0]
    if np.isnan(crossing):
        steps = [pull.with_duration(HORIZON_STEP_S)] * int(np.ceil(PULL_HORIZON_S / HORIZON_STEP_S))
        ahead = _run(rig, steps, X, now_s + remaining_s, HORIZON_RESOLUTION, stop_above_K=limit_K)
        crossing = float(first_crossing_s(ahead, limit_K)[0])
    return rest, (None if np.isnan(crossing) else round(crossing - now_s, 1))


def forecast(scenario: Scenario, rig: Rig, limit_K: float, X_K: np.ndarray, now_s: float, next_index: int,
             in_pull: bool, pull_elapsed_s: float = 0.0, since_pull_end_s: float = 0.0,
             disturbance_W: float = 0.0, confidence: float | None = None) -> Forecast:
    """The forecast from the estimated state X_K (n,) K at log time now_s, in every state: waiting,
    pulling, or over the limit.

    next_index : the cadence's index of the next pull to start (pulls already started in the log).
    in_pull : a pull runs now, started pull_elapsed_s ago (it is pull next_index - 1); the ready
    time then counts from now, through the rest of the pull. Otherwise the last pull ended
    since_pull_end_s ago (or the log started then).
    Over the limit, the ready time is the wait after which the next planned pull ends at the limit
    (less the planning margin). pulls_left follows the rest of the planned day: the next pull at
    its ready time (or at its planned time, if later), then the planned pulls and waits.
    disturbance_W : the estimate's unmodelled heat flow into the oil (see the module's docstring).
    confidence : None for the scenario's model as written; else the ready time and the pulls left
    hold in that fraction of rigs drawn from the scenario's [uncertainty] (the later ready time and
    the smaller count of the two answers are given).
    """
    X = np.asarray(X_K, dtype=float)
    t = now_s
    ends_over, to_limit = False, None
    path_t, path_T = [np.array([now_s])], [np.array([X[OIL]])]
    if in_pull:
        current, _ = planned_pull(scenario, max(next_index - 1, 0))
        remaining = max(current.duration_s - pull_elapsed_s, 0.0)
        rest, to_limit = _rest_of_pull(rig, current, remaining, X, now_s, limit_K)
        ends_over = to_limit is not None and to_limit <= remaining
        if rest is not None:
            path_t.append(rest.time_s[1:, 0])
            path_T.append(rest.T_K[1:, 0, OIL])
            X, t = rest.final_K[0], now_s + remaining
        since_pull_end_s = 0.0
    pull, waits = planned_pull(scenario, next_index)
    cool = waits[-1] if waits else OFF
    extra = ready_extra_s(scenario, rig, X, pull, cool, limit_K, disturbance_W)
    rigs = None if confidence is None else sampled_rigs(scenario, rig)
    if rigs is not None and extra is not None:
        sure = ready_extra_s(scenario, rig, X, pull, cool, limit_K, disturbance_W, rigs, CONFIDENCE_SAMPLES, confidence)
        extra = None if sure is None else max(extra, sure)
    planned_rest = max(sum(w.duration_s for w in waits) - since_pull_end_s, 0.0)
    wait = planned_rest if extra is None else max(planned_rest, extra)
    wait_step = cool.with_duration(wait) if wait > 0 else None
    if wait_step is not None:
        waited = _run(rig, [wait_step], X, t, CADENCE_RESOLUTION)
        path_t.append(waited.time_s[1:, 0])
        path_T.append(waited.T_K[1:, 0, OIL])
        X_ready = waited.final_K[0]
    else:
        X_ready = X
    left, cadence = pulls_left(scenario, rig, limit_K, X_ready, next_index)
    if rigs is not None:
        sure_left = pulls_left_at_confidence(scenario, rigs, CONFIDENCE_SAMPLES, limit_K, X, next_index,
                                             wait_step, confidence)
        left = sure_left if left is None else (left if sure_left is None else min(left, sure_left))
    shown_until = cadence.pull_end_s[min(SHOWN_PULLS, cadence.pull_end_s.shape[0]) - 1, 0] if cadence.pull_end_s.size else 0.0
    shown = cadence.time_s[1:, 0] <= shown_until + 1e-9
    path_t.append(cadence.time_s[1:, 0][shown] + t + wait)
    path_T.append(cadence.T_K[1:, 0, OIL][shown])
    ready = None if extra is None else t + extra
    return Forecast(next_pull_ready_s=None if ready is None else round(ready, 1),
                    wait_s=None if ready is None else round(max(ready - now_s, 0.0), 1),
                    pulls_left=left, pull_ends_over_limit=bool(ends_over), seconds_to_limit=to_limit,
                    next_pull_index=next_index, path_time_s=np.concatenate(path_t),
                    path_oil_K=np.concatenate(path_T))
