"""The planned session run on a batch of designs: to its end, to a decision (does it finish under
the limit?), or to its periodic state (the cycle repeated for ever)."""
from __future__ import annotations

import numpy as np

from ..engine.cycle_jump import forward_difference_jacobian, perturbed_copies
from ..engine.long_session import LONG_SESSION_CYCLES, integrate_session, session_limiting_peak_K
from ..physics.network import N_NODES, Rig
from ..physics.rig import take_designs
from ..engine.outcome import limiting_peak_K, pulls_completed_under
from ..inputs.scenario import Scenario, limit_K
from ..engine.session import PLAN_RESOLUTION, Step
from ..engine.solver import integrate, substep_groups, take_systems

NEWTON_TOL_K = 1e-6
NEWTON_ITERATIONS = 12
# From this many runs of the cycle in one batch, Broyden updates replace the later Jacobians
# (periodic_state); below it a batch's cost is mostly per call. On the compiled engine a call costs
# less: at 100 (was 500) a 200-pull day's answers took 0.5 s less, the shipped scenarios' reports
# unchanged to 1e-9.
BROYDEN_FROM_DESIGNS = 100
# Sizing searches keep the peak this far below the limit, so that a re-run at any of the package's
# resolutions (which agree with a tight reference to about 0.03 K) still finishes under it.
SEARCH_MARGIN_K = 0.05
# A long session's peak is taken as its periodic cycle's where the session ends periodic to this
# (_proven_under): under the 0.025 K to which the package's resolutions agree with a tight reference.
SETTLED_K = 0.02
# periodic_state's cycle starts from systems left by a run that started this close to its state
# (node by node, K) before a design counts as converged: the session's own periodic cycle.
SYSTEMS_NEAR_K = 1e-3


def limits_K(scenario: Scenario) -> tuple[float, float | None]:
    """(the bulk oil's limit, the return line's limit or None), K: what every search holds to."""
    return limit_K(scenario)[0], scenario.return_line_max_temperature_K


def cycle_durations(cycle: list[Step], wait_s=None) -> list | None:
    """Per-step durations (s) of one cycle with every wait replaced by wait_s ((N,) or float); None
    (as planned) where wait_s is None."""
    return None if wait_s is None else [wait_s if not step.is_pull else step.duration_s for step in cycle]


def _cycle_s(scenario: Scenario, wait_s, cycle_s) -> list | None:
    """cycle_s where given, else the cycle with every wait replaced by wait_s (None: as planned)."""
    return cycle_durations(list(scenario.cycle), wait_s) if cycle_s is None else cycle_s


def _designs_of(cycle_s: list | None, index) -> list | None:
    """Per-step durations of one cycle (each float or (N,)) for the designs in `index` only."""
    return None if cycle_s is None else [d if np.ndim(d) == 0 else np.asarray(d, dtype=float)[index] for d in cycle_s]


def _whole_session(scenario: Scenario, cycle_s: list | None) -> list | None:
    return None if cycle_s is None else list(cycle_s) * scenario.repeat


def session_trace(scenario: Scenario, rig: Rig, n: int, wait_s=None, cycle_s=None):
    """The planned session for n designs at the planning resolution (a Trace). cycle_s : optional
    per-step durations of one cycle (each float or (N,) s), the same in every cycle; or wait_s."""
    cycle_s = _cycle_s(scenario, wait_s, cycle_s)
    return integrate_session(rig, scenario, scenario.start_K, n_designs=n, durations_s=_whole_session(scenario, cycle_s),
                             resolution=PLAN_RESOLUTION)


