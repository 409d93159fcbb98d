"""The present temperature of every node, estimated from a growing log: an extended Kalman filter.

Over one logged interval the network is linearised at the interval's mid-point (the integrator's
corrector state): C dT/dt = -L T + b, so T(t + dt) = F T(t) + u with F = expm(-C^-1 L dt). The mean
is carried by the package's own integrator (energy-exact); F carries the covariance. Sensors see the
oil only: the bulk oil, or the return line (bulk plus P / (m_dot c_p), a known offset over the
interval). Kalman filter equations: e.g. Simon, Optimal State Estimation, Wiley 2006, ch. 5 and 13
(extended filter); innovation gating: Bar-Shalom, Li and Kirubarajan, Estimation with Applications
to Tracking and Navigation, Wiley 2001, sec. 5.4.

Noise, stated as engineering judgement:
- measurement: 0.3 K standard deviation, a thermocouple read by a logger (0.2-0.5 K, common
  practice, no source);
- process (the model's error): each node's predicted change over the interval is uncertain by
  MODEL_ERROR_FRACTION of itself (the correlations' scatter is of that order), plus a slow random
  walk;
- an unmodelled heat flow into the oil (W, one more state, a random walk): a thermal mass or a
  loss path the scenario lacks shows up as a slow, steady misfit, which this state takes up.
  The forecast of the next pull carries it when it adds heat (live_forecast).
When the innovations stay larger than the filter expects (a model that is wrong, not only
  noisy), the process noise is scaled up by their recent mean square, so the estimate follows the
  measurement more closely and its stated uncertainty grows.

Every array is generic in the node count: a state has one entry per `network.NODE_NAMES`.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy.linalg import expm

from .network import OIL, Inputs, NODE_NAMES, Rig, node_equations, return_line_rise_K
from .session import Resolution, Step, pump_flow_m3_s
from .solver import integrate

MEASUREMENT_SD_K = 0.3
MODEL_ERROR_FRACTION = 0.10
RANDOM_WALK_K_PER_SQRT_S = 0.002
DISTURBANCE_SD_W = 50.0        # the unmodelled heat flow into the oil at the start, give or take this
DISTURBANCE_WALK_W_PER_SQRT_S = 1.0
INITIAL_SD_K = 2.0             # hidden nodes at the first reading: equal to the oil, give or take this
GATE_SIGMAS = 5.0              # a reading this many standard deviations from the prediction is a spike
ADAPT_WINDOW = 20              # readings over which the innovations' mean square is taken
# One sub-step per interval up to 30 s, as the log fit integrates its model.
INTERVAL_RESOLUTION = Resolution(pull_substeps=1, curve_substeps=2, max_substep_s=30.0, max_substeps=100_000)


@dataclass(frozen=True)
class Estimate:
    """The filter's state after the reading at time_s.

    state (n + 1,): the node temperatures in NODE_NAMES order, K, then the unmodelled heat flow
    into the oil, W. cov (n + 1, n + 1) their covariance (K^2, K W, W^2).
    recent_nis : the last normalised innovations squared (a tuple, at most ADAPT_WINDOW).
    rejected_in_a_row : readings rejected as spikes since the last one accepted.
    """
    time_s: float
    state: np.ndarray
    cov: np.ndarray
    recent_nis: tuple = ()
    rejected_in_a_row: int = 0
    last_rejected_sign: float = 0.0

    @property
    def mean_K(self) -> np.ndarray:
        return self.state[:len(NODE_NAMES)]

    @property
    def disturbance_W(self) -> float:
        return float(self.state[len(NODE_NAMES)])

    @property
    def established_disturbance_W(self) -> float:
        """The unmodelled heat flow into the oil less one standard deviation, at least 0: a flow the
        log has shown, not one within its noise."""
        return max(self.disturbance_W - float(np.sqrt(max(self.cov[-1, -1], 0.0))), 0.0)

    @property
    def sd_K(self) -> np.ndarray:
        return np.sqrt(np.maximum(np.diag(self.cov), 0.0))[:len(NODE_NAMES)]

    @property
    def misfit_scale(self) -> float:
        """Mean normalised innovation squared over the recent readings, at least 1 (1 = the model
        explains the log as well as the noise allows)."""
        return max(1.0, float(np.mean(self.recent_nis))) if self.recent_nis else 1.0


def initial_estimate(time_s: float, oil_K: float, sd_K: float = INITIAL_SD_K) -> Estimate:
    """Every node at the first oil reading; the oil known to the sensor's noise, the others to sd_K."""
    n = len(NODE_NAMES)
    sd = np.full(n + 1, sd_K)
    sd[OIL], sd[n] = MEASUREMENT_SD_K, DISTURBANCE_SD_W
    state = np.append(np.full(n, float(oil_K)), 0.0)
    return Estimate(time_s=float(time_s), state=state, cov=np.diag(sd**2))


def interval_inputs(rig: Rig, step: Step) -> Inputs:
    """The mean inputs of a step, for the linearisation over it."""
    flow = pump_flow_m3_s(rig.displacement_m3, float(step.rpm_at(0.5)), rig.volumetric_efficiency)
    return Inputs(power_W=np.array([step.mean_power_W(0.0, 1.0) * np.mean(rig.power_multiplier)]),
                  volume_flow_m3_s=np.array([float(flow)]))


def propagate_mean(rig: Rig, mean_K: np.ndarray, steps: list[Step]) -> np.ndarray:
    """The node temperatures after `steps`, by the package's integrator."""
    return integrate(rig, list(steps), mean_K[None, :], resolution=INTERVAL_RESOLUTION).final_K[0]


