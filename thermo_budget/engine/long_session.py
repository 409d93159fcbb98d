"""A long planned session (hundreds of pulls of one cycle) integrated only until it is periodic.

The planned session is the cycle repeated. From a start no warmer than its periodic state, the
state at each cycle's start approaches the periodic state geometrically (the one-cycle map is a
contraction, nearly affine: `session_runs.periodic_state` solves for its fixed point). Up to
LONG_SESSION_CYCLES cycles the session is integrated in one call, as every other integration is.
A longer one is integrated CHUNK_CYCLES cycles at a time, each chunk starting from the corrector
systems the one before left (solver.integrate's `systems`: the chunks are one integration). After
each chunk, the change of the cycle-start state over its last cycle (d) and the ratio of the last
two changes (the contraction rho) bound what all later cycles can still add, d rho / (1 - rho).
Once that bound is under PERIODIC_TOLERANCE_K for every design, the later cycles are the last one
repeated: its records copied with their times shifted by one cycle each, its heat in counted once
per cycle, and as much heat lost as gone in (a periodic cycle stores nothing). So the work of a
1,000-pull day is that of the pulls it takes to settle, not of its length. Where only the peak is
wanted (session_limiting_peak_K), a design that rises towards its periodic state slowly enough not
to settle within the day jumps to its last cycles instead, once the jump is accurate enough
(cycle_jump).
"""
from __future__ import annotations

import numpy as np

from ..physics.network import N_NODES
from ..physics.rig import take_designs
from .cycle_jump import LAST_CYCLES_RUN, JumpState, SessionRun, jumped
from .outcome import limiting_peak_K
from .session import Resolution
from .solver import Trace, integrate, substep_groups, take_systems

LONG_SESSION_CYCLES = 60        # up to this many cycles: one integration, exactly as before
CHUNK_CYCLES = 20
PERIODIC_TOLERANCE_K = 1e-3     # what later cycles may still add to any node, at most (far under
                                # the 0.025 K the planning resolution keeps to a tight reference)


def integrate_session(rig, scenario, T0_K, n_designs: int = 1, durations_s=None, resolution: Resolution = Resolution(),
                      tolerance_K: float = PERIODIC_TOLERANCE_K) -> Trace:
    """The planned session (scenario.cycle repeated scenario.repeat times) for n designs, as
    solver.integrate would give it, with the cycles after the state has become periodic copied
    (see the module's docstring). durations_s : optional per-step durations of the whole session,
    the same in every cycle (only the first cycle's are read). A caller that needs only a peak, or
    a decision, follows each design only while it is open instead (session_limiting_peak_K)."""
    cycle, repeat = list(scenario.cycle), int(scenario.repeat)
    per_cycle = None if durations_s is None else list(durations_s[:len(cycle)])
    if repeat <= LONG_SESSION_CYCLES:
        return integrate(rig, cycle * repeat, T0_K, n_designs=n_designs,
                         durations_s=None if per_cycle is None else per_cycle * repeat, resolution=resolution)
    pieces, done = [], 0
    X = np.array(np.broadcast_to(np.asarray(T0_K, dtype=float), (n_designs, N_NODES)))
    t = 0.0
    systems: dict = {}
    while done < repeat:
        cycles = min(CHUNK_CYCLES, repeat - done)
        piece = integrate(rig, cycle * cycles, X, n_designs=n_designs, start_time_s=t,
                          durations_s=None if per_cycle is None else per_cycle * cycles, resolution=resolution,
                          systems=systems)
        pieces.append((piece, done * len(cycle)))
        done += cycles
        X, t = piece.final_K, piece.time_s[-1]
        if done < repeat and cycles >= 3 and _settled(piece, len(cycle), tolerance_K):
            pulls_per_cycle = sum(step.is_pull for step in cycle)
            pieces.append((_repeat_last_cycle(piece, len(cycle), pulls_per_cycle, repeat - done), done * len(cycle)))
            break
    return _joined(pieces)


def _cycle_starts(trace: Trace, steps_per_cycle: int) -> np.ndarray:
    """Indices of the recorded points at which each cycle of the trace starts, and its last point."""
    first_steps = np.flatnonzero((trace.step_index >= 0) & (trace.step_index % steps_per_cycle == 0)
                                 & (np.diff(trace.step_index, prepend=-2) != 0))
    return np.append(first_steps - 1, trace.step_index.size - 1)


def _settled_designs(trace: Trace, steps_per_cycle: int, tolerance_K: float) -> np.ndarray:
    """Per design (N,) bool: whether its cycle-start state can change by less than tolerance_K in all
    later cycles: the last change d and the contraction rho of the last two give d rho / (1 - rho)."""
    starts = trace.T_K[_cycle_starts(trace, steps_per_cycle)]            # (cycles + 1, N, k)
    changes = np.max(np.abs(np.diff(starts[-3:], axis=0)), axis=2)       # (2, N): the last two cycles
    previous, last = changes
    rho = np.divide(last, previous, out=np.zeros_like(last), where=previous > 0)
    bound = np.where(last == 0.0, 0.0, np.where(rho < 1.0, last * rho / np.maximum(1.0 - rho, 1e-300), np.inf))
    return np.all(np.isfinite(starts[-1]), axis=1) & (bound + last < tolerance_K)


