"""The present temperature of every node, estimated from a growing log: an extended Kalman filter
whose cost per reading is a few small matrix products, so a day logged every second is read in
seconds.

The network is frozen (linearised) at the filter's state for one pump flow:
C dT/dt = -L T + b0 + P b1 + d e_oil, with P the logged absorbed power and d an unmodelled heat
flow into the oil. Over an interval dt the frozen system is solved exactly through its symmetrised
eigen-decomposition (as the package's integrator does), T(t + dt) = Phi T + G (b0 + P b1 + d e_oil),
and Phi, G are kept for each interval length. The network is frozen again when a node has moved
RELINEARISE_K from the state it was frozen at, after RELINEARISE_S, or for another pump flow, so
the linearisation stays as fresh as the integrator's sub-steps. Sensors see the oil only: the bulk
oil, or the return line (bulk plus P / (m_dot c_p), a known offset). Kalman filter equations: e.g.
Simon, Optimal State Estimation, Wiley 2006, ch. 5 and 13 (extended filter); innovation gating:
Bar-Shalom, Li and Kirubarajan, Estimation with Applications to Tracking and Navigation, Wiley
2001, sec. 5.4.

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

At a pull flag's edge the filter knows the pull's start or end only to the sample interval (see
`LiveFilter.advance`): the heat of one interval of pull is added to its uncertainty there, so a
step in the reading that the flag explains is never taken for a spike.

The filter keeps the present state and its covariance only; nothing grows with the log.
Every array is generic in the node count: a state has one entry per `network.NODE_NAMES`.
"""
from __future__ import annotations

import copy
from collections import deque
from dataclasses import dataclass

import numpy as np
from scipy.linalg import expm

from ..physics.network import OIL, Inputs, NODE_NAMES, Rig, node_equations, return_line_rise_K
from ..engine.session import Step, pump_flow_m3_s
from ..engine.solver import decompose

MEASUREMENT_SD_K = 0.3
MODEL_ERROR_FRACTION = 0.10
RANDOM_WALK_K_PER_SQRT_S = 0.002
DISTURBANCE_SD_W = 50.0        # the unmodelled heat flow into the oil at the start, give or take this
DISTURBANCE_WALK_W_PER_SQRT_S = 1.0
INITIAL_SD_K = 2.0             # hidden nodes at the first reading: equal to the oil, give or take this
GATE_SIGMAS = 5.0              # a reading this many standard deviations from the prediction is a spike
ADAPT_WINDOW = 20              # readings over which the innovations' mean square is taken
RELINEARISE_K = 2.0            # freeze the network again once a node has moved this far ...
RELINEARISE_S = 600.0          # ... or this long after it was frozen
LONGEST_INTERVAL_S = 30.0      # a longer interval between readings is predicted in parts of at most this
REFERENCE_POWER_W = 1000.0     # b1 is taken from b at 0 and at this power


@dataclass(frozen=True)
class Estimate:
    """The filter's state after the reading at time_s.

    state (n + 1,): the node temperatures in NODE_NAMES order, K, then the unmodelled heat flow
    into the oil, W. cov (n + 1, n + 1) their covariance (K^2, K W, W^2).
    recent_nis : the last normalised innovations squared (a tuple, at most ADAPT_WINDOW).
    """
    time_s: float
    state: np.ndarray
    cov: np.ndarray
    recent_nis: tuple = ()

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


class FrozenNetwork:
    """The network frozen at the state at_K for one pump flow (m^3/s), with the exact solution over
    an interval of any length (`over(dt)`, kept per length)."""

    def __init__(self, rig: Rig, at_K: np.ndarray, flow_m3_s: float, time_s: float):
        n = len(NODE_NAMES)
        self.at_K, self.flow_m3_s, self.time_s = at_K.copy(), float(flow_m3_s), float(time_s)
        power_scale = float(np.mean(rig.power_multiplier))
        T = np.repeat(at_K[None, :], 2, axis=0)
        inputs = Inputs(power_W=np.array([0.0, REFERENCE_POWER_W * power_scale]),
                        volume_flow_m3_s=np.full(2, self.flow_m3_s))
        C, L, b = node_equations(rig, T, inputs)[:3]
        self.system = decompose(C[:1], L[:1])
        self.b0 = b[0]
        self.b1 = (b[1] - b[0]) / REFERENCE_POWER_W        # per logged watt
        self.unit_oil = np.zeros(n)
        self.unit_oil[OIL] = 1.0
        rise = return_line_rise_K(rig, at_K[OIL], Inputs(power_W=power_scale, volume_flow_m3_s=self.flow_m3_s))
        self.return_rise_K_per_W = float(rise)
        self._over, self._last = {}, (None, None)

    def over(self, dt_s: float):
        """(Phi (n+1, n+1), g0 (n+1,), g1 (n+1,), q0 (n+1,)) over dt_s: the augmented state after
        the interval is Phi x + g0 + P g1 for a logged power P (W) held over it; q0 is the process
        noise's random-walk part over it (variances)."""
        if self._last[0] == dt_s:
            return self._last[1]
        key = round(dt_s, 9)
        if key not in self._over:
            if len(self._over) > 16:
                self._over.clear()
            self._over[key] = self._solve(dt_s)
        self._last = (dt_s, self._over[key])
        return self._over[key]

    def _solve(self, dt_s: float):
        root, inv_root, lam, V, _ = self.system
        root, inv_root, lam, V = root[0], inv_root[0], lam[0], V[0]
        x = lam * dt_s
        small = np.abs(x) < 1e-4                     # phi1(x) = (e^x - 1) / x, by its series near 0
        phi1 = np.where(small, 1.0 + 0.5 * x + x * x / 6.0, np.expm1(x) / np.where(small, 1.0, x))
        left = inv_root[:, None] * V
        Phi_T = (left * np.exp(x)) @ (V.T * root[None, :])
        G = (left * (phi1 * dt_s)) @ (V.T * inv_root[None, :])      # the integral of the response, s/(J/K)
        n = Phi_T.shape[0]
        Phi = np.zeros((n + 1, n + 1))
        Phi[:n, :n] = Phi_T
        Phi[:n, n] = G[:, OIL]
        Phi[n, n] = 1.0
        q0 = np.full(n + 1, RANDOM_WALK_K_PER_SQRT_S**2 * dt_s)
        q0[n] = DISTURBANCE_WALK_W_PER_SQRT_S**2 * dt_s
        return Phi, np.append(G @ self.b0, 0.0), np.append(G @ self.b1, 0.0), q0