def transition_matrix(rig: Rig, start_K: np.ndarray, end_K: np.ndarray, step: Step) -> np.ndarray:
    """F = expm(A dt) (n + 1, n + 1) of the network frozen at the step's mid-point, augmented with
    the unmodelled heat flow into the oil: A = [[-C^-1 L, e_oil / C_oil], [0, 0]]. Its last column
    is the nodes' response to one watt of that flow."""
    C, L = node_equations(rig, 0.5 * (start_K + end_K)[None, :], interval_inputs(rig, step))[:2]
    n = C.shape[1]
    A = np.zeros((n + 1, n + 1))
    A[:n, :n] = -L[0] / C[0][:, None]
    A[OIL, n] = 1.0 / C[0, OIL]
    return expm(A * step.duration_s)


def predict(rig: Rig, estimate: Estimate, steps: list[Step]) -> Estimate:
    """The estimate carried over one interval, the rig driven by `steps` in turn (their durations
    add up to the interval's)."""
    n = len(NODE_NAMES)
    state, P = estimate.state.copy(), estimate.cov
    for step in steps:
        start = state[:n].copy()
        end = propagate_mean(rig, start, [step])
        F = transition_matrix(rig, start, end, step)
        end = end + F[:n, n] * state[n]
        q = np.append((MODEL_ERROR_FRACTION * (end - start)) ** 2 + RANDOM_WALK_K_PER_SQRT_S**2 * step.duration_s,
                      DISTURBANCE_WALK_W_PER_SQRT_S**2 * step.duration_s)
        P = F @ P @ F.T + estimate.misfit_scale * np.diag(q)
        state[:n] = end
    duration = sum(step.duration_s for step in steps)
    return replace(estimate, time_s=estimate.time_s + duration, state=state, cov=0.5 * (P + P.T))


def sensor_offset_K(rig: Rig, estimate: Estimate, step: Step, sensor: str) -> float:
    """What the sensor reads above the bulk oil: 0 in the reservoir, the return-line rise in the
    return line (with the step's mean inputs)."""
    if sensor == "bulk":
        return 0.0
    return float(return_line_rise_K(rig, estimate.mean_K[OIL], interval_inputs(rig, step))[0])


def innovation(estimate: Estimate, reading_K: float, offset_K: float = 0.0):
    """(innovation K, its variance K^2) of a reading of the oil (plus a known offset)."""
    return reading_K - offset_K - estimate.state[OIL], estimate.cov[OIL, OIL] + MEASUREMENT_SD_K**2


def update(estimate: Estimate, reading_K: float, offset_K: float = 0.0) -> tuple[Estimate, bool]:
    """Take one reading into the estimate. Returns (estimate, accepted).

    A NaN reading is skipped. A reading further than GATE_SIGMAS from the prediction is rejected as
    a spike, unless the reading before it was rejected on the same side too: two in a row mean the
    oil really is there (a step the model missed), and the estimate's uncertainty is widened to
    take it.
    """
    if not np.isfinite(reading_K):
        return estimate, False
    nu, S = innovation(estimate, reading_K, offset_K)
    sign = float(np.sign(nu))
    if nu * nu > GATE_SIGMAS**2 * S:
        if not (estimate.rejected_in_a_row and sign == estimate.last_rejected_sign):
            return replace(estimate, rejected_in_a_row=estimate.rejected_in_a_row + 1, last_rejected_sign=sign), False
        P = estimate.cov + np.diag(np.append(np.full(len(NODE_NAMES), nu * nu), 0.0))
        estimate = replace(estimate, cov=P)
        nu, S = innovation(estimate, reading_K, offset_K)
    P = estimate.cov
    gain = P[:, OIL] / S
    state = estimate.state + gain * nu
    I_KH = np.eye(P.shape[0])
    I_KH[:, OIL] -= gain
    P = I_KH @ P @ I_KH.T + np.outer(gain, gain) * MEASUREMENT_SD_K**2     # Joseph form
    nis = (estimate.recent_nis + (nu * nu / S,))[-ADAPT_WINDOW:]
    return Estimate(time_s=estimate.time_s, state=state, cov=0.5 * (P + P.T), recent_nis=nis), True


def detected_pull_fraction(rig: Rig, estimate: Estimate, reading_K: float, pull: Step, wait: Step,
                           sensor: str, pulling: bool = False) -> float:
    """Fraction 0..1 of an interval spent pulling, from the oil's rise over it (a log without pull
    or power columns). 0 unless the reading lies more than three standard deviations above what a
    wait would give (one, while a pull is already running: a pull goes on more easily than it
    starts); else the fraction that best explains the reading, between a wait (0) and a
    whole-interval pull (1)."""
    if not np.isfinite(reading_K):
        return 0.0
    waited, pulled = predict(rig, estimate, [wait]), predict(rig, estimate, [pull])
    nu_wait, S = innovation(waited, reading_K, sensor_offset_K(rig, waited, wait, sensor))
    if nu_wait <= (1.0 if pulling else 3.0) * np.sqrt(S):
        return 0.0
    rise = (pulled.state[OIL] + sensor_offset_K(rig, pulled, pull, sensor)
            - waited.state[OIL] - sensor_offset_K(rig, waited, wait, sensor))
    return float(np.clip(nu_wait / rise, 0.0, 1.0)) if rise > 0 else 0.0
