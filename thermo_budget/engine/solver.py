"""Step-by-step integration of the network with an energy-conserving exponential integrator.

Within a sub-step the coefficients are frozen at a predicted mid-point state, and the linear system
C dT/dt = -L T + b is solved exactly (symmetrised, eigen-decomposed, phi-functions), in compiled
code (substep.py). The end state
is placed so that each node's enthalpy change equals the heat the linear solution delivered to it,
so heat in - heat out - heat stored closes to round-off. Vectorised over N designs.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..physics.air import air_or_standard
from ..physics.compiled import threads_usable, use_threads
from ..physics.network import N_NODES, OIL, Rig, hose_mean_from_share_K, node_enthalpy_J, per_design
from .session import Resolution, Step, pump_flow_m3_s
from .substep import PARALLEL_FROM_DESIGNS, advance_step, advance_step_parallel, decompose_many, propagate_many

# A design whose oil passes this temperature is held there and no longer integrated: it is far past
# any fluid limit the scenario accepts (at most 200 degC) and past the range where the oil and air
# data hold (Cragoe's correlations to 400 degF; the air table to 600 K film temperature).
GIVE_UP_ABOVE_K = 573.15
# The key under which integrate keeps the last curve step's system: not reused (its inputs change
# from sub-step to sub-step), only the rotations' warm start for the next one's.
CURVE_SYSTEM = "curve"


def decompose(C, L):
    """The symmetrised system S = -C^-1/2 L C^-1/2 of C dT/dt = -L T + b, eigen-decomposed once so
    that several propagations (a predictor, a corrector) can share it (substep.decompose_one).
    C (N,k) J/K, L (N,k,k) W/K symmetric. Returns (sqrt C, 1/sqrt C, eigenvalues (N,k) 1/s,
    eigenvectors (N,k,k), failed (N,) bool: a system that is not finite, kept as no change)."""
    return decompose_many(np.ascontiguousarray(C, dtype=float), np.ascontiguousarray(L, dtype=float))


def propagate_decomposed(system, b, T0, h, with_integral: bool = True):
    """Exact solution over h seconds (N,) of the decomposed system (decompose) with source b (N,k) W,
    from T0 (N,k) K. Returns (T(h) (N,k) K, integral of T over the sub-step (N,k) K s, or None).
    A design whose system or result is not finite keeps its state (the caller stops it)."""
    T0 = np.ascontiguousarray(T0, dtype=float)
    h = np.ascontiguousarray(np.broadcast_to(np.asarray(h, dtype=float), (T0.shape[0],)))
    T1, T_int = propagate_many(*system, np.ascontiguousarray(b, dtype=float), T0, h, with_integral)
    return T1, T_int if with_integral else None


def propagate_linear(C, L, b, T0, h):
    """Exact solution of C dT/dt = -L T + b over h seconds, with C, L, b constant.

    C (N,k) J/K, L (N,k,k) W/K symmetric, b (N,k) W, T0 (N,k) K, h (N,) s (k nodes).
    Returns (T(h) (N,k) K, integral of T over the sub-step (N,k) K s).
    """
    return propagate_decomposed(decompose(C, L), b, T0, h)


def _new_system(n: int, k: int):
    """Room for the decomposed systems of n designs (substep.advance_step fills it); the eigenvectors
    start as I, which the rotations start from."""
    return (np.empty((n, k)), np.empty((n, k)), np.empty((n, k)), np.empty((n, k)), np.tile(np.eye(k), (n, 1, 1)),
            np.zeros(n, bool))


@lru_cache(maxsize=256)
def _step_profile(step: Step, n_sub: int) -> tuple[np.ndarray, np.ndarray]:
    """A step cut into n_sub equal sub-steps: the engine speed at the middle of each (rev/min) and
    the step's mean power over each (W, before any design's power multiplier), (n_sub,) each."""
    rpm = np.array([float(step.rpm_at(0.5 * (k / n_sub + (k + 1) / n_sub))) for k in range(n_sub)])
    if step.curve is None:
        power = np.full(n_sub, step.mean_power_W(0.0, 1.0))
    else:
        power = np.array([step.mean_power_W(k / n_sub, (k + 1) / n_sub) for k in range(n_sub)])
    rpm.flags.writeable = power.flags.writeable = False
    return rpm, power


def _sub_step_inputs(rig: Rig, step: Step, n_sub: int, power_scale, n: int):
    """The network's inputs over a step's n_sub sub-steps, (n_sub, n) each: the pump's flow (m3/s)
    at the middle of each sub-step and the step's mean power over it (W) times each design's power
    multiplier."""
    rpm, power = _step_profile(step, n_sub)
    flow = pump_flow_m3_s(rig.displacement_m3, rpm, rig.volumetric_efficiency)
    flows = np.ascontiguousarray(np.broadcast_to(np.asarray(flow, dtype=float)[:, None], (n_sub, n)))
    powers = power[:, None] * np.broadcast_to(np.asarray(power_scale, dtype=float), (n,))[None, :]
    return flows, powers


def substep_groups(steps: list[Step], durations_s, n_designs: int, resolution: Resolution) -> list[np.ndarray]:
    """The designs (index arrays) grouped by how many sub-steps each step takes at their own
    durations (Resolution.substeps). integrate cuts a step for the longest duration in its batch,
    so a batch of designs with very different waits gives the shorter ones the longer one's
    sub-steps: integrated group by group, each design gets the sub-steps it would have alone (and
    costs no more). durations_s : as integrate's (None: one group)."""
    if durations_s is None:
        return [np.arange(n_designs)]
    counts = np.empty((n_designs, len(steps)), dtype=np.int64)
    for j, step in enumerate(steps):
        duration = per_design(durations_s[j], n_designs)
        values, where = np.unique(duration, return_inverse=True)
        counts[:, j] = np.array([resolution.substeps(step, float(v)) for v in values])[where.ravel()]
    _, group = np.unique(counts, axis=0, return_inverse=True)
    group = group.ravel()
    return [np.flatnonzero(group == g) for g in range(int(group.max()) + 1)]