def _proven_under(scenario: Scenario, rig: Rig, n: int, margin_K: float, cycle_s, starts=None) -> tuple:
    """On a long session (more than LONG_SESSION_CYCLES cycles), from the periodic state and without
    integrating the session: (proven (N,) bool: designs whose whole session is proven to peak at least
    margin_K under the limit; settled (N,) bool: those of them whose session ends periodic to
    SETTLED_K; their periodic peak (N,) K; (the periodic states (N,k) K, converged or not, their
    residuals F(X) - X (N,k) K, usable (N,) bool: finite, with a path for heat to leave) for
    long_session's cycle jump, or None on a short session).

    The network is cooperative, so a start no warmer than the periodic state approaches it from below
    and never peaks above it (see sustainability): the periodic peak bounds the session's from above.
    (Nearly: where a coupling's coefficient depends on another node's temperature (the loop's on the
    bulk oil's viscosity, the lid's outside coefficient on the wall's), an off-diagonal term of the
    Jacobian can turn slightly negative. An independent review's 600 random rigs showed no session
    peaking above its periodic cycle by more than 2e-6 K.)
    How far below it the session's own peak stays is what the session leaves unsettled: the start's
    departure from the periodic state carried through the cycles by the one-cycle map's Jacobian there
    (linear near the periodic state; on the default rig it tracks the gap to within 10 %, taken with
    a factor of 2). A short session proves nothing this way (it is integrated as it is, to the end).
    starts : optional (PeriodicStarts, the items of its search that the n designs are)."""
    if scenario.repeat <= LONG_SESSION_CYCLES:
        return np.zeros(n, bool), np.zeros(n, bool), np.full(n, np.nan), None
    cycle_map: dict = {}
    X0 = None if starts is None else starts[0].of(starts[1], scenario.start_K)
    X, peak, ok = periodic_state(scenario, rig, n, X0=X0, cycle_s=cycle_s, cycle_map_out=cycle_map)
    if starts is not None:
        starts[0].keep(starts[1], X, ok)
    colder = np.all(scenario.start_K <= X + 1e-9, axis=1)
    proven = ok & colder & (peak <= limit_K(scenario)[0] - margin_K)
    with np.errstate(all="ignore"):
        left = np.linalg.matrix_power(cycle_map["jacobian"], scenario.repeat - 1) @ (scenario.start_K - X)[..., None]
        unsettled = 2.0 * np.max(np.abs(left[..., 0]), axis=1)
    usable = _has_loss_path(rig) & np.all(np.isfinite(X), axis=1) & np.all(np.isfinite(cycle_map["residual"]), axis=1)
    return proven, proven & (unsettled < SETTLED_K), peak, (X, cycle_map["residual"], usable)


def _periodic_of(periodic: tuple | None, index) -> tuple | None:
    return None if periodic is None else tuple(part[index] for part in periodic)


def finishes_under_limit(scenario: Scenario, rig: Rig, n: int, wait_s=None, cycle_s=None,
                         starts: tuple | None = None) -> np.ndarray:
    """Whether the planned session of each of n designs finishes with its peak (the limiting one,
    as session_outcome's) at least SEARCH_MARGIN_K under the limit: what the sizing searches and the
    verdict's fixes ask (day_peak_bound_K). cycle_s or wait_s : as session_trace's; starts : as
    session_peak_K's."""
    return day_peak_bound_K(scenario, rig, n, wait_s, cycle_s, starts) <= limits_K(scenario)[0] - SEARCH_MARGIN_K