class LiveFilter:
    """The filter over a log read row by row. `advance` takes one interval and its reading.

    Its state is the present estimate (mean, covariance, the recent innovations) and the networks
    frozen for the pump flows seen lately; `copy()` gives an independent one (the watch works out
    its latest, not yet final, row on a copy).
    """

    def __init__(self, rig: Rig, time_s: float, oil_K: float, sensor: str = "bulk"):
        start = initial_estimate(time_s, oil_K)
        self.rig, self.sensor = rig, sensor
        self.time_s, self.x, self.P = start.time_s, start.state.copy(), start.cov.copy()
        self.nis, self.nis_sum = deque(maxlen=ADAPT_WINDOW), 0.0
        self.rejected_in_a_row, self.last_rejected_sign = 0, 0.0
        self.frozen: dict = {}
        self._source = (None, None, None)         # (g0, power, g0 + power g1) of the last interval

    def copy(self) -> "LiveFilter":
        other = copy.copy(self)
        other.x, other.P, other.nis, other.frozen = self.x.copy(), self.P.copy(), deque(self.nis, ADAPT_WINDOW), dict(self.frozen)
        return other

    @property
    def estimate(self) -> Estimate:
        return Estimate(time_s=self.time_s, state=self.x.copy(), cov=self.P.copy(), recent_nis=tuple(self.nis))

    def set_rig(self, rig: Rig):
        """A changed rig (a new ambient): the networks are frozen again."""
        if rig is not self.rig:
            self.rig, self.frozen = rig, {}

    def network(self, flow_m3_s: float) -> FrozenNetwork:
        """The network frozen for this flow, frozen again where it has gone stale."""
        net = self.frozen.get(flow_m3_s)
        n = len(NODE_NAMES)
        if (net is None or self.time_s - net.time_s > RELINEARISE_S
                or np.abs(self.x[:n] - net.at_K).max() > RELINEARISE_K):
            net = self.frozen[flow_m3_s] = FrozenNetwork(self.rig, self.x[:n], flow_m3_s, self.time_s)
        return net

    def _predict(self, net: FrozenNetwork, dt_s: float, power_W: float):
        """(mean, covariance) carried over dt_s with the power held, without changing the filter."""
        Phi, g0, g1, q0 = net.over(dt_s)
        if self._source[0] is not g0 or self._source[1] != power_W:
            self._source = (g0, power_W, g0 + power_W * g1)
        x = Phi @ self.x + self._source[2]
        change = x - self.x                          # 0 for the heat flow, which is held
        q = q0 + (MODEL_ERROR_FRACTION * MODEL_ERROR_FRACTION) * change * change
        P = Phi @ self.P @ Phi.T
        P.flat[::P.shape[0] + 1] += self.misfit_scale * q
        return x, P

    @property
    def misfit_scale(self) -> float:
        return max(1.0, self.nis_sum / len(self.nis)) if self.nis else 1.0

    def offset_K(self, net: FrozenNetwork, power_W: float) -> float:
        """What the sensor reads above the bulk oil with this power: 0 in the reservoir."""
        return power_W * net.return_rise_K_per_W if self.sensor == "return" else 0.0

    def advance(self, time_s: float, flow_m3_s: float, power_W: float, reading_K: float,
                edge: int = 0, edge_power_W: float = 0.0, pull_flow_m3_s: float = 0.0) -> bool | None:
        """Carry the estimate to time_s over an interval with the pump's flow and the logged power
        held, then take the reading there (NaN: none). Returns True if it was taken, False if
        rejected as a spike, None if there was none.

        edge : +1 (a wait row) or -1 (a pull row) where the row lies at a pull flag's edge, its own
        or its neighbour's: the pull may have started or ended anywhere in the interval, so the
        heat of a whole interval of pull (edge_power_W at pull_flow_m3_s) is uncertain: its effect
        on every node is added to the estimate's covariance before the reading is taken. With the
        return-line sensor the reading may also lie a whole return-line rise above (+1) or below
        (-1) the prediction: it is judged by its distance from that range, and taken with the
        range's middle as its prediction and a quarter of its square added to its variance.
        """
        dt = time_s - self.time_s
        parts = max(int(np.ceil(dt / LONGEST_INTERVAL_S - 1e-9)), 1)
        for _ in range(parts):
            net = self.network(flow_m3_s)
            self.x, self.P = self._predict(net, dt / parts, power_W)
            self.time_s += dt / parts
        self.time_s = float(time_s)
        offset_step = 0.0
        if edge:
            pulled = self.network(pull_flow_m3_s)
            step = edge_power_W * (pulled.over(dt)[2] if dt > 0 else 0.0)
            self.P = self.P + step[:, None] * step[None, :]
            offset_step = edge * self.offset_K(pulled, edge_power_W)
        if not np.isfinite(reading_K):
            return None
        return self._take(reading_K - self.offset_K(net, power_W), offset_step)

    def _take(self, reading_K: float, edge_K: float = 0.0) -> bool:
        """Take a reading of the bulk oil (its sensor offset already taken off); edge_K the signed
        step a flag edge may explain."""
        P = self.P
        nu = float(reading_K - self.x[OIL])
        S = float(P[OIL, OIL]) + MEASUREMENT_SD_K**2
        outside = nu - min(max(nu, min(0.0, edge_K)), max(0.0, edge_K))     # distance from the edge's range
        sign = 1.0 if outside > 0 else -1.0 if outside < 0 else 0.0
        if outside * outside > GATE_SIGMAS**2 * S:
            if not (self.rejected_in_a_row and sign == self.last_rejected_sign):
                self.rejected_in_a_row += 1
                self.last_rejected_sign = sign
                return False
            # two in a row on the same side: the oil really is there (a step the model missed)
            P = P + np.diag(np.append(np.full(len(NODE_NAMES), outside * outside), 0.0))
            S = P[OIL, OIL] + MEASUREMENT_SD_K**2
        self.rejected_in_a_row, self.last_rejected_sign = 0, 0.0
        if edge_K:
            nu -= 0.5 * edge_K
            S += 0.25 * edge_K * edge_K
        column = P[:, OIL]
        self.x = self.x + column * (nu / S)
        self.P = P - column[:, None] * (column[None, :] / S)
        if len(self.nis) == ADAPT_WINDOW:
            self.nis_sum -= self.nis[0]
        self.nis.append(nu * nu / S)
        self.nis_sum += nu * nu / S
        return True

    def advance_detecting(self, time_s: float, wait: tuple, pull: tuple, reading_K: float,
                          pulling: bool) -> tuple[float, bool | None]:
        """One interval of a log without pull or power columns: the fraction 0..1 of it spent
        pulling is told from the oil's rise, then the reading is taken. wait, pull : (flow m^3/s,
        power W) of the scenario's wait and pull. Returns (fraction, taken as in `advance`).

        The fraction is 0 unless the reading lies more than three standard deviations above what a
        wait would give (one, while a pull is already running: a pull goes on more easily than it
        starts); else the one that best explains the reading, between a wait (0) and a
        whole-interval pull (1)."""
        dt = time_s - self.time_s
        if dt > LONGEST_INTERVAL_S:                  # a gap: waited, then the last part told from the rise
            self.advance(time_s - LONGEST_INTERVAL_S, wait[0], wait[1], np.nan)
            dt = LONGEST_INTERVAL_S
        if not np.isfinite(reading_K):
            return 0.0, self.advance(time_s, wait[0], wait[1], reading_K)
        net_w, net_p = self.network(wait[0]), self.network(pull[0])
        x_w, P_w = self._predict(net_w, dt, wait[1])
        x_p, P_p = self._predict(net_p, dt, pull[1])
        seen_w = x_w[OIL] + self.offset_K(net_w, wait[1])
        seen_p = x_p[OIL] + self.offset_K(net_p, pull[1])
        nu_w = reading_K - seen_w
        f = 0.0
        if nu_w > (1.0 if pulling else 3.0) * np.sqrt(P_w[OIL, OIL] + MEASUREMENT_SD_K**2) and seen_p > seen_w:
            f = float(np.clip(nu_w / (seen_p - seen_w), 0.0, 1.0))
            if pulling and f >= 0.5:                     # a running pull ends only on a clear drop in the rise
                f = 1.0
        # a pull starting inside the interval ends it pulling; one ending inside it ends it waiting
        ends_pulling = f >= 1.0 or (f > 0.0 and not pulling)
        self.x, self.P = (1.0 - f) * x_w + f * x_p, (1.0 - f) * P_w + f * P_p
        self.time_s = float(time_s)
        offset = self.offset_K(net_p, pull[1]) if ends_pulling else self.offset_K(net_w, wait[1])
        return f, self._take(reading_K - offset)