def _settled(trace: Trace, steps_per_cycle: int, tolerance_K: float) -> bool:
    """Whether every design is settled (_settled_designs)."""
    return bool(np.all(_settled_designs(trace, steps_per_cycle, tolerance_K)))


# The comparison principle below holds to round-off on the cooperative network for the bulk oil and
# the return line (its couplings' coefficients move with temperature only slightly against it: an
# independent review found 2e-6 K on 600 rigs; tests/test_verdict.py checks days started up to
# 15 K apart).
COMPARISON_SLACK_K = 1e-3


def rising_bound_K(starts, peak_K, cycles_left: int) -> np.ndarray:
    """Per design (N,), an upper bound of the peak of the rest of a session whose cycle-start states
    `starts` ((c + 1, N, k) K, c >= 1, the last the state now) rose over their last cycle at every
    node, with `cycles_left` cycles to run and its peak so far peak_K (N,) K; inf where they did not
    rise. The network is cooperative, so the one-cycle map keeps states ordered: once a cycle's start
    is no colder than the one before, every later cycle's is too. Its couplings pull temperatures
    together and towards the air, so the map moves the bulk oil and the return line, whose peaks are
    held, by no more than the largest shift of the start (an independent review on random rigs:
    at most 0.99985 K per K). The hose liner alone can move more, 1.7 K per K where its coefficient
    blends across the laminar-turbulent transition: so this is not a proof, and what holds it is the
    measure: no later cycle peaks more than cycles_left times the last largest rise above the last
    one, which the peak so far includes (+ COMPARISON_SLACK_K). The review's 11,000 checks on random
    rigs (61-300 cycles, 0.3-20 times the oil, coolers, idling waits, engine curves, return-line
    limits) never found the rest of a day above it (closest: 0.9988 of the rise term, a day rising
    in a straight line), and tests/test_long_day.py holds it on the drum's 200-pull day."""
    rise = starts[-1] - starts[-2]
    rising = np.all(rise >= -1e-9, axis=1)         # (round-off: within the slack)
    return np.where(rising, peak_K + cycles_left * np.max(rise, axis=1) + COMPARISON_SLACK_K, np.inf)


def session_limiting_peak_K(rig, scenario, T0_K, n_designs: int, limits_K: tuple, cycle_s=None,
                            resolution: Resolution = Resolution(), decided_above_K: float | None = None,
                            tolerance_K: float = PERIODIC_TOLERANCE_K, periodic: tuple | None = None,
                            decided_under_K: float | None = None) -> np.ndarray:
    """The limiting peak (outcome.limiting_peak_K against limits_K, (bulk, return line or None)) of
    the planned session of n designs, K (N,), where only the peak is wanted, not the trace.

    cycle_s : optional per-step durations of one cycle (each float or (N,) s), the same in every
    cycle; designs whose steps take different numbers of sub-steps are integrated apart
    (solver.substep_groups). A session of up to LONG_SESSION_CYCLES cycles is one integration.
    A longer one is integrated CHUNK_CYCLES cycles at a time, each chunk with only the designs still
    open: a design is closed once its peak so far passes decided_above_K (its peak is then a lower
    bound, above that; only for a caller that needs no more), once a bound of the rest of its day
    lies under decided_under_K (rising_bound_K; its peak is then that bound, an upper bound under
    decided_under_K; again only for such a caller), once it is periodic (_settled_designs:
    all later cycles repeat its last to tolerance_K, so they add nothing to its peak), or once its
    last cycles can be run from a state had by the cycle jump (cycle_jump.jumped). periodic :
    optional (the periodic states (N,k) K, converged or not, their residuals F(X) - X (N,k) K,
    usable (N,) bool), as session_runs.periodic_state leaves them; without it, no jump."""
    cycle, repeat = list(scenario.cycle), int(scenario.repeat)
    durations = None if cycle_s is None else [np.broadcast_to(np.asarray(d, dtype=float), (n_designs,)) for d in cycle_s]
    groups = substep_groups(cycle, durations, n_designs, resolution)
    if len(groups) > 1:         # each design at its own sub-steps, whatever its batch holds
        T0 = np.broadcast_to(np.asarray(T0_K, dtype=float), (n_designs, N_NODES))
        peak = np.empty(n_designs)
        for group in groups:
            periodic_of_group = None if periodic is None else tuple(part[group] for part in periodic)
            peak[group] = session_limiting_peak_K(
                take_designs(rig, group), scenario, T0[group], group.size, limits_K, [d[group] for d in durations],
                resolution, decided_above_K, tolerance_K, periodic_of_group, decided_under_K)
        return peak
    if repeat <= LONG_SESSION_CYCLES:
        trace = integrate(rig, cycle * repeat, T0_K, n_designs=n_designs,
                          durations_s=None if durations is None else durations * repeat, resolution=resolution)
        return limiting_peak_K(trace, *limits_K)
    X = np.array(np.broadcast_to(np.asarray(T0_K, dtype=float), (n_designs, N_NODES)))
    peak = np.full(n_designs, -np.inf)
    open_ = np.arange(n_designs)
    t, done = np.zeros(n_designs), 0
    systems: dict = {}
    jump_state = None if periodic is None else JumpState(*periodic)
    run = SessionRun(rig, cycle, durations, resolution, limits_K)
    while done < repeat and open_.size:
        cycles = min(CHUNK_CYCLES, repeat - done)
        X_before = X[open_].copy()
        piece = integrate(take_designs(rig, open_), cycle * cycles, X[open_], n_designs=open_.size, start_time_s=t[open_],
                          durations_s=None if durations is None else [d[open_] for d in durations] * cycles,
                          resolution=resolution, systems=systems)
        done += cycles
        peak[open_] = np.maximum(peak[open_], limiting_peak_K(piece, *limits_K))
        X[open_], t[open_] = piece.final_K, piece.time_s[-1]
        closed = np.zeros(open_.size, bool) if cycles < 3 else _settled_designs(piece, len(cycle), tolerance_K)
        if decided_above_K is not None:
            closed |= peak[open_] > decided_above_K
        starts = piece.T_K[_cycle_starts(piece, len(cycle))]
        if decided_under_K is not None and done < repeat:
            bound = rising_bound_K(starts, peak[open_], repeat - done)
            under = ~closed & (bound <= decided_under_K)
            peak[open_[under]] = bound[under]
            closed |= under
        if periodic is not None and repeat - done > LAST_CYCLES_RUN and cycles >= 3:
            closed |= jumped(jump_state, run, starts, open_, X_before, closed, repeat - done, peak, systems)
        open_ = open_[~closed]
        systems = take_systems(systems, np.flatnonzero(~closed))
    return peak