def day_peak_bound_K(scenario: Scenario, rig: Rig, n: int, wait_s=None, cycle_s=None,
                     starts: tuple | None = None) -> np.ndarray:
    """Per design, the planned session's limiting peak (K) as far as finishes_under_limit needs it:
    where the session finishes SEARCH_MARGIN_K under the limit, an upper bound of its peak (or,
    where the cycle jump stood in for its last cycles, its peak to the jump's accuracy: an
    independent review found it up to 11 mK low with a return-line limit, against the 1 mK it
    aims at); where it does not, a peak above that (a lower bound of the session's). On a long
    session the designs that the periodic state proves to pass take their periodic peak and are not
    integrated (_proven_under); any other is followed only until its answer is decided
    (long_session.session_limiting_peak_K's decided_above_K and decided_under_K: over the
    threshold, or rising by so little that the rest of the day cannot reach it), else to its end."""
    cycle_s = _cycle_s(scenario, wait_s, cycle_s)
    limits = limits_K(scenario)
    threshold = limits[0] - SEARCH_MARGIN_K
    ok, _, peak, periodic = _proven_under(scenario, rig, n, SEARCH_MARGIN_K, cycle_s, starts)
    bound = np.where(ok, peak, np.nan)
    rest = np.flatnonzero(~ok)
    if rest.size:
        bound[rest] = session_limiting_peak_K(take_designs(rig, rest), scenario, scenario.start_K, rest.size, limits,
                                              _designs_of(cycle_s, rest), PLAN_RESOLUTION,
                                              decided_above_K=threshold, periodic=_periodic_of(periodic, rest),
                                              decided_under_K=threshold)
    return bound


class PeriodicStarts:
    """First guesses of the periodic states of a search's items, round after round: each item's
    converged state from the round before. A search's later candidates lie close to its earlier
    ones, so Newton starts near the answer and needs fewer iterations; the fixed point is the same
    to NEWTON_TOL_K."""

    def __init__(self, m: int):
        self.X = np.full((m, N_NODES), np.nan)

    def of(self, items, start_K) -> np.ndarray:
        X = self.X[items]
        return np.where(np.isnan(X), start_K, X)

    def keep(self, items, X, converged) -> None:
        self.X[np.asarray(items)[converged]] = X[converged]


def session_peak_K(scenario: Scenario, rig: Rig, n: int, cycle_s=None, threshold_K: float | None = None,
                   starts: tuple | None = None) -> np.ndarray:
    """The limiting peak (K, as session_outcome's) of the planned session of each of n designs. On a
    long session, a design whose periodic peak is at or under threshold_K (the limit where None), from
    a start no warmer, and whose session ends periodic to SETTLED_K, takes its periodic peak
    (_proven_under) and is not integrated; the others are, until periodic
    (long_session.session_limiting_peak_K). starts : optional (PeriodicStarts, the search's items
    that the n designs are)."""
    limit, _ = limit_K(scenario)
    margin = 0.0 if threshold_K is None else limit - threshold_K
    _, settled, peak, periodic = _proven_under(scenario, rig, n, margin, cycle_s, starts)
    rest = np.flatnonzero(~settled)
    if rest.size:
        peak[rest] = session_limiting_peak_K(take_designs(rig, rest), scenario, scenario.start_K, rest.size,
                                             limits_K(scenario), _designs_of(cycle_s, rest), PLAN_RESOLUTION,
                                             periodic=_periodic_of(periodic, rest))
    return peak


def session_outcome(scenario: Scenario, rig: Rig, n: int, wait_s=None, trace=None):
    """Integrate the planned session for n designs (or take `trace`, a session_trace already
    computed). Returns (peak K (N,), pulls under the limits (N,)). The peak is the bulk oil's,
    or where a return-line limit is set, outcome.limiting_peak_K: at or under the bulk limit
    exactly when neither oil passes its limit."""
    trace = session_trace(scenario, rig, n, wait_s) if trace is None else trace
    limits = limits_K(scenario)
    return limiting_peak_K(trace, *limits), pulls_completed_under(trace, *limits)


