"""The cycle jump: the last cycles of a long session had without integrating the cycles before them.

A session's cycle-start states X_k follow the one-cycle map F, whose fixed point X* is the periodic
state (session_runs.periodic_state). Near X* the map is nearly affine, X_{k+1} - X* = J (X_k - X*),
J its Jacobian there, so the state m cycles on is X* + J^m (X_k - X*). The map's departure from
that line is measured on each chunk of cycles just integrated and carried to the jump
(jump_error_K: an estimate of the jumped *state's* error, not a bound); where it is under
JUMP_TOLERANCE_K, the session's last LAST_CYCLES_RUN cycles are integrated from the jumped state,
and their peak is the session's: only where the cycle-start states rise through the chunk, node by
node, and stay under X*. The network is cooperative (every coupling pushes temperatures together),
so rising cycle starts rise ever after, and so do the cycles' peaks; with a return-line limit too,
as the return line's rise over the bulk depends on the pull's power and flow, not on the state
(but for the oil's heat capacity, a fraction of a percent over the day). Where a coefficient
depends on another node's temperature the network is cooperative only nearly: see
session_runs._proven_under.

Measured against following every cycle (the four shipped scenarios asked for 200 pulls, each as
planned, with pulls cut to 0.5 and 0.8, waits of 300 and 900 s and coolers of 2 and 10 W/K, on the
band's 128 samples): peaks within 0.96 mK, at most 0.48 mK low, against the planning resolution's
own 2 mK from a fine one on the plastic drum's 200-pull day. A far state (the drum's samples with
more oil, whose day ends 5 K short of periodic) seldom jumps: there the estimate is not to be
trusted (see jumped).
"""
from __future__ import annotations

from typing import NamedTuple

import numpy as np

from ..physics.network import N_NODES
from ..physics.rig import take_designs
from .outcome import limiting_peak_K
from .session import Resolution
from .solver import integrate, take_systems

LAST_CYCLES_RUN = 1             # the cycles run from the jumped state (see last_cycles_peak_K)
JUMP_SAFETY = 2.0               # the jump's error estimate is taken this many times over
JUMP_TOLERANCE_K = 1e-3         # and must be under this


class SessionRun(NamedTuple):
    """What a long session's integration is run with: the rig of its n designs, one cycle's steps,
    optional per-step durations of one cycle (each (N,) s) or None, the resolution, and the limits
    (bulk K, return line K or None) its peak is taken against."""
    rig: object
    cycle: list
    durations: list | None
    resolution: Resolution
    limits_K: tuple


class JumpState:
    """What the cycle jump keeps per design of a long_session.session_limiting_peak_K call: the first guesses of
    the periodic states, their residuals and whether they are usable (as given), and, once worked
    out, the one-cycle map's Jacobian there and the fixed point of its affine model."""

    def __init__(self, guesses, residuals, usable):
        self.guesses, self.residuals, self.usable = guesses, residuals, usable
        n = guesses.shape[0]
        self.jacobians = np.full((n, N_NODES, N_NODES), np.nan)
        self.centres = np.full((n, N_NODES), np.nan)

    def linearise(self, designs, run: SessionRun) -> None:
        """Work out the map's Jacobian and the affine fixed point for `designs` not yet done."""
        new = designs[np.isnan(self.jacobians[designs, 0, 0])]
        if not new.size:
            return
        self.jacobians[new] = cycle_map_jacobian(run, new, self.guesses[new])
        eye = np.eye(N_NODES)
        with np.errstate(all="ignore"):     # the affine model's fixed point: Newton's next step
            self.centres[new] = self.guesses[new] + np.linalg.solve(eye - self.jacobians[new] + 1e-12 * eye,
                                                                    self.residuals[new][..., None])[..., 0]


def jumped(state: JumpState, run: SessionRun, starts, open_, X_before, closed, left: int, peak,
           systems: dict) -> np.ndarray:
    """Per open design (bool): closed by the cycle jump after a chunk of cycles, whose cycle-start
    states are `starts` (cycles + 1, N_open, k) K, from X_before; `left` cycles of the session after
    it; `systems` the corrector systems it left (solver.integrate's, per open design). A design whose
    cycle-start states rise through the chunk (and stay under the affine fixed point) is closed where
    the jump is within JUMP_TOLERANCE_K (jump_error_K): its last LAST_CYCLES_RUN cycles are run from
    the jumped state and their peak taken into `peak` (all designs, updated in place).

    (Deciding a design under a threshold from the jump's estimate while its error is still large
    was tried and dropped: far from the periodic state the estimate can lie under the error by 9
    times, a 200-pull drum day's sample 0.18 K against 0.02 K.)"""
    rising = np.all(np.diff(starts, axis=0) >= -1e-9, axis=(0, 2)) & state.usable[open_] & ~closed
    state.linearise(open_[rising], run)
    centre, jacobian = state.centres[open_], state.jacobians[open_]
    rising &= np.all(starts[-1] <= centre + 1e-9, axis=1)
    cycles = starts.shape[0] - 1
    remaining = left - LAST_CYCLES_RUN
    error = jump_error_K(starts, X_before, centre, jacobian, cycles, remaining)
    jump = rising & (error < JUMP_TOLERANCE_K)
    if jump.any():
        index = np.flatnonzero(jump)
        designs = open_[index]
        peak[designs] = np.maximum(peak[designs], last_cycles_peak_K(
            run, designs, centre[index], jacobian[index], starts[-1][index], remaining, take_systems(systems, index)))
    return jump


