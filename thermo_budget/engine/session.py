"""The session: an ordered list of pulls and waits, and the inputs they put into the network.

A pull absorbs a constant power at a constant speed, or follows an engine curve (power against rpm)
swept linearly in time between two speeds. A wait has the engine off (no flow) or idling (flow and
a small parasitic load). All absorbed power heats the oil.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

# 4-point Gauss-Legendre nodes and weights on [0, 1], for sub-step averages of a curve's power.
_GL_X, _GL_W = np.polynomial.legendre.leggauss(4)
_GL_X, _GL_W = 0.5 * (_GL_X + 1.0), 0.5 * _GL_W


@dataclass(frozen=True)
class EngineCurve:
    """Absorbed power against engine speed, linearly interpolated. rpm in rev/min, power in W."""
    rpm: tuple
    power_W: tuple

    def power_at(self, rpm):
        return np.interp(rpm, self.rpm, self.power_W)


@dataclass(frozen=True)
class Step:
    """One step of the session.

    kind : "pull" or "wait". duration_s : s. engine : "on" (a pull), "off" or "idle" (a wait).
    power_W : constant absorbed power of a pull, or the parasitic load while idling.
    rpm : constant speed (rev/min) of a pull or of idling.
    curve, rpm_start, rpm_end : an engine-curve pull swept from rpm_start to rpm_end.
    """
    kind: str
    duration_s: float
    engine: str = "off"
    power_W: float = 0.0
    rpm: float = 0.0
    curve: EngineCurve | None = None
    rpm_start: float = 0.0
    rpm_end: float = 0.0

    @property
    def is_pull(self) -> bool:
        return self.kind == "pull"

    @property
    def flowing(self) -> bool:
        return self.engine in ("on", "idle")

    def rpm_at(self, fraction):
        """Engine speed (rev/min) at a fraction 0..1 of the step."""
        if self.curve is not None:
            return self.rpm_start + (self.rpm_end - self.rpm_start) * np.asarray(fraction)
        return np.full_like(np.asarray(fraction, dtype=float), self.rpm if self.flowing else 0.0)

    def power_at(self, fraction):
        """Absorbed power (W) at a fraction 0..1 of the step."""
        if self.curve is not None:
            return self.curve.power_at(self.rpm_at(fraction))
        return np.full_like(np.asarray(fraction, dtype=float), self.power_W if self.flowing else 0.0)

    def mean_power_W(self, f0: float, f1: float) -> float:
        """Average power over the fraction [f0, f1] of the step (Gauss-Legendre, 4 points)."""
        return float(np.dot(_GL_W, self.power_at(f0 + (f1 - f0) * _GL_X)))

    def peak_power_W(self) -> float:
        if self.curve is not None:
            speeds = np.concatenate([[self.rpm_start, self.rpm_end],
                                     [r for r in self.curve.rpm if min(self.rpm_start, self.rpm_end) <= r
                                      <= max(self.rpm_start, self.rpm_end)]])
            return float(np.max(self.curve.power_at(speeds)))
        return self.power_W if self.flowing else 0.0

    def with_duration(self, duration_s: float) -> "Step":
        return replace(self, duration_s=duration_s)


def shaft_power_W(torque_N_m, rpm):
    """Shaft power P = tau omega = tau 2 pi n / 60, W; n in rev/min."""
    return np.asarray(torque_N_m) * 2.0 * np.pi * np.asarray(rpm) / 60.0


def pump_flow_m3_s(displacement_m3: float, rpm, volumetric_efficiency: float):
    """Pump delivery Q = D n eta_v, m^3/s; D per revolution, n in rev/min."""
    return displacement_m3 * np.asarray(rpm) / 60.0 * volumetric_efficiency


def pump_pressure_Pa(power_W, flow_m3_s):
    """Pressure across pump and valve that absorbs power_W at flow_m3_s: dp = P / Q, Pa."""
    return np.asarray(power_W) / np.asarray(flow_m3_s)


@dataclass(frozen=True)
class Resolution:
    """How finely steps are cut into sub-steps for the exponential integrator.

    pull_substeps : sub-steps per constant-power pull (more only for trace detail).
    curve_substeps : sub-steps per engine-curve pull (the power changes inside it).
    max_substep_s : longest sub-step, s (coefficients are refreshed this often), as long as a step
        needs no more than max_substeps; longer steps get max_substeps equal sub-steps.
    """
    pull_substeps: int = 4
    curve_substeps: int = 12
    max_substep_s: float = 60.0
    max_substeps: int = 40

    def substeps(self, step: Step, longest_duration_s: float) -> int:
        n = min(int(np.ceil(longest_duration_s / self.max_substep_s)), self.max_substeps)
        if step.is_pull:
            n = max(n, self.curve_substeps if step.curve is not None else self.pull_substeps)
        return max(n, 1)


# The searches' resolution. Against the tight reference (tests/test_solver.py) the bulk oil stays
# within 0.025 K on the shipped scenarios (0.05 K asked); on the benchmark's 5 L tank the peak is
# 0.033 K off solve_ivp. A longest sub-step of 180 s (a 3-minute wait in one) was a third faster
# but put that tank's peak 0.077 K off. Six sub-steps per engine-curve pull (was eight) are a quarter
# cheaper on a curve day. Against a fine resolution (64 per pull, 10 s sub-steps) on the plastic
# drum's 200-pull day: the bulk peak 0.002 K off (0.006 K at eight), the return line's peak 0.11 K
# high (0.09 K at eight); on that drum with 16 times the oil (6 pulls) the return line read 0.031 K
# low (0.024 K at eight): the sign is the rig's, six sub-steps move it by 0.01-0.04 K. Against the
# Radau reference the drum's other nodes are 20 mK off (3 mK at eight); at four sub-steps the
# bulk was 0.015 K off on the 200-pull day.
PLAN_RESOLUTION = Resolution(pull_substeps=1, curve_substeps=6, max_substep_s=120.0, max_substeps=6)

