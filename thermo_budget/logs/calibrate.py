"""Calibrate the model from a measured log: fit the convection and heat-capacity multipliers, and
optionally the hardware coupling (the oil -> metal bodies conductance) and a start offset.

The model of the logged day is `log_model.LogModel`; the summary text, the calibrated TOML and the
`fit` command are in `fit_text.py`. The fit is weighted least squares (all readings equal weight) with
scipy.optimize.least_squares on theta = (ln convection multiplier, ln capacity multiplier
[, ln hardware coupling multiplier] [, start offset K]); the logarithms keep the multipliers positive and make their intervals
multiplicative. The 95 % intervals are the usual linearised ones, theta +- t(0.975, n - p) * se with
cov = s^2 (J^T J)^-1, s^2 = RSS / (n - p) (e.g. Seber and Wild, Nonlinear Regression, 1989, ch. 5);
they assume independent noise, and the result says when the residuals show otherwise.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats
from scipy.optimize import least_squares

from ..errors import ScenarioError
from ..display import format_difference, format_temperature
from .log_checks import plausibility_warnings, refuse_implausible, thin_for_fit
from .log_model import FIT_RESOLUTION, LogModel, log_model, predict_log_K
from .measured_log import MeasuredLog, read_log
from ..physics.network import cooling_time_constant_s
from ..inputs.scenario import Scenario, limit_K
from ..inputs.uncertainty import with_fit_posterior
from ..units import ZERO_CELSIUS_K

# re-exported: the log's model and the fit's text live beside this module
__all__ = ["FIT_RESOLUTION", "FitResult", "LogModel", "fit_log", "fit_measured_log", "log_model", "predict_log_K"]

CONVECTION_BOUNDS = (0.01, 10.0)      # the scenario file accepts 0 to 10
CAPACITY_BOUNDS = (0.05, 10.0)        # the scenario file accepts above 0 up to 10
START_OFFSET_BOUNDS_K = (-30.0, 30.0)
COUPLING_BOUNDS = (0.01, 100.0)       # the scenario file accepts above 0 up to 100
DIFFERENCE_STEP = 1e-4                # central-difference step in ln(multiplier), and 1e-4 K x 100 for the offset
STRONG_CORRELATION = 0.95
POOR_RELATIVE_HALF_WIDTH = 0.25
CORRELATED_RESIDUALS = 0.5            # lag-1 autocorrelation of the residuals


@dataclass
class FitResult:
    """The calibrated multipliers, their 95 % intervals and the quality of the fit.

    Temperatures in K (series) and K for differences; ci95 maps each fitted parameter to [low, high]
    (None where the log cannot determine it). Series: time_s, measured_K, fitted_K and
    uncalibrated_K (the scenario as given) at the readings used.
    """
    sensor: str
    units: str
    convection_multiplier: float
    capacity_multiplier: float
    start_offset_K: float | None
    ci95: dict
    correlation: float | None
    rms_K: float
    max_abs_residual_K: float
    rms_uncalibrated_K: float
    noise_K: float
    residual_lag1_autocorrelation: float
    n_points: int
    n_parameters: int
    n_skipped_cells: int
    n_merged_rows: int
    ambient_C: float
    ambient_source: str
    heat_input: str
    time_constant_s: float
    converged: bool
    warnings: list
    notes: list
    time_s: np.ndarray = field(repr=False)
    measured_K: np.ndarray = field(repr=False)
    fitted_K: np.ndarray = field(repr=False)
    uncalibrated_K: np.ndarray = field(repr=False)
    calibrated_scenario: Scenario = field(repr=False, default=None)
    hardware_coupling_multiplier: float | None = None    # None unless it was fitted

    @property
    def residual_K(self) -> np.ndarray:
        return self.measured_K - self.fitted_K

    def to_dict(self, include_series: bool = True) -> dict:
        result = {
            "sensor": self.sensor,
            "convection_multiplier": round(self.convection_multiplier, 5),
            "capacity_multiplier": round(self.capacity_multiplier, 5),
            "start_offset_K": None if self.start_offset_K is None else round(self.start_offset_K, 4),
            "hardware_coupling_multiplier": (None if self.hardware_coupling_multiplier is None
                                             else round(self.hardware_coupling_multiplier, 5)),
            "ci95": {k: None if v is None else [round(v[0], 5), round(v[1], 5)] for k, v in self.ci95.items()},
            "correlation": None if self.correlation is None else round(self.correlation, 4),
            "rms_K": round(self.rms_K, 4),
            "max_abs_residual_K": round(self.max_abs_residual_K, 4),
            "rms_uncalibrated_K": round(self.rms_uncalibrated_K, 4),
            "noise_K": round(self.noise_K, 4),
            "residual_lag1_autocorrelation": round(self.residual_lag1_autocorrelation, 4),
            "n_points": self.n_points,
            "n_parameters": self.n_parameters,
            "n_skipped_cells": self.n_skipped_cells,
            "n_merged_rows": self.n_merged_rows,
            "ambient_C": round(self.ambient_C, 3),
            "ambient_source": self.ambient_source,
            "heat_input": self.heat_input,
            "time_constant_s": round(self.time_constant_s, 1),
            "converged": self.converged,
            "warnings": list(self.warnings),
            "notes": list(self.notes),
        }
        if include_series:
            result["series"] = {"time_s": self.time_s.round(3).tolist(),
                                "measured_C": (self.measured_K - ZERO_CELSIUS_K).round(4).tolist(),
                                "fitted_C": (self.fitted_K - ZERO_CELSIUS_K).round(4).tolist(),
                                "uncalibrated_C": (self.uncalibrated_K - ZERO_CELSIUS_K).round(4).tolist()}
        return result


def fit_log(scenario: Scenario, log_text: str, sensor: str = "bulk", fit_start_offset: bool = False,
            source: str = "log", strict: bool = False, fit_hardware_coupling: bool = False) -> FitResult:
    """Fit the convection and capacity multipliers (and optionally the hardware coupling and a start
    offset) to a log's CSV text. strict : refuse a log that looks implausible (log_checks) instead of
    warning."""
    log = read_log(log_text, sensor, source)
    return fit_measured_log(scenario, log, sensor, fit_start_offset, strict, source, fit_hardware_coupling)


def fit_measured_log(scenario: Scenario, log: MeasuredLog, sensor: str = "bulk",
                     fit_start_offset: bool = False, strict: bool = False, source: str = "log",
                     fit_hardware_coupling: bool = False) -> FitResult:
    """The fit of a read log; a long one is thinned first (log_checks.thin_for_fit)."""
    plausibility = plausibility_warnings(log, scenario.start_K, limit_K(scenario)[0], scenario.units)
    if strict:
        refuse_implausible(plausibility, source)
    log = thin_for_fit(log)
    model = log_model(scenario, log, sensor)
    used = np.isfinite(log.oil_K)
    measured = log.oil_K[used]
    names = (["convection_multiplier", "capacity_multiplier"]
             + (["hardware_coupling_multiplier"] if fit_hardware_coupling else [])
             + (["start_offset_K"] if fit_start_offset else []))
    n_par = len(names)
    index = {name: i for i, name in enumerate(names)}
    coupling_0 = scenario.hardware_coupling_multiplier

    def predictions(thetas: np.ndarray) -> np.ndarray:
        offsets = thetas[:, index["start_offset_K"]] if fit_start_offset else 0.0
        coupling = np.exp(thetas[:, index["hardware_coupling_multiplier"]]) if fit_hardware_coupling else coupling_0
        return model.temperatures_K(np.exp(thetas[:, 0]), np.exp(thetas[:, 1]), offsets, coupling)[:, used]

    cache = {}

    def residuals(theta):
        key = tuple(theta)
        if key not in cache:
            cache[key] = predictions(theta[None, :])[0] - measured
        return cache[key]

    def jacobian(theta):
        steps = np.array([100 * DIFFERENCE_STEP if name == "start_offset_K" else DIFFERENCE_STEP for name in names])
        shifted = np.concatenate([theta[None, :], theta + np.diag(steps), theta - np.diag(steps)])
        values = predictions(shifted)
        cache[tuple(theta)] = values[0] - measured
        return ((values[1:1 + n_par] - values[1 + n_par:]) / (2.0 * steps)[:, None]).T

    bounds = {"convection_multiplier": np.log(CONVECTION_BOUNDS), "capacity_multiplier": np.log(CAPACITY_BOUNDS),
              "hardware_coupling_multiplier": np.log(COUPLING_BOUNDS), "start_offset_K": START_OFFSET_BOUNDS_K}
    start = {"convection_multiplier": np.log(max(scenario.convection_multiplier, CONVECTION_BOUNDS[0])),
             "capacity_multiplier": np.log(scenario.capacity_multiplier),
             "hardware_coupling_multiplier": np.log(coupling_0), "start_offset_K": 0.0}
    lower = [bounds[name][0] for name in names]
    upper = [bounds[name][1] for name in names]
    x0 = np.clip([start[name] for name in names], lower, upper)
    if not np.all(np.isfinite(residuals(np.asarray(x0, dtype=float)))):
        raise ScenarioError(source, "a log the model cannot follow", "a log whose heat input keeps the model's "
                            "temperatures finite (check the power_W column and its unit, W)")
    solution = least_squares(residuals, x0, jac=jacobian, bounds=(lower, upper), method="trf",
                             xtol=1e-10, ftol=1e-12, gtol=1e-10, max_nfev=60)
    theta = solution.x
    residual = residuals(theta)
    J = jacobian(theta)
    n = measured.size
    uncalibrated = model.temperatures_K(scenario.convection_multiplier, scenario.capacity_multiplier, 0.0,
                                        coupling_0)[0, used]
    fitted = measured + residual
    ci95, correlation, relative_half_width, correlations = _intervals(theta, J, residual, names)

    convection, capacity = float(np.exp(theta[0])), float(np.exp(theta[1]))
    offset = float(theta[index["start_offset_K"]]) if fit_start_offset else None
    coupling = float(np.exp(theta[index["hardware_coupling_multiplier"]])) if fit_hardware_coupling else None
    rms = float(np.sqrt(np.mean(residual**2)))
    lag1 = float(np.sum(residual[:-1] * residual[1:]) / max(np.sum(residual**2), 1e-300))
    # Noise from successive differences of the residuals, blind to a slow misfit (von Neumann et
    # al., Ann. Math. Stat. 12, 1941): sigma^2 ~ mean(diff(r)^2) / 2.
    noise = float(np.sqrt(np.mean(np.diff(residual) ** 2) / 2.0))
    tau = cooling_time_constant_s(model.rig.with_changes(convection_multiplier=convection,
                                                         capacity_multiplier=capacity), float(np.max(measured)))
    changes = {"losses.convection_multiplier": float(f"{convection:.4g}"),
               "losses.capacity_multiplier": float(f"{capacity:.4g}")}
    if coupling is not None:
        changes["losses.hardware_coupling_multiplier"] = float(f"{coupling:.4g}")
    calibrated = scenario.changed(**changes)
    in_wait = np.array([piece < 0 or not model.pieces[piece].is_pull for piece in model.point_piece[used]])
    warnings = plausibility + _warnings(scenario, log, measured, residual, noise, in_wait, rms, lag1, correlation, relative_half_width, theta, lower, upper,
                         names, solution, tau, fit_start_offset)
    if fit_hardware_coupling:
        warnings += _coupling_warnings(names, ci95, relative_half_width, correlations)
    notes = list(log.notes) + list(model.notes)
    if offset is not None:
        notes.append("the start offset describes that day's start only; it is not written to the calibrated scenario")
    result = FitResult(
        sensor=sensor, units=scenario.units, convection_multiplier=convection, capacity_multiplier=capacity,
        start_offset_K=offset, ci95=ci95, correlation=correlation, rms_K=rms,
        max_abs_residual_K=float(np.max(np.abs(residual))),
        rms_uncalibrated_K=float(np.sqrt(np.mean((uncalibrated - measured) ** 2))), noise_K=noise,
        residual_lag1_autocorrelation=lag1, n_points=int(n), n_parameters=n_par,
        n_skipped_cells=log.n_skipped_cells, n_merged_rows=log.n_merged_rows,
        ambient_C=model.ambient_K - ZERO_CELSIUS_K, ambient_source=model.ambient_source, heat_input=model.heat_input,
        time_constant_s=tau, converged=bool(solution.success), warnings=warnings, notes=notes,
        time_s=log.time_s[used], measured_K=measured, fitted_K=fitted, uncalibrated_K=uncalibrated,
        calibrated_scenario=calibrated, hardware_coupling_multiplier=coupling)
    result.calibrated_scenario = with_fit_posterior(calibrated, result)   # the band's posterior (uncertainty.py)
    return result


def _intervals(theta, J, residual, names):
    """95 % intervals from the Jacobian; the multipliers' are exp() of the interval in ln.
    Returns (ci95, correlation of the first two, relative half widths, correlation matrix or None)."""
    n, p = J.shape
    s2 = float(residual @ residual) / (n - p)
    JTJ = J.T @ J
    ci95 = {name: None for name in names}
    if not np.all(np.isfinite(JTJ)) or np.linalg.cond(JTJ) > 1e14:
        return ci95, None, {name: np.inf for name in names}, None
    cov = s2 * np.linalg.inv(JTJ)
    se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    t = float(stats.t.ppf(0.975, n - p))
    half_width = {}
    for i, name in enumerate(names):
        low, high = theta[i] - t * se[i], theta[i] + t * se[i]
        if name.endswith("multiplier"):
            # an interval past e^50 is none at all (it overflowed to Infinity in the JSON)
            ci95[name] = [float(np.exp(low)), float(np.exp(high))] if t * se[i] < 50.0 else None
            half_width[name] = float(np.expm1(t * se[i])) if t * se[i] < 50.0 else np.inf
        else:
            ci95[name] = [float(low), float(high)]
            half_width[name] = 0.0
    correlation = float(cov[0, 1] / np.sqrt(cov[0, 0] * cov[1, 1])) if se[0] > 0 and se[1] > 0 else None
    correlations = cov / np.outer(se, se) if np.all(se > 0) else None
    return ci95, correlation, half_width, correlations


def _coupling_warnings(names, ci95, half_width, correlations) -> list:
    """Where the log cannot identify the hardware coupling: no interval, or one wider than
    +-POOR_RELATIVE_HALF_WIDTH (its correlation with the other parameters is quoted; a strong one with
    a narrow interval only means the parameters trade off while the log still pins them)."""
    name = "hardware_coupling_multiplier"
    i = names.index(name)
    if ci95.get(name) is None or correlations is None:
        return ["the log cannot identify the hardware coupling (singular Jacobian); it stays at the fitted "
                "value without an interval: fit without it"]
    others = [abs(correlations[i, j]) for j in range(len(names)) if j != i]
    if half_width[name] > POOR_RELATIVE_HALF_WIDTH:
        return [f"the log cannot identify the hardware coupling well (95 % interval about "
                f"+-{100 * half_width[name]:.0f} %, largest correlation with another parameter "
                f"{max(others):.2f}): the bulk oil barely depends on it in this log; a sensor on the pump "
                f"or valve body, or pulls long against the bodies' time constant, would tell it; otherwise "
                f"fit without it"]
    return []


def _largest_fall_K(T_K) -> float:
    """Largest fall of the measured temperature below its running maximum, after a 5-point running
    median that keeps single noisy readings from counting. Given the readings taken in waits only,
    so that a return-line sensor's drop at the end of each pull does not count as cooling."""
    if T_K.size >= 5:
        windows = np.lib.stride_tricks.sliding_window_view(np.pad(T_K, 2, mode="edge"), 5)
        T_K = np.median(windows, axis=1)
    return float(np.max(np.maximum.accumulate(T_K) - T_K))