def jump_error_K(starts, X_before, centre, jacobian, cycles: int, remaining: int) -> np.ndarray:
    """Per design (N,) K: the estimated error of the cycle-start state `remaining` cycles on, had
    from the one-cycle map linearised about its fixed point (centre + J^m (X - centre)); inf where
    it cannot be had so (J not contracting, or not worked out). starts: the cycle-start states of
    the chunk just run (cycles + 1, N, k) K, from X_before.

    The linearisation's error is measured on the chunk just run (E, from X_before over its
    `cycles` cycles) and carried to the jump: with the map's error quadratic in the gap |X - X*|
    and contracted by J's spectral radius rho, the jump's error is
    E (gap now / gap then)^2 rho^(m - c) (1 - rho^m) / (1 - rho^c), taken JUMP_SAFETY times."""
    with np.errstate(all="ignore"):
        rho = np.max(np.abs(np.linalg.eigvals(np.nan_to_num(jacobian, nan=2.0))), axis=1)
        predicted = centre + (np.linalg.matrix_power(jacobian, cycles) @ (X_before - centre)[..., None])[..., 0]
        error_then = np.max(np.abs(predicted - starts[-1]), axis=1)
        gap_then = np.max(np.abs(X_before - centre), axis=1)
        gap_now = np.max(np.abs(starts[-1] - centre), axis=1)
        carried = ((gap_now / gap_then) ** 2 * rho ** (remaining - cycles) * (1.0 - rho ** remaining)
                   / (1.0 - rho ** cycles))
        estimate = JUMP_SAFETY * error_then * np.where(gap_then > 0, carried, 0.0)
    ok = (np.all(np.isfinite(jacobian), axis=(1, 2)) & np.all(np.isfinite(starts[-1]), axis=1) & (rho < 1.0)
          & np.isfinite(estimate))
    return np.where(ok, estimate, np.inf)


def perturbed_copies(X, delta_K: float) -> np.ndarray:
    """Each state of X (N,k) K followed by k copies, the i-th with node i raised by delta_K:
    (N (k + 1), k), for a forward-difference Jacobian (forward_difference_jacobian)."""
    k = X.shape[1]
    copies = np.repeat(X, k + 1, axis=0)
    for i in range(k):
        copies[i + 1::k + 1, i] += delta_K
    return copies


def forward_difference_jacobian(end, delta_K: float) -> np.ndarray:
    """The Jacobian (N,k,k) of a map from its values `end` (N (k + 1), k) at perturbed_copies."""
    k = end.shape[1]
    return np.stack([(end[i + 1::k + 1] - end[0::k + 1]) / delta_K for i in range(k)], axis=-1)


def cycle_map_jacobian(run: SessionRun, designs, X0, delta_K: float = 0.01) -> np.ndarray:
    """The one-cycle map's Jacobian at X0 (N,k,k) for the designs in `designs` (of run.rig), by
    forward differences of delta_K on each node, every design and perturbation in one batch (each
    from fresh corrector systems)."""
    repeated = np.repeat(designs, N_NODES + 1)
    end = integrate(take_designs(run.rig, repeated), run.cycle, perturbed_copies(X0, delta_K),
                    n_designs=repeated.size,
                    durations_s=None if run.durations is None else [d[repeated] for d in run.durations],
                    resolution=run.resolution).final_K
    return forward_difference_jacobian(end, delta_K)


def last_cycles_peak_K(run: SessionRun, designs, X_star, jacobian, X, remaining: int, systems: dict) -> np.ndarray:
    """The limiting peak (N,) K of the session's last LAST_CYCLES_RUN cycles for the designs in
    `designs` (of run.rig), run from X* + J^remaining (X - X*), the cycle-start state `remaining`
    cycles after X. systems : the corrector systems the chunk before the jump left (per design).

    In a session integrated to its end, each step's predictor starts from the corrector system the
    same step left a cycle before (solver.integrate's `systems`; on one reviewed rig a fresh start
    of each step put the peak 0.07 K lower). The systems the chunk before the jump left belong to a
    state many kelvin colder: the last cycles started from them read the peak about 1 mK low (an
    independent review, the small US tank's 200-pull day). So one cycle is run from the jumped
    state first, from those systems, for the systems it leaves (its end state is discarded), and
    the last cycles start from those."""
    start = X_star + (np.linalg.matrix_power(jacobian, remaining) @ (X - X_star)[..., None])[..., 0]
    rig = take_designs(run.rig, designs)
    durations = None if run.durations is None else [d[designs] for d in run.durations]
    integrate(rig, run.cycle, start, n_designs=designs.size, durations_s=durations, resolution=run.resolution,
              systems=systems)
    trace = integrate(rig, run.cycle * LAST_CYCLES_RUN, start, n_designs=designs.size,
                      durations_s=None if durations is None else durations * LAST_CYCLES_RUN,
                      resolution=run.resolution, systems=systems)
    return limiting_peak_K(trace, *run.limits_K)
