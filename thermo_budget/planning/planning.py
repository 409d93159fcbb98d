"""The planning answers: pulls before the limit, sustainability, minimum wait, cooler and reservoir
sizes, and the ready-to-pull schedule. Every search runs its candidates as one vectorised batch."""
from __future__ import annotations

from dataclasses import fields

import numpy as np

from ..engine.long_session import integrate_session
from ..physics.network import N_NODES, Rig, cooling_time_constant_s
from ..engine.outcome import first_crossing_s, limiting_peak_K, pulls_completed_under
from ..inputs.scenario import Scenario, limit_K
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION, Step
from ..engine.solver import integrate

MAX_PULLS = 2000           # runs-before-limit search gives up beyond this many pulls (far beyond a day)
NEWTON_TOL_K = 1e-6
NEWTON_ITERATIONS = 12
# From this many runs of the cycle in one batch, Broyden updates replace the later Jacobians
# (periodic_state); below it a batch's cost is mostly per call.
BROYDEN_FROM_DESIGNS = 500
GRID_POINTS = 24           # candidates per round of a batched search
GRID_ROUNDS = 3
# Sizing searches keep the peak this far below the limit, so that a re-run at any of the package's
# resolutions (which agree with a tight reference to about 0.03 K) still finishes under it.
SEARCH_MARGIN_K = 0.05


def limits_K(scenario: Scenario) -> tuple[float, float | None]:
    """(the bulk oil's limit, the return line's limit or None), K: what every search holds to."""
    return limit_K(scenario)[0], scenario.return_line_max_temperature_K


def take_designs(rig: Rig, index) -> Rig:
    """The rig restricted (or repeated) to the designs in `index`; scalar fields are shared."""
    changes = {}
    for field in fields(rig):
        value = getattr(rig, field.name)
        if isinstance(value, np.ndarray) and value.ndim == 1 and value.size > 1:
            changes[field.name] = value[index]
    return rig.with_changes(**changes)


def _wait_durations(cycle: list[Step], repeat: int, wait_s) -> list:
    """Per-step durations of the session with every wait replaced by wait_s ((N,) or float)."""
    per_cycle = [wait_s if not step.is_pull else step.duration_s for step in cycle]
    return per_cycle * repeat


def session_trace(scenario: Scenario, rig: Rig, n: int, wait_s=None):
    """The planned session for n designs at the planning resolution (a Trace)."""
    durations = None if wait_s is None else _wait_durations(list(scenario.cycle), scenario.repeat, wait_s)
    return integrate_session(rig, scenario, scenario.start_K, n_designs=n, durations_s=durations,
                             resolution=PLAN_RESOLUTION)


def finishes_under_limit(scenario: Scenario, rig: Rig, n: int, wait_s=None) -> np.ndarray:
    """Whether the planned session of each of n designs finishes with its peak (the limiting one,
    as session_outcome's) at least SEARCH_MARGIN_K under the limit: what the sizing searches ask.
    A design is followed only until that is decided (long_session.integrate_session's `decided`)."""
    limits = limits_K(scenario)
    threshold = limits[0] - SEARCH_MARGIN_K
    durations = None if wait_s is None else _wait_durations(list(scenario.cycle), scenario.repeat, wait_s)
    trace = integrate_session(rig, scenario, scenario.start_K, n_designs=n, durations_s=durations,
                              resolution=PLAN_RESOLUTION,
                              decided=lambda piece: limiting_peak_K(piece, *limits) > threshold)
    return limiting_peak_K(trace, *limits) <= threshold


def session_outcome(scenario: Scenario, rig: Rig, n: int, wait_s=None, trace=None):
    """Integrate the planned session for n designs (or take `trace`, a session_trace already
    computed). Returns (peak K (N,), pulls under the limits (N,)). The peak is the bulk oil's,
    or where a return-line limit is set, outcome.limiting_peak_K: at or under the bulk limit
    exactly when neither oil passes its limit."""
    trace = session_trace(scenario, rig, n, wait_s) if trace is None else trace
    limits = limits_K(scenario)
    return limiting_peak_K(trace, *limits), pulls_completed_under(trace, *limits)


def _cycle_end(scenario, rig, X, wait_s=None):
    durations = None if wait_s is None else _wait_durations(list(scenario.cycle), 1, wait_s)
    trace = integrate(rig, list(scenario.cycle), X, n_designs=X.shape[0], durations_s=durations,
                      resolution=PLAN_RESOLUTION)
    return trace.final_K, limiting_peak_K(trace, *limits_K(scenario))


