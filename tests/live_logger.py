"""A simulated data logger for the live-watch tests: our own model (or a model with an extra thermal
mass it lacks) run through a planned session, read every few seconds with Gaussian noise, written
to a CSV file line by line.

Every rig here is invented for the tests.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from thermo_budget.physics.network import OIL, Inputs, NODE_NAMES, node_equations
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.engine.session import Resolution, Step, pump_flow_m3_s
from thermo_budget.engine.solver import integrate, propagate_linear
from thermo_budget.units import ZERO_CELSIUS_K

from conftest import SCENARIO_DIR

ONE_SUBSTEP = Resolution(pull_substeps=1, curve_substeps=1, max_substep_s=1e9, max_substeps=1)
NOISE_K = 0.3


def hot_start_scenario(**changes):
    """The default demo rig with 9 kW pulls of 30 s and 2 min idling waits, from 53 degC: after three
    of its ten pulls, the next one has to wait for the oil to cool."""
    raw = {"session.start_temperature": "53 degC", "session.repeat": 10,
           "session.steps": [{"kind": "pull", "duration": "30 s", "power": "9 kW", "rpm": 3600},
                             {"kind": "wait", "duration": "2 min", "engine": "idle", "power": "150 W", "rpm": 1400}]}
    raw.update(changes)
    return load_scenario(SCENARIO_DIR / "default.toml").changed(**raw)


def sample_pieces(steps, dt_s: float):
    """The steps cut into pieces of dt_s (the logger's sample interval), in order."""
    pieces = []
    for step in steps:
        n = max(int(round(step.duration_s / dt_s)), 1)
        pieces += [step.with_duration(step.duration_s / n)] * n
    return pieces


@dataclass
class LoggedDay:
    """The truth at every sample: time_s (M,), state_K (M, k) (k nodes, maybe one more than the
    scenario's), the logged oil reading (M,) with noise, pull and power per interval (M,)."""
    time_s: np.ndarray
    state_K: np.ndarray
    reading_K: np.ndarray
    pull: np.ndarray
    power_W: np.ndarray

    def lines(self, header="time_s,oil_C,pull,power_W", columns=("pull", "power")):
        out = []
        for i in range(self.time_s.size):
            cells = [f"{self.time_s[i]:.1f}", f"{self.reading_K[i] - ZERO_CELSIUS_K:.3f}"]
            if "pull" in columns:
                cells.append(str(int(self.pull[i])))
            if "power" in columns:
                cells.append(f"{self.power_W[i]:.0f}")
            out.append(",".join(cells))
        return [header] + out


def log_day(scenario, dt_s=5.0, seed=1, extra_mass=None, pieces=None) -> LoggedDay:
    """Run the scenario's planned session (or `pieces`) and read it every dt_s with noise.

    extra_mass : None, or (capacity J/K, conductance to the oil W/K[, its start temperature K]): a
    body in the oil the scenario lacks (a baffle or a heavy suction strainer), making the truth
    structurally different.
    """
    rig = build_rig(scenario)
    pieces = sample_pieces(scenario.steps, dt_s) if pieces is None else pieces
    if extra_mass is None:
        trace = integrate(rig, pieces, scenario.start_K, resolution=ONE_SUBSTEP)
        states = trace.T_K[:, 0, :]
    else:
        start = np.full(len(NODE_NAMES) + 1, scenario.start_K)
        start[-1] = extra_mass[2] if len(extra_mass) > 2 else scenario.start_K
        states = _with_extra_mass(rig, pieces, start, *extra_mass[:2])
    times = np.concatenate([[0.0], np.cumsum([p.duration_s for p in pieces])])
    noise = np.random.default_rng(seed).normal(0.0, NOISE_K, times.size)
    pull = np.array([False] + [p.is_pull for p in pieces])
    power = np.array([0.0] + [p.mean_power_W(0, 1) if p.flowing else 0.0 for p in pieces])
    return LoggedDay(time_s=times, state_K=states, reading_K=states[:, OIL] + noise, pull=pull, power_W=power)


def _with_extra_mass(rig, pieces, start_K, capacity_J_K, conductance_W_K):
    """The network plus one node (index k) exchanging heat with the oil only, from a uniform start
    or a full state (k+1,). States at the end of each piece (one more row than pieces)."""
    k = len(NODE_NAMES)
    T = np.array(np.broadcast_to(np.asarray(start_K, dtype=float), (k + 1,)))[None, :]
    states = [T[0].copy()]
    for piece in pieces:
        T = _extra_mass_piece(rig, piece, T, capacity_J_K, conductance_W_K)
        states.append(T[0].copy())
    return np.array(states)


def _extra_mass_piece(rig, piece, T, capacity_J_K, conductance_W_K, substeps=5):
    """One piece of the (k+1)-node system: exact exponential sub-steps of the frozen system
    (solver.propagate_linear is generic in size)."""
    k = len(NODE_NAMES)
    flow = pump_flow_m3_s(rig.displacement_m3, float(piece.rpm_at(0.5)), rig.volumetric_efficiency)
    inputs = Inputs(power_W=np.array([piece.mean_power_W(0, 1)]), volume_flow_m3_s=np.array([float(flow)]))
    h = np.array([piece.duration_s / substeps])
    for _ in range(substeps):
        C3, L3, b3 = node_equations(rig, T[:, :k], inputs)[:3]
        C = np.concatenate([C3, [[capacity_J_K]]], axis=1)
        L = np.zeros((1, k + 1, k + 1))
        L[:, :k, :k] = L3
        L[:, OIL, OIL] += conductance_W_K
        L[:, k, k] = conductance_W_K
        L[:, OIL, k] = L[:, k, OIL] = -conductance_W_K
        b = np.concatenate([b3, [[0.0]]], axis=1)
        T, _ = propagate_linear(C, L, b, T, h)
    return T


def extra_mass_ready_s(scenario, state_K, pull: Step, wait: Step, limit_K, capacity_J_K, conductance_W_K,
                       margin_K=0.05, dt_s=20.0):
    """The truth's ready time for the structurally different rig: the shortest wait (s, to 1 s)
    after which `pull` ends under the limit, by bisection on the (k+1)-node simulation (inf beyond
    about 80 min)."""
    rig = build_rig(scenario)

    def peak(wait_s):
        pieces = (sample_pieces([wait.with_duration(wait_s)], dt_s) if wait_s > 0 else []) + sample_pieces([pull], 5.0)
        return _with_extra_mass(rig, pieces, state_K, capacity_J_K, conductance_W_K)[:, OIL].max()

    if peak(0.0) <= limit_K - margin_K:
        return 0.0
    low, high = 0.0, 600.0
    while peak(high) > limit_K - margin_K:
        if high > 5000.0:
            return float("inf")       # no wait of the length checked is enough
        low, high = high, 2 * high
    while high - low > 1.0:
        middle = 0.5 * (low + high)
        low, high = (low, middle) if peak(middle) <= limit_K - margin_K else (middle, high)
    return high