def _inputs_key(step: Step):
    """Steps with equal keys put equal inputs into the network (constant power and speed)."""
    return step.engine, step.power_W, step.rpm


@dataclass
class Trace:
    """Result of integrating a list of steps for N designs; M recorded points.

    time_s (M,N), T_K (M,N,k) (k = N_NODES), return_K (M,N) return-line oil, power_W (M,N) (of the sub-step that
    ends at the point), step_index (M,) (-1 for the start point), energies (N,) in J.
    pull_start_s / pull_end_s (n_pulls, N): when each pull began and ended.
    hose_liner_share: the hose liner's share of the hose's capacity (a float, or one per design), so
    that the trace can give the hose rubber's mean temperature (hose_K) without its rig.
    """
    time_s: np.ndarray
    T_K: np.ndarray
    return_K: np.ndarray
    power_W: np.ndarray
    step_index: np.ndarray
    energy_in_J: np.ndarray
    energy_lost_J: np.ndarray
    energy_stored_J: np.ndarray
    pull_start_s: np.ndarray
    pull_end_s: np.ndarray
    hose_liner_share: float | np.ndarray

    @property
    def final_K(self) -> np.ndarray:
        return self.T_K[-1]

    @property
    def hose_K(self) -> np.ndarray:
        """The hose rubber's capacity-weighted mean temperature (M,N), K (network.hose_mean_K)."""
        return hose_mean_from_share_K(self.hose_liner_share, self.T_K)

    def designs(self, index) -> "Trace":
        """The trace of the designs in `index` only."""
        return Trace(time_s=self.time_s[:, index], T_K=self.T_K[:, index], return_K=self.return_K[:, index],
                     power_W=self.power_W[:, index], step_index=self.step_index,
                     energy_in_J=self.energy_in_J[index], energy_lost_J=self.energy_lost_J[index],
                     energy_stored_J=self.energy_stored_J[index], pull_start_s=self.pull_start_s[:, index],
                     pull_end_s=self.pull_end_s[:, index],
                     hose_liner_share=self.hose_liner_share if np.ndim(self.hose_liner_share) == 0
                     else self.hose_liner_share[index])


def take_systems(systems: dict, index) -> dict:
    """The systems (integrate's `systems`) of the designs in `index` only."""
    return {key: tuple(part[index] for part in system) for key, system in systems.items()}