def _repeat_last_cycle(trace: Trace, steps_per_cycle: int, pulls_per_cycle: int, copies: int) -> Trace:
    """The trace's last cycle repeated `copies` times after it, as a trace that starts at its end
    (step indices counted from that end, times shifted by one cycle each)."""
    start = _cycle_starts(trace, steps_per_cycle)[-2]
    points = slice(start + 1, None)
    period = trace.time_s[-1] - trace.time_s[start]                      # (N,)
    shifts = np.arange(copies)
    time_s = trace.time_s[-1] + (trace.time_s[points] - trace.time_s[start])[None] + (shifts[:, None, None] * period)
    first_step = trace.step_index[start + 1]
    step_index = (trace.step_index[points] - first_step)[None] + shifts[:, None] * steps_per_cycle
    pulls = slice(trace.pull_start_s.shape[0] - pulls_per_cycle, None)     # the last cycle's
    pull_start = trace.pull_start_s[pulls][None] - trace.time_s[start] + trace.time_s[-1] + shifts[:, None, None] * period
    pull_end = trace.pull_end_s[pulls][None] - trace.time_s[start] + trace.time_s[-1] + shifts[:, None, None] * period
    heat_in = np.sum(trace.power_W[points] * np.diff(trace.time_s[start:], axis=0), axis=0) * copies

    def tiled(values):
        return np.tile(values[points], (copies,) + (1,) * (values.ndim - 1))

    n = trace.time_s.shape[1]
    return Trace(time_s=np.concatenate([trace.time_s[-1:], time_s.reshape(-1, n)]),
                 T_K=np.concatenate([trace.T_K[-1:], tiled(trace.T_K)]),
                 return_K=np.concatenate([trace.return_K[-1:], tiled(trace.return_K)]),
                 power_W=np.concatenate([trace.power_W[-1:], tiled(trace.power_W)]),
                 step_index=np.concatenate([[-1], step_index.ravel()]),
                 energy_in_J=heat_in, energy_lost_J=heat_in.copy(), energy_stored_J=np.zeros(n),
                 pull_start_s=pull_start.reshape(copies * pulls_per_cycle, n),
                 pull_end_s=pull_end.reshape(copies * pulls_per_cycle, n),
                 hose_liner_share=trace.hose_liner_share)


def _joined(pieces) -> Trace:
    """Traces that follow one another (each starting where the last ended; step indices of each
    counted from its own start, offset given) as one trace."""
    first = pieces[0][0]
    rest = [(piece, offset) for piece, offset in pieces[1:]]

    def cat(name):
        return np.concatenate([getattr(first, name)] + [getattr(piece, name)[1:] for piece, _ in rest])

    step_index = np.concatenate([first.step_index] + [piece.step_index[1:] + offset for piece, offset in rest])
    return Trace(time_s=cat("time_s"), T_K=cat("T_K"), return_K=cat("return_K"), power_W=cat("power_W"),
                 step_index=step_index,
                 energy_in_J=sum(piece.energy_in_J for piece, _ in pieces),
                 energy_lost_J=sum(piece.energy_lost_J for piece, _ in pieces),
                 energy_stored_J=sum(piece.energy_stored_J for piece, _ in pieces),
                 pull_start_s=np.concatenate([piece.pull_start_s for piece, _ in pieces]),
                 pull_end_s=np.concatenate([piece.pull_end_s for piece, _ in pieces]),
                 hose_liner_share=first.hose_liner_share)