def _cycle_end(scenario, rig, X, cycle_s=None, systems: dict | None = None):
    """(the state after one cycle from X, the cycle's limiting peak, the corrector systems it left).
    systems : the ones it starts from (solver.integrate's; a copy of the caller's, take_systems,
    which this run overwrites with the ones it leaves). Designs whose steps take different numbers
    of sub-steps are run apart (solver.substep_groups)."""
    n = X.shape[0]
    groups = substep_groups(list(scenario.cycle), cycle_s, n, PLAN_RESOLUTION)
    if len(groups) > 1:         # each design at its own sub-steps, whatever its batch holds
        end, peak, left = np.empty_like(X), np.empty(n), {}
        for group in groups:
            end[group], peak[group], group_left = _cycle_end(scenario, take_designs(rig, group), X[group],
                                                             _designs_of(cycle_s, group),
                                                             take_systems(systems or {}, group))
            _put_systems(left, group, group_left, n)
        return end, peak, left
    left = {} if systems is None else systems
    trace = integrate(rig, list(scenario.cycle), X, n_designs=n, durations_s=cycle_s,
                      resolution=PLAN_RESOLUTION, systems=left)
    return trace.final_K, limiting_peak_K(trace, *limits_K(scenario)), left


def _put_systems(store: dict, index, systems: dict, n: int) -> None:
    """Write the systems of the designs in `index` into store (per key, arrays of all n designs)."""
    for key, system in systems.items():
        if key not in store:
            store[key] = tuple(np.zeros((n,) + part.shape[1:], part.dtype) for part in system)
        for whole, part in zip(store[key], system):
            whole[index] = part


def _has_loss_path(rig: Rig) -> np.ndarray:
    cooler = np.asarray(rig.cooler_W_K) > 0
    passive = ((np.asarray(rig.convection_multiplier) > 0) | (np.asarray(rig.wall_emissivity) > 0)
               | (np.asarray(rig.hardware_emissivity) > 0))
    return np.asarray(cooler | passive)


def periodic_state(scenario: Scenario, rig: Rig, n: int, wait_s=None, X0=None, cycle_s=None,
                   cycle_map_out: dict | None = None):
    """The cycle's periodic steady state, by Newton iteration on the one-cycle map, for the designs
    not yet converged. The Jacobian is by finite differences (all designs and perturbations in one
    batch); on a large batch (BROYDEN_FROM_DESIGNS or more runs of the cycle) only the first one, and
    then Broyden's update (Dennis and Schnabel, Numerical Methods for Unconstrained Optimization and
    Nonlinear Equations, 1983, ch. 8), which runs the cycle once per design instead of k + 1 times.
    The map is nearly affine, so the first Jacobian is nearly exact and a few updates finish it; on
    a small batch the cost is per call, not per design, so full Newton steps are cheaper there.

    The cycle is run as the planned session runs it once periodic: each run starts from the
    corrector systems the design's run before left (solver.integrate's `systems`; the session's
    cycle starts from those its previous cycle left), so the fixed point is the session's own. A
    design has converged when its residual is under NEWTON_TOL_K and the run that gave it started
    from systems left by a run within SYSTEMS_NEAR_K of its state.

    Returns (state at cycle start (N,k) K, peak oil over the periodic cycle (N,) K, converged (N,)).
    The peak is that of the cycle run from the returned state, which is periodic to NEWTON_TOL_K
    (the bulk peak, or outcome.limiting_peak_K where a return-line limit is set). cycle_s or wait_s :
    as session_trace's. cycle_map_out : optional dict that receives "jacobian", the one-cycle map's
    Jacobian at the returned state (N,k,k) (the last finite-difference one, Broyden-updated), and
    "residual", F(X) - X at the returned state (N,k) K.
    """
    cycle_s = _cycle_s(scenario, wait_s, cycle_s)
    cycle_s = None if cycle_s is None else [np.broadcast_to(np.asarray(d, dtype=float), (n,)) for d in cycle_s]
    k = N_NODES
    copies = k + 1                      # the state itself and one perturbation per node
    X = np.array(np.broadcast_to(scenario.start_K if X0 is None else X0, (n, k)), dtype=float)
    eye = np.eye(k)
    broyden = n * copies >= BROYDEN_FROM_DESIGNS
    residual = np.full((n, k), np.inf)
    peak = np.full(n, np.nan)
    B = np.empty((n, k, k))             # d residual / d X
    converged = np.zeros(n, bool)
    store: dict = {}                    # per design, the systems its last run of the cycle left
    store_X = np.full((n, k), np.nan)   # and the state that run started from
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
        cycle_active = _designs_of(cycle_s, active)
        carried = take_systems(store, active)
        near = np.max(np.abs(X_new - store_X[active]), axis=1) <= SYSTEMS_NEAR_K     # False where none yet
        if iteration == 0 or not broyden:
            r_new, peak_new, B[active], left = _residual_and_jacobian(scenario, rig, active, X_new, cycle_active,
                                                                      carried)
        else:
            F_new, peak_new, left = _cycle_end(scenario, take_designs(rig, active), X_new, cycle_active, carried)
            r_new = F_new - X_new
            dx, dr = X_new - X[active], r_new - residual[active]
            Bdx = (B[active] @ dx[..., None])[..., 0]
            B[active] += (dr - Bdx)[:, :, None] * dx[:, None, :] / np.maximum(
                np.sum(dx * dx, axis=1), 1e-300)[:, None, None]
        X[active], residual[active], peak[active] = X_new, r_new, peak_new
        _put_systems(store, active, left, n)
        store_X[active] = X_new
        converged[active] = (np.max(np.abs(r_new), axis=1) < NEWTON_TOL_K) & near
        if converged.all():
            break
    ok = converged & _has_loss_path(rig) & np.all(np.isfinite(X), axis=1)
    if cycle_map_out is not None:
        cycle_map_out["jacobian"] = B + eye
        cycle_map_out["residual"] = residual
    return X, peak, ok


