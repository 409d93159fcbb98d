"""The planning answers: pulls before the limit, minimum wait, cooler and reservoir sizes. Every
search runs its candidates as one vectorised batch (the runs themselves: session_runs.py)."""
from __future__ import annotations

import numpy as np

from ..physics.network import N_NODES, Rig, cooling_time_constant_s
from ..engine.outcome import first_crossing_s, pulls_completed_under
from ..inputs.scenario import Scenario, limit_K
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION
from ..engine.solver import integrate, take_systems
from .session_runs import (SEARCH_MARGIN_K, cycle_durations, finishes_under_limit, limits_K, session_peak_K,
                           sustainability)
from ..physics.rig import take_designs
from ..units import round_up

MAX_PULLS = 2000           # runs-before-limit search gives up beyond this many pulls (far beyond a day)
GRID_POINTS = 24           # candidates per round of a batched search
GRID_ROUNDS = 3
COUNT_CHUNK_CYCLES = 20    # runs_before_limit counts on in pieces of this many cycles


def runs_before_limit(scenario: Scenario, rig: Rig, n: int, sustainable: np.ndarray, max_pulls: int = MAX_PULLS,
                      session=None, enough: int | None = None, resume=None, state_out: dict | None = None):
    """Pulls completed under the limit when the cycle repeats from the start until a pull crosses it.
    Returns (N,) float: the count, NaN where sustainable or where no crossing came within max_pulls.

    First the planned session (or `session`, a session_trace of the same rig and designs), then the
    cycles that remain up to max_pulls, COUNT_CHUNK_CYCLES at a time with only the designs not yet
    crossed (each piece starting from the corrector systems the one before left: the pieces are one
    integration), until every design still counted has crossed the limit, or (enough) until that
    many designs in all have: the designs counted are then the `enough` earliest to cross, and the
    others stay NaN. The memory held is one piece's, whatever max_pulls.

    resume : optional (state (N,k) K at a cycle's start, pulls done by then) to count on from, for
    designs none of which has crossed yet; state_out : optional dict that receives that pair
    ("state", "pulls") where the counting ended (at a cycle's start unless it ended on `enough`).
    """
    limit, return_limit = limits_K(scenario)
    stop_K = limit if return_limit is None else min(limit, return_limit)  # over it, a limit is passed
    pulls_per_cycle = sum(step.is_pull for step in scenario.cycle)
    runs = np.full(n, np.nan)
    active = np.flatnonzero(~sustainable)
    X = np.array(np.broadcast_to(scenario.start_K if resume is None else resume[0], (n, N_NODES)), dtype=float)
    done_pulls = 0 if resume is None else int(resume[1])
    systems: dict = {}
    while active.size and done_pulls < max_pulls:
        counted = n - active.size - np.count_nonzero(sustainable)
        if enough is not None and counted >= enough:
            break
        if done_pulls == 0:
            cycles = max(scenario.repeat, 1)
            trace = session.designs(active) if session is not None else integrate(
                take_designs(rig, active), list(scenario.cycle) * cycles, X[active], n_designs=active.size,
                resolution=PLAN_RESOLUTION)
        else:
            cycles = min(-(-(max_pulls - done_pulls) // pulls_per_cycle), COUNT_CHUNK_CYCLES)
            trace = integrate(take_designs(rig, active), list(scenario.cycle) * cycles, X[active],
                              n_designs=active.size, resolution=PLAN_RESOLUTION, stop_above_K=stop_K,
                              stop_count=None if enough is None else enough - counted, systems=systems)
        under = pulls_completed_under(trace, limit, return_limit)
        # a design that crossed in the chunk's last wait has completed all its pulls in it; a trace
        # that stopped early (stop_count) has enough designs crossed, so the loop ends after it
        crossed = ~np.isnan(first_crossing_s(trace, limit, return_limit))
        runs[active[crossed]] = done_pulls + under[crossed]
        X[active] = trace.final_K
        done_pulls += cycles * pulls_per_cycle
        active = active[~crossed]
        systems = take_systems(systems, np.flatnonzero(~crossed))
    if state_out is not None:
        state_out.update(state=X, pulls=done_pulls)
    return runs


# How a search steps in the value it sizes: in x, in ln x (an oil volume: the peak moves with its
# ratio), or in -1/x (a wait: over waits short against the rig's time constant the heat a cycle
# leaves behind goes as 1/wait, so the margin is nearly straight in it).
LINEAR, LOG, RECIPROCAL = 0, 1, 2


def to_coordinate(x, kind):
    """The search coordinate of x (> 0 for LOG and RECIPROCAL; kind per element or one)."""
    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(kind == LOG, np.log(np.maximum(x, 1e-300)),
                        np.where(kind == RECIPROCAL, -1.0 / np.maximum(x, 1e-300), x))


def from_coordinate(u, kind):
    """The value whose search coordinate is u (to_coordinate's inverse)."""
    u = np.asarray(u, dtype=float)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        return np.where(kind == LOG, np.exp(u), np.where(kind == RECIPROCAL, -1.0 / u, u))


def batched_threshold(passes, low: float, high: float, floor: float | None = 0.0, margin=None,
                      coordinate: int = LINEAR) -> float:
    """Smallest x for which passes(x_array) is True, assuming it is monotone (False then True).

    `floor` (if not None) is tried alone first and returned if it passes. Then the first batch spaces
    GRID_POINTS candidates geometrically over [low, high]; each later batch spaces GRID_POINTS
    candidates linearly inside the bracket found. Returns NaN if no candidate passes, else the upper
    end of the final bracket (a value that passes).

    margin : optional; margin(x_array) (K, target - peak, >= 0 where x passes, increasing in x).
    Given it, the bracket of the first batch is narrowed by its values instead (refined_threshold,
    stepping in `coordinate`), to the same width or a margin of REFINE_TOLERANCE_K, in a few
    candidates."""
    if floor is not None and passes(np.array([floor]))[0]:
        return float(floor)
    grid = np.geomspace(low, high, GRID_POINTS)
    answer, lower = float("nan"), 0.0   # lower: the largest value known to fail (0 if low passes)
    for round_ in range(GRID_ROUNDS):
        ok = passes(grid)
        if not ok.any():
            return answer
        first = int(np.argmax(ok))
        answer = float(grid[first])
        lower = float(grid[first - 1]) if first else lower
        if margin is not None and round_ == 0 and first:
            return refined_threshold(margin, lower, answer, coordinate)
        grid = np.linspace(lower, answer, GRID_POINTS + 1)[1:]
    return answer


# Where the margins narrow the first batch's bracket (refined_threshold): its final width, about
# the grid's (two linear rounds of GRID_POINTS inside a geometric step of the first: 0.085 %), or a
# passing value whose peak lies within REFINE_TOLERANCE_K under the target.
REFINE_RELATIVE = 1e-3
REFINE_TOLERANCE_K = 0.005
REFINE_ROUNDS = 4
REFINE_INSIDE = 0.25 * REFINE_RELATIVE      # a candidate is kept this far (relative) inside the bracket
# Two candidates' margins closer than this are not trusted for a slope: a long day's peak is had to
# about 1e-3 K (long_session.PERIODIC_TOLERANCE_K, cycle_jump.JUMP_TOLERANCE_K).
SLOPE_NOISE_K = 4e-3


def refined_threshold(margin, lower: float, upper: float, coordinate: int = LINEAR) -> float:
    """The smallest x found to pass (margin(x) >= 0, K) inside [lower, upper], lower failing and upper
    passing (batched_threshold's first bracket). Each round is one batch of two candidates: regula
    falsi between the bracket's ends (or, where the last round's two fell on one side, the secant
    through them), aimed at half REFINE_TOLERANCE_K of margin and kept inside the bracket, and a
    second REFINE_RELATIVE below it; where the first is that close to the root the two bracket it
    and the search ends. Ends when a candidate passes within REFINE_TOLERANCE_K of the
    target or the bracket is REFINE_RELATIVE wide, after REFINE_ROUNDS rounds at most, on the
    bracket's passing end (a value that passes)."""
    def u(x):
        return float(to_coordinate(x, coordinate))

    def x_of(v):
        return float(from_coordinate(v, coordinate))

    lo, hi = lower, upper
    m_lo, m_hi = margin(np.array([lo, hi]))
    if m_lo >= 0.0:          # the peaks agree with the pass or fail to about 1e-3 K: take the lower end
        return float(lo)
    weight = {"lo": 1.0, "hi": 1.0}     # the Illinois rule: an end kept twice counts half as much
    kept, pair = None, None
    aim = 0.5 * REFINE_TOLERANCE_K
    for _ in range(REFINE_ROUNDS):
        if m_hi <= REFINE_TOLERANCE_K or hi - lo <= REFINE_RELATIVE * hi:
            break
        width = u(hi) - u(lo)
        a, b = weight["lo"] * m_lo, weight["hi"] * m_hi
        aimed = u(hi) - (b - aim) * width / (b - a)
        if pair is not None:     # the last round's two, on one side: their own slope, not the chord's
            (x1, m1), (x2, m2) = pair
            if (m1 >= 0) == (m2 >= 0) and abs(m1 - m2) > SLOPE_NOISE_K:
                secant = u(x1) - (m1 - aim) * (u(x1) - u(x2)) / (m1 - m2)
                aimed = secant if u(lo) < secant < u(hi) else aimed     # outside the bracket: the chord's
        first = float(np.clip(x_of(aimed) if np.isfinite(aimed) else x_of(u(lo) + 0.5 * width),
                              lo * (1.0 + REFINE_INSIDE), hi * (1.0 - REFINE_INSIDE)))
        x = np.array([first, max(first * (1.0 - REFINE_RELATIVE), 0.5 * (lo + first))])
        m = margin(x)
        pair = ((float(x[0]), float(m[0])), (float(x[1]), float(m[1])))
        moved = set()
        for xi, mi in zip(x, m):
            if mi >= 0.0 and xi < hi:
                hi, m_hi = float(xi), float(mi)
                moved.add("hi")
            elif mi < 0.0 and xi > lo:
                lo, m_lo = float(xi), float(mi)
                moved.add("lo")
        if len(moved) == 1:
            stayed = "lo" if moved == {"hi"} else "hi"
            weight[stayed] = 0.5 * weight[stayed] if kept == stayed else 1.0
            weight[moved.pop()] = 1.0
            kept = stayed
        else:
            weight, kept = {"lo": 1.0, "hi": 1.0}, None
    return float(hi)


def time_constant_s(scenario: Scenario) -> float:
    """Whole-rig cooling time constant with the engine off, no cooler, at the limit: C / UA, s."""
    limit, _ = limit_K(scenario)
    return cooling_time_constant_s(build_rig(scenario), limit)


def _session_margin_K(scenario: Scenario, rig: Rig, n: int, cycle_s=None) -> np.ndarray:
    """Per design, how far the planned session's peak stays under the searches' target (the limit
    less SEARCH_MARGIN_K), K (session_runs.session_peak_K): negative where the peak goes over it."""
    target = limit_K(scenario)[0] - SEARCH_MARGIN_K
    return target - session_peak_K(scenario, rig, n, cycle_s, threshold_K=target)


def _waits_of(scenario: Scenario) -> list[float]:
    return [step.duration_s for step in scenario.cycle if not step.is_pull]


def minimum_wait_s(scenario: Scenario, notes: list) -> float | None:
    """Shortest uniform wait (every wait step) that lets the planned session finish under the limit,
    with no cooler. None where no wait can do it. notes : gets the facts worth a note, as (code,
    values) pairs that report_text.note_words words."""
    if not _waits_of(scenario):
        notes.append(("no_wait_step", {}))
        return None
    rig = build_rig(scenario, cooler_W_K=0.0)

    def passes(waits):
        return finishes_under_limit(scenario, take_designs(rig, np.zeros(waits.size, int)), waits.size, wait_s=waits)

    def margin(waits):
        return _session_margin_K(scenario, take_designs(rig, np.zeros(waits.size, int)), waits.size,
                                 cycle_durations(list(scenario.cycle), waits))

    tau = time_constant_s(scenario)
    wait = batched_threshold(passes, 1.0, 8.0 * tau if np.isfinite(tau) else 1e6, floor=0.0, margin=margin,
                              coordinate=RECIPROCAL)
    if wait == 0.0:
        notes.append(("no_wait_needed", {}))
    elif np.isnan(wait):
        notes.append(("no_wait_suffices", {}))
        return None
    return round_up(wait, 2)


def _warm_start(seen: list, values: np.ndarray):
    """First guesses of the periodic states at the candidate values of a search, node by node
    linear in the value between the converged states of the candidates tried before (None when
    there are fewer than two). Later rounds of a search lie inside the bracket of the earlier ones,
    so Newton starts close to the answer and needs fewer iterations; the answer is the same fixed
    point (converged to NEWTON_TOL_K either way)."""
    if not seen:
        return None
    tried = np.concatenate([v for v, _, _ in seen])
    X = np.concatenate([x for _, x, _ in seen])
    good = np.concatenate([c for _, _, c in seen])
    if np.count_nonzero(good) < 2:
        return None
    order = np.argsort(tried[good])
    tried, X = tried[good][order], X[good][order]
    return np.column_stack([np.interp(values, tried, X[:, j]) for j in range(X.shape[1])])


def required_cooler_W_K(scenario: Scenario, notes: list, sustained: bool) -> float | None:
    """Smallest cooler specific dissipation (W/K) for the planned session (or, sustained=True, for
    the cadence to be sustainable). 0 when none is needed; None when no rating can do it."""
    limit, _ = limit_K(scenario)
    seen: list = []       # (coolers, periodic states, converged) of the candidates tried so far

    def passes(coolers):
        rig = build_rig(scenario, cooler_W_K=coolers)
        if sustained:
            states: list = []
            ok, _ = sustainability(scenario, rig, coolers.size, margin_K=SEARCH_MARGIN_K,
                                   X0=_warm_start(seen, coolers), states=states)
            seen.append((coolers, *states[0]))
            return ok
        return finishes_under_limit(scenario, rig, coolers.size)

    def margin(coolers):
        return _session_margin_K(scenario, build_rig(scenario, cooler_W_K=coolers), coolers.size)

    peak_power = max(step.peak_power_W() for step in scenario.cycle)
    largest = 20.0 * peak_power / (limit - scenario.ambient_K)
    cooler = batched_threshold(passes, 1e-5 * largest, largest, floor=0.0, margin=None if sustained else margin)
    if np.isnan(cooler):
        notes.append(("no_cooler_suffices", {"largest_W_K": largest, "sustained": sustained}))
        return None
    return round_up(cooler, 3)


def minimum_oil_volume_L(scenario: Scenario, notes: list) -> float | None:
    """Smallest oil volume (L at 15 degC) that completes the planned session with no cooler; the tank
    is scaled geometrically (same proportions and fill fraction)."""
    V0 = scenario.reservoir.oil_volume_m3

    def passes(volumes):
        return finishes_under_limit(scenario, build_rig(scenario, oil_volume_m3=volumes, cooler_W_K=0.0), volumes.size)

    def margin(volumes):
        return _session_margin_K(scenario, build_rig(scenario, oil_volume_m3=volumes, cooler_W_K=0.0), volumes.size)

    volume = batched_threshold(passes, 0.02 * V0, 200.0 * V0, floor=None, margin=margin, coordinate=LOG)
    if np.isnan(volume):
        notes.append(("no_oil_volume_suffices", {"largest_L": 200 * V0 * 1000}))
        return None
    return round_up(volume * 1000.0, 4)