def integrate(rig: Rig, steps: list[Step], T0_K, n_designs: int = 1, durations_s=None,
              resolution: Resolution = Resolution(), start_time_s=0.0, stop_above_K: float | None = None,
              give_up_above_K: float = GIVE_UP_ABOVE_K, stop_count: int | None = None,
              systems: dict | None = None) -> Trace:
    """Integrate the steps in order from the state T0_K ((N,k) or (k,) K, k = N_NODES; a scalar fills every node).

    give_up_above_K : a design whose bulk oil passes this (or whose state stops being finite) is
    held at its last finite state from then on and gains no more heat; its peak stays above the
    limit, so every reader counts it as over. The time axis runs on for all designs.

    durations_s : optional list, one (N,) array or float per step, overriding step.duration_s (used
    by sweeps whose designs differ in their waits).
    stop_above_K : optional; stop after the first step by whose end the bulk oil of every design has
    been above this temperature at a recorded point (the trace then ends there); with stop_count,
    as soon as that many designs have.
    systems : optional dict of the last corrector's system of each kind of constant-input step (and,
    under CURVE_SYSTEM, of the last engine-curve step), per design (take_systems), read at the start
    and updated in place: a session integrated in pieces, each piece given the systems the one
    before left, is the session integrated whole.
    """
    steps = list(steps)             # held for the call: the sub-step inputs are kept by id(step)
    parallel = n_designs >= PARALLEL_FROM_DESIGNS and threads_usable()
    if parallel:
        use_threads()
    T = np.array(np.broadcast_to(np.asarray(T0_K, dtype=float), (n_designs, N_NODES)))
    t = np.array(np.broadcast_to(np.asarray(start_time_s, dtype=float), (n_designs,)))
    H_start = node_enthalpy_J(rig, T)
    times, temps, returns, powers_out, indices = [t.copy()], [T.copy()], [T[:, OIL].copy()], [np.zeros(n_designs)], [-1]
    energy_in = np.zeros(n_designs)
    energy_lost = np.zeros(n_designs)
    pull_start, pull_end = [], []
    been_above = np.zeros(n_designs, bool)
    held = np.zeros(n_designs, bool)
    T_first = T.copy()
    power_scale = np.array(per_design(rig.power_multiplier, n_designs))
    last_system = {} if systems is None else systems   # the last corrector's system of each kind of step
    step_inputs = {}                                    # (id(step), n_sub): its sub-steps' flows and powers
    for index, step in enumerate(steps):
        duration = per_design(step.duration_s if durations_s is None else durations_s[index], n_designs)
        n_sub = resolution.substeps(step, float(np.max(duration)))
        h = duration / n_sub
        if step.is_pull:
            pull_start.append(t.copy())
        constant_inputs = step.curve is None
        key = _inputs_key(step) if constant_inputs else CURVE_SYSTEM    # a curve's: a warm start only
        stored = last_system.get(key)
        system = stored if stored is not None else _new_system(n_designs, N_NODES)
        if (id(step), n_sub) not in step_inputs:
            step_inputs[id(step), n_sub] = _sub_step_inputs(rig, step, n_sub, power_scale, n_designs)
        flows, powers = step_inputs[id(step), n_sub]
        advance = advance_step_parallel if parallel else advance_step
        step_temps, rises = advance(rig.params, T, held, T_first, flows, powers, np.ascontiguousarray(h, dtype=float),
                                    air_or_standard(rig.air_columns), constant_inputs, stored is not None,
                                    give_up_above_K, *system, energy_in, energy_lost)
        last_system[key] = system
        for k in range(n_sub):
            t = t + h
            times.append(t)
            temps.append(step_temps[k])
            powers_out.append(powers[k])
            returns.append(step_temps[k, :, OIL] + rises[k] if step.flowing else step_temps[k, :, OIL])
            indices.append(index)
        if stop_above_K is not None:
            been_above |= np.any(step_temps[:, :, OIL] > stop_above_K, axis=0)
        if step.is_pull:
            pull_end.append(t.copy())
        if stop_above_K is not None and (been_above.all() or (stop_count is not None
                                                              and np.count_nonzero(been_above) >= stop_count)):
            break
    stored = np.sum(node_enthalpy_J(rig, T) - H_start, axis=1)
    return Trace(time_s=np.array(times), T_K=np.array(temps), return_K=np.array(returns),
                 power_W=np.array(powers_out), step_index=np.array(indices), energy_in_J=energy_in,
                 energy_lost_J=energy_lost, energy_stored_J=stored,
                 pull_start_s=np.array(pull_start).reshape(-1, n_designs),
                 pull_end_s=np.array(pull_end).reshape(-1, n_designs),
                 hose_liner_share=rig.constants["hose_liner_share"])