def _has_loss_path(rig: Rig) -> np.ndarray:
    cooler = np.asarray(rig.cooler_W_K) > 0
    passive = ((np.asarray(rig.convection_multiplier) > 0) | (np.asarray(rig.wall_emissivity) > 0)
               | (np.asarray(rig.hardware_emissivity) > 0))
    return np.asarray(cooler | passive)


def periodic_state(scenario: Scenario, rig: Rig, n: int, wait_s=None, X0=None):
    """The cycle's periodic steady state, by Newton iteration on the one-cycle map, for the designs
    not yet converged. The Jacobian is by finite differences (all designs and perturbations in one
    batch); on a large batch (BROYDEN_FROM_DESIGNS or more runs of the cycle) only the first one, and
    then Broyden's update (Dennis and Schnabel, Numerical Methods for Unconstrained Optimization and
    Nonlinear Equations, 1983, ch. 8), which runs the cycle once per design instead of k + 1 times.
    The map is nearly affine, so the first Jacobian is nearly exact and a few updates finish it; on
    a small batch the cost is per call, not per design, so full Newton steps are cheaper there.

    Returns (state at cycle start (N,k) K, peak oil over the periodic cycle (N,) K, converged (N,)).
    The peak is that of the cycle run from the returned state, which is periodic to NEWTON_TOL_K
    (the bulk peak, or outcome.limiting_peak_K where a return-line limit is set).
    """
    k = N_NODES
    copies = k + 1                      # the state itself and one perturbation per node
    X = np.array(np.broadcast_to(scenario.start_K if X0 is None else X0, (n, k)), dtype=float)
    waits = None if wait_s is None else np.broadcast_to(np.asarray(wait_s, dtype=float), (n,))
    eye = np.eye(k)
    broyden = n * copies >= BROYDEN_FROM_DESIGNS
    residual = np.full((n, k), np.inf)
    peak = np.full(n, np.nan)
    B = np.empty((n, k, k))             # d residual / d X
    converged = np.zeros(n, bool)
    for iteration in range(NEWTON_ITERATIONS):
        active = np.flatnonzero(~converged)
        if iteration > 0:
            active = active[np.all(np.isfinite(residual[active]), axis=1)]
            if not active.size:
                break
            step = np.linalg.solve(B[active] + 1e-12 * eye, -residual[active][..., None])[..., 0]
            X_new = np.clip(X[active] + step, 150.0, 1500.0)
        else:
            X_new = X[active]
        waits_active = None if waits is None else waits[active]
        if iteration == 0 or not broyden:
            r_new, peak_new, B[active] = _residual_and_jacobian(scenario, rig, active, X_new, waits_active)
        else:
            F_new, peak_new = _cycle_end(scenario, take_designs(rig, active), X_new, waits_active)
            r_new = F_new - X_new
            dx, dr = X_new - X[active], r_new - residual[active]
            Bdx = (B[active] @ dx[..., None])[..., 0]
            B[active] += (dr - Bdx)[:, :, None] * dx[:, None, :] / np.maximum(
                np.sum(dx * dx, axis=1), 1e-300)[:, None, None]
        X[active], residual[active], peak[active] = X_new, r_new, peak_new
        converged[active] = np.max(np.abs(r_new), axis=1) < NEWTON_TOL_K
        if converged.all():
            break
    ok = converged & _has_loss_path(rig) & np.all(np.isfinite(X), axis=1)
    return X, peak, ok


def _residual_and_jacobian(scenario, rig, index, X, waits, delta_K=0.01):
    """The one-cycle residual F(X) - X (m,k), the peak of the cycle from X (m,), and the residual's
    Jacobian by forward differences (m,k,k), for the designs in index, in one batch."""
    k = X.shape[1]
    copies = k + 1
    Xc = np.repeat(X, copies, axis=0)
    for i in range(k):
        Xc[i + 1::copies, i] += delta_K
    Fc, peak_c = _cycle_end(scenario, take_designs(rig, np.repeat(index, copies)), Xc,
                            None if waits is None else np.repeat(waits, copies))
    F = Fc[0::copies]
    J = np.stack([(Fc[i + 1::copies] - F) / delta_K for i in range(k)], axis=-1) - np.eye(k)
    return F - X, peak_c[0::copies], J