def _residual_and_jacobian(scenario, rig, index, X, cycle_s, systems: dict | None = None, delta_K=0.01):
    """The one-cycle residual F(X) - X (m,k), the peak of the cycle from X (m,), the residual's
    Jacobian by forward differences (m,k,k), and the systems the runs from X left, for the designs in
    index, in one batch. systems : those the runs start from (the same for a design's perturbed
    copies), per design of index."""
    k = X.shape[1]
    copies = k + 1
    repeated = np.repeat(np.arange(index.size), copies)
    Fc, peak_c, left = _cycle_end(scenario, take_designs(rig, np.repeat(index, copies)), perturbed_copies(X, delta_K),
                                  _designs_of(cycle_s, repeated), take_systems(systems or {}, repeated))
    F = Fc[0::copies]
    J = forward_difference_jacobian(Fc, delta_K) - np.eye(k)
    return F - X, peak_c[0::copies], J, take_systems(left, np.arange(index.size) * copies)


def sustainability(scenario: Scenario, rig: Rig, n: int, wait_s=None, margin_K: float = 0.0, X0=None,
                   states: list | None = None, cycle_s=None):
    """(sustainable (N,) bool, periodic peak (N,) K). Sustainable: the periodic state exists and its
    peak stays at or below the limit, and the way there from the start stays below it too.
    X0 : optional first guess of the periodic states (N,k) K (periodic_state); states : optional list
    to which (the periodic states (N,k) K, converged (N,) bool) is appended.

    The network is cooperative (every coupling pushes temperatures together), so a start no warmer
    than the periodic state, node by node, approaches it from below and never peaks above it; only
    designs that start warmer than their periodic state need the planned session checked as well.
    """
    limit, _ = limit_K(scenario)
    cycle_s = _cycle_s(scenario, wait_s, cycle_s)
    X, peak, ok = periodic_state(scenario, rig, n, X0=X0, cycle_s=cycle_s)
    if states is not None:
        states.append((X, ok))
    ok = ok & (peak <= limit - margin_K)
    warmer = ok & np.any(scenario.start_K > X + 1e-9, axis=1)
    if warmer.any():
        index = np.flatnonzero(warmer)
        session_peak = limiting_peak_K(session_trace(scenario, take_designs(rig, index), index.size,
                                                     cycle_s=_designs_of(cycle_s, index)), *limits_K(scenario))
        ok[index] &= session_peak <= limit - margin_K
    return ok, peak