def _warnings(scenario, log, measured, residual, noise, in_wait, rms, lag1, correlation, half_width, theta, lower, upper, names,
              solution, tau, fit_start_offset) -> list:
    u = scenario.units
    warnings = []
    fall = _largest_fall_K(measured[in_wait]) if np.count_nonzero(in_wait) >= 2 else 0.0
    if fall < max(1.0, 3.0 * noise):
        warnings.append(
            f"no cool-down segment: the oil never falls more than {format_difference(fall, u)} in the log, so a larger heat "
            f"loss and a smaller thermal mass look alike. Log the cool-down after the last pull, engine "
            f"off, for as long as practical (the rig's cooling time constant is about {tau / 60:.0f} min).")
    if correlation is not None and abs(correlation) > STRONG_CORRELATION:
        warnings.append(f"the convection and capacity multipliers are strongly correlated (r = {correlation:.3f}): "
                        f"the log tells them apart poorly; the intervals show how far each can move")
    if correlation is None:
        warnings.append("the log cannot tell the parameters apart at all (singular Jacobian); no intervals")
    for name in names[:2]:
        if half_width.get(name, 0.0) > POOR_RELATIVE_HALF_WIDTH and correlation is not None:
            width = f"about +-{100 * half_width[name]:.0f} %" if np.isfinite(half_width[name]) else "without bound"
            warnings.append(f"{name} is poorly determined (95 % interval {width})")
    for i, name in enumerate(names):
        if np.isclose(theta[i], lower[i], atol=1e-6) or np.isclose(theta[i], upper[i], atol=1e-6):
            warnings.append(f"{name} ended at the edge of its allowed range; the model does not match this log")
    if not solution.success:
        warnings.append(f"the fit did not converge ({solution.message})")
    if lag1 > CORRELATED_RESIDUALS:
        warnings.append(f"the residuals are correlated in time (lag-1 autocorrelation {lag1:.2f}): the model misses "
                        f"part of this rig's behaviour, and the 95 % intervals, which assume independent noise, "
                        f"are too narrow")
    span = float(measured.max() - measured.min())
    if rms > 0.05 * span:
        warnings.append(f"the RMS residual ({format_difference(rms, u)}) is more than 5 % of the log's range "
                        f"({format_difference(span, u)})")
    early = np.nonzero(log.time_s[np.isfinite(log.oil_K)] <= 60.0)[0][:3]
    if not fit_start_offset and early.size:
        misfit = float(np.mean(residual[early]))
        if abs(misfit) > max(1.0, 3.0 * noise):
            warnings.append(f"the first readings sit {format_difference(abs(misfit), u)} "
                            f"{'below' if misfit > 0 else 'above'} the fitted model: the oil probably did not start "
                            f"at the scenario's start_temperature ({format_temperature(scenario.start_K, u)}); "
                            f"set it to the log's start or fit a start offset")
    return warnings