def sustainability(scenario: Scenario, rig: Rig, n: int, wait_s=None, margin_K: float = 0.0, X0=None,
                   states: list | None = None):
    """(sustainable (N,) bool, periodic peak (N,) K). Sustainable: the periodic state exists and its
    peak stays at or below the limit, and the way there from the start stays below it too.
    X0 : optional first guess of the periodic states (N,k) K (periodic_state); states : optional list
    to which (the periodic states (N,k) K, converged (N,) bool) is appended.

    The network is cooperative (every coupling pushes temperatures together), so a start no warmer
    than the periodic state, node by node, approaches it from below and never peaks above it; only
    designs that start warmer than their periodic state need the planned session checked as well.
    """
    limit, _ = limit_K(scenario)
    X, peak, ok = periodic_state(scenario, rig, n, wait_s, X0=X0)
    if states is not None:
        states.append((X, ok))
    ok = ok & (peak <= limit - margin_K)
    warmer = ok & np.any(scenario.start_K > X + 1e-9, axis=1)
    if warmer.any():
        index = np.flatnonzero(warmer)
        waits = None if wait_s is None else np.broadcast_to(wait_s, (n,))[index]
        session_peak, _ = session_outcome(scenario, take_designs(rig, index), index.size, waits)
        ok[index] &= session_peak <= limit - margin_K
    return ok, peak


def runs_before_limit(scenario: Scenario, rig: Rig, n: int, sustainable: np.ndarray, max_pulls: int = MAX_PULLS,
                      session=None, enough: int | None = None, resume=None, state_out: dict | None = None):
    """Pulls completed under the limit when the cycle repeats from the start until a pull crosses it.
    Returns (N,) float: the count, NaN where sustainable or where no crossing came within max_pulls.

    Two chunks: the planned session (or `session`, a session_trace of the same rig and designs),
    then the cycles that remain up to max_pulls, integrated only until every design still counted
    has crossed the limit, or (enough) until that many designs in all have: the designs counted
    are then the `enough` earliest to cross, and the others stay NaN.

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
            cycles = -(-(max_pulls - done_pulls) // pulls_per_cycle)
            trace = integrate(take_designs(rig, active), list(scenario.cycle) * cycles, X[active],
                              n_designs=active.size, resolution=PLAN_RESOLUTION, stop_above_K=stop_K,
                              stop_count=None if enough is None else enough - counted)
        under = pulls_completed_under(trace, limit, return_limit)
        # a design that crossed in the chunk's last wait has completed all its pulls in it; a trace
        # that stopped early (stop_count) has enough designs crossed, so the loop ends after it
        crossed = ~np.isnan(first_crossing_s(trace, limit, return_limit))
        runs[active[crossed]] = done_pulls + under[crossed]
        X[active] = trace.final_K
        done_pulls += cycles * pulls_per_cycle
        active = active[~crossed]
    if state_out is not None:
        state_out.update(state=X, pulls=done_pulls)
    return runs


def batched_threshold(passes, low: float, high: float, floor: float | None = 0.0) -> float:
    """Smallest x for which passes(x_array) is True, assuming it is monotone (False then True).

    `floor` (if not None) is tried alone first and returned if it passes. Then the first batch spaces
    GRID_POINTS candidates geometrically over [low, high]; each later batch spaces GRID_POINTS
    candidates linearly inside the bracket found. Returns NaN if no candidate passes, else the upper
    end of the final bracket (a value that passes)."""
    if floor is not None and passes(np.array([floor]))[0]:
        return float(floor)
    grid = np.geomspace(low, high, GRID_POINTS)
    answer, lower = float("nan"), 0.0   # lower: the largest value known to fail (0 if low passes)
    for _ in range(GRID_ROUNDS):
        ok = passes(grid)
        if not ok.any():
            return answer
        first = int(np.argmax(ok))
        answer = float(grid[first])
        lower = float(grid[first - 1]) if first else lower
        grid = np.linspace(lower, answer, GRID_POINTS + 1)[1:]
    return answer


def round_up(value: float, digits: int) -> float:
    """Round up to `digits` decimals, so that a rounded sizing answer still passes (the searches are
    monotone). A value a float's noise above a round figure (1e-9 of the last digit) stays on it."""
    return float(np.ceil(value * 10**digits - 1e-9) / 10**digits) + 0.0   # + 0.0: never -0.0


def time_constant_s(scenario: Scenario) -> float:
    """Whole-rig cooling time constant with the engine off, no cooler, at the limit: C / UA, s."""
    limit, _ = limit_K(scenario)
    return cooling_time_constant_s(build_rig(scenario), limit)


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

    tau = time_constant_s(scenario)
    wait = batched_threshold(passes, 1.0, 8.0 * tau if np.isfinite(tau) else 1e6, floor=0.0)
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

    peak_power = max(step.peak_power_W() for step in scenario.cycle)
    largest = 20.0 * peak_power / (limit - scenario.ambient_K)
    cooler = batched_threshold(passes, 1e-5 * largest, largest, floor=0.0)
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

    volume = batched_threshold(passes, 0.02 * V0, 200.0 * V0, floor=None)
    if np.isnan(volume):
        notes.append(("no_oil_volume_suffices", {"largest_L": 200 * V0 * 1000}))
        return None
    return round_up(volume * 1000.0, 4)
