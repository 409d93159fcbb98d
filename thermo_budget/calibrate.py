"""Calibrate the model from a measured log: fit the convection and heat-capacity multipliers.

The model is the scenario's network, driven by the heat input of the logged day: the log's power_W
or pull columns where it has them, else the scenario's planned steps from time 0 (and engine off
after their end). It is integrated with its steps cut at the log's times, so the model is read at
exactly the logged instants. The fit is weighted least squares (all readings equal weight) with
scipy.optimize.least_squares on theta = (ln convection multiplier, ln capacity multiplier
[, start offset K]); the logarithms keep the multipliers positive and make their intervals
multiplicative. The 95 % intervals are the usual linearised ones, theta +- t(0.975, n - p) * se with
cov = s^2 (J^T J)^-1, s^2 = RSS / (n - p) (e.g. Seber and Wild, Nonlinear Regression, 1989, ch. 5);
they assume independent noise, and the result says when the residuals show otherwise.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
import numpy as np
from scipy import stats
from scipy.optimize import least_squares

from .errors import ScenarioError
from .measured_log import MeasuredLog, read_log
from .network import OIL, cooling_time_constant_s
from .log_checks import plausibility_warnings, refuse_implausible, thin_for_fit
from .scenario import Scenario, build_rig, limit_K
from .session import Resolution, Step
from .solver import integrate
from .fit_report import (calibrated_toml, fit_command, fit_warnings, format_difference,  # noqa: F401 (re-exported)
                         format_temperature, summary_text)

# One sub-step per logged interval up to 30 s; the model error this leaves is checked against a
# 2.5 s reference in the tests (well under a thermocouple's noise).
FIT_RESOLUTION = Resolution(pull_substeps=1, curve_substeps=2, max_substep_s=30.0, max_substeps=100_000)
CONVECTION_BOUNDS = (0.01, 10.0)      # the scenario file accepts 0 to 10
CAPACITY_BOUNDS = (0.05, 10.0)        # the scenario file accepts above 0 up to 10
START_OFFSET_BOUNDS_K = (-30.0, 30.0)
DIFFERENCE_STEP = 1e-4                # central-difference step in ln(multiplier), and 1e-4 K x 100 for the offset
TIME_TOLERANCE_S = 1e-6


@dataclass(frozen=True)
class LogModel:
    """The scenario's network driven by one log's heat input, read at the log's times.

    rig : the network with multipliers 1 and the ambient used for the fit.
    pieces : the steps, cut at every logged time. point_index : (M,) index of each log row in the
    integrated trace (0 = the start state). point_piece : (M,) the piece that ends at each log row
    (-1 for a row at time 0).
    """
    rig: object
    pieces: tuple
    point_index: np.ndarray
    point_piece: np.ndarray
    start_K: float
    sensor: str
    ambient_K: float
    ambient_source: str
    heat_input: str
    notes: tuple

    def temperatures_K(self, convection, capacity, start_offset_K=0.0) -> np.ndarray:
        """Sensor temperature (N, M) K at the log's times for N parameter sets (arrays (N,)), run in
        one vectorised integration."""
        convection = np.atleast_1d(np.asarray(convection, dtype=float))
        capacity = np.atleast_1d(np.asarray(capacity, dtype=float))
        offset = np.broadcast_to(np.asarray(start_offset_K, dtype=float), convection.shape)
        n = convection.size
        rig = self.rig.with_changes(convection_multiplier=convection, capacity_multiplier=capacity)
        T0 = np.repeat((self.start_K + offset)[:, None], 3, axis=1)
        trace = integrate(rig, list(self.pieces), T0, n_designs=n, resolution=FIT_RESOLUTION)
        series = trace.T_K[:, :, OIL] if self.sensor == "bulk" else trace.return_K
        return series[self.point_index].T


def log_model(scenario: Scenario, log: MeasuredLog, sensor: str = "bulk") -> LogModel:
    """Build the model of a logged day: heat input, cut points and ambient."""
    if sensor not in ("bulk", "return"):
        raise ScenarioError("sensor", sensor, 'one of "bulk", "return"')
    notes = []
    rig = build_rig(scenario, convection_multiplier=1.0, capacity_multiplier=1.0)
    ambient = log.mean_ambient_K
    if ambient is None:
        ambient, ambient_source = scenario.ambient_K, "scenario"
    else:
        ambient_source = "log mean"
        rig = rig.with_changes(ambient_K=ambient)
        notes.append(f"ambient: mean of the log's {np.count_nonzero(np.isfinite(log.ambient_K))} readings, "
                     f"{format_temperature(ambient, scenario.units)} "
                     f"(scenario: {format_temperature(scenario.ambient_K, scenario.units)})")
    if log.has_heat_input:
        pieces, cuts, input_notes = _log_pieces(scenario, log)
        columns = " and ".join(c for c, v in (("power_W", log.power_W), ("pull", log.pull)) if v is not None)
        heat_input = f"the log's {columns} column" + ("s" if " and " in columns else "")
    else:
        pieces, cuts, input_notes = _scenario_pieces(list(scenario.steps), log.time_s)
        heat_input = "the scenario's planned steps from time 0"
    notes += input_notes
    trace_index = _piece_end_index(pieces)
    cut_of_time = np.searchsorted(cuts, log.time_s - TIME_TOLERANCE_S)
    point_piece = cut_of_time - 1
    point_index = np.where(point_piece < 0, 0, trace_index[np.maximum(point_piece, 0)])
    return LogModel(rig=rig, pieces=tuple(pieces), point_index=point_index, point_piece=point_piece,
                    start_K=scenario.start_K,
                    sensor=sensor, ambient_K=ambient, ambient_source=ambient_source, heat_input=heat_input,
                    notes=tuple(notes))


def _piece_end_index(pieces) -> np.ndarray:
    """Index in the trace of the last recorded point of each piece (the trace starts with the start state)."""
    counts = [FIT_RESOLUTION.substeps(piece, piece.duration_s) for piece in pieces]
    return np.cumsum(counts)


def _merged_cuts(times) -> np.ndarray:
    cuts = np.unique(np.asarray(times, dtype=float))
    return cuts[np.concatenate([[True], np.diff(cuts) > TIME_TOLERANCE_S])]


def _piece(step: Step, f0: float, f1: float) -> Step:
    """The part of a step between fractions f0 and f1 of it."""
    piece = step.with_duration((f1 - f0) * step.duration_s)
    if step.curve is not None:
        piece = replace(piece, rpm_start=float(step.rpm_at(f0)), rpm_end=float(step.rpm_at(f1)))
    return piece


def _scenario_pieces(steps: list, times_s: np.ndarray):
    """The planned steps cut at the log's times; logged time past their end is engine off."""
    durations = np.array([step.duration_s for step in steps])
    ends = np.cumsum(durations)
    starts = ends - durations
    cuts = _merged_cuts(np.concatenate([[0.0], ends, times_s]))
    cuts = cuts[cuts <= max(times_s.max(), TIME_TOLERANCE_S) + TIME_TOLERANCE_S]
    notes, pieces = [], []
    for a, b in zip(cuts[:-1], cuts[1:]):
        middle = 0.5 * (a + b)
        if middle >= ends[-1]:
            pieces.append(Step(kind="wait", duration_s=b - a, engine="off"))
            continue
        j = int(np.searchsorted(ends, middle))
        pieces.append(_piece(steps[j], (a - starts[j]) / durations[j], (b - starts[j]) / durations[j]))
    if times_s.max() > ends[-1] + TIME_TOLERANCE_S:
        notes.append(f"the log runs {times_s.max() - ends[-1]:.0f} s past the end of the scenario's session "
                     f"({ends[-1]:.0f} s); that time is modelled with the engine off")
    if times_s.max() < ends[-1] - TIME_TOLERANCE_S:
        notes.append(f"the log ends at {times_s.max():.0f} s, before the end of the scenario's session ({ends[-1]:.0f} s)")
    return pieces, cuts, notes


def _reference_steps(scenario: Scenario):
    """The pull and the wait that stand for the log's pulls and waits, with notes where the
    scenario's steps differ among themselves."""
    notes = []
    pulls = [step for step in scenario.cycle if step.is_pull]
    waits = [step for step in scenario.cycle if not step.is_pull]
    pull = pulls[0]

    def rpm(step):
        return 0.5 * (step.rpm_start + step.rpm_end) if step.curve is not None else step.rpm
    if pull.curve is not None:
        notes.append("a logged pull runs at the mean speed of the scenario's engine-curve sweep; without power_W "
                     "it absorbs the sweep's mean power, evenly over the pull")
    if len({(rpm(p), round(p.mean_power_W(0.0, 1.0), 6)) for p in pulls}) > 1:
        notes.append("the scenario's pulls differ; the log's pulls take the speed (and, without power_W, "
                     "the power) of its first pull")
    wait = waits[0] if waits else Step(kind="wait", duration_s=1.0, engine="off")
    if not waits:
        notes.append("the scenario has no wait step; the log's waits are taken as engine off")
    elif len({(w.engine, w.power_W, w.rpm) for w in waits}) > 1:
        notes.append("the scenario's waits differ; the log's waits take the engine state of its first wait")
    return pull, rpm(pull), pull.mean_power_W(0.0, 1.0), wait, notes


def _log_pieces(scenario: Scenario, log: MeasuredLog):
    """Piecewise-constant steps between the log's rows, from its power_W and pull columns.

    The values on a row hold over the interval that ends at it (the convention of `run --csv`);
    the first interval starts at the session start, t = 0. Without a pull column an interval is a
    pull when its power lies above half-way between the scenario's largest wait load and its pull's
    mean power. A wait with zero logged power is engine off; with power, the scenario's wait state.
    """
    pull, pull_rpm, pull_power, wait, notes = _reference_steps(scenario)
    wait_power = wait.power_W if wait.engine == "idle" else 0.0
    threshold = 0.5 * (wait_power + pull_power)
    if log.pull is None:
        notes.append(f"intervals with more than {threshold:.0f} W logged are pulls (half-way between the "
                     f"scenario's wait load and its pull power)")
    cuts = _merged_cuts(np.concatenate([[0.0], log.time_s]))
    row_of_cut = np.searchsorted(log.time_s, cuts[1:] - TIME_TOLERANCE_S)
    pieces, off_in_idle, powered_off = [], 0, 0
    for (a, b), row in zip(zip(cuts[:-1], cuts[1:]), row_of_cut):
        power = None if log.power_W is None else float(log.power_W[row])
        is_pull = bool(log.pull[row]) if log.pull is not None else power > threshold
        d = b - a
        if is_pull:
            pieces.append(Step(kind="pull", duration_s=d, engine="on",
                               power_W=pull_power if power is None else power, rpm=pull_rpm))
        elif power is None:
            pieces.append(wait.with_duration(d))
        elif power == 0.0 and not (wait.engine == "idle" and wait.power_W == 0.0):
            off_in_idle += wait.engine == "idle"
            pieces.append(Step(kind="wait", duration_s=d, engine="off"))
        else:
            idle_rpm = wait.rpm if wait.engine == "idle" else pull_rpm
            powered_off += wait.engine == "off"
            pieces.append(Step(kind="wait", duration_s=d, engine="idle", power_W=power, rpm=idle_rpm))
    if off_in_idle:
        notes.append(f"{off_in_idle} wait intervals with 0 W logged are taken as engine off (the scenario's waits idle)")
    if powered_off:
        notes.append(f"{powered_off} wait intervals have power logged although the scenario's waits are engine off; "
                     f"they are taken as turning at the pull speed, {pull_rpm:.0f} rpm")
    return pieces, cuts, notes


def predict_log_K(scenario: Scenario, log: MeasuredLog, sensor: str = "bulk", start_offset_K: float = 0.0) -> np.ndarray:
    """The scenario's model (with its own multipliers) at the log's times, (M,) K."""
    model = log_model(scenario, log, sensor)
    return model.temperatures_K(scenario.convection_multiplier, scenario.capacity_multiplier, start_offset_K)[0]


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

    @property
    def residual_K(self) -> np.ndarray:
        return self.measured_K - self.fitted_K

    def to_dict(self, include_series: bool = True) -> dict:
        result = {
            "sensor": self.sensor,
            "convection_multiplier": round(self.convection_multiplier, 5),
            "capacity_multiplier": round(self.capacity_multiplier, 5),
            "start_offset_K": None if self.start_offset_K is None else round(self.start_offset_K, 4),
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
                                "measured_C": (self.measured_K - 273.15).round(4).tolist(),
                                "fitted_C": (self.fitted_K - 273.15).round(4).tolist(),
                                "uncalibrated_C": (self.uncalibrated_K - 273.15).round(4).tolist()}
        return result


def fit_log(scenario: Scenario, log_text: str, sensor: str = "bulk", fit_start_offset: bool = False,
            source: str = "log", strict: bool = False) -> FitResult:
    """Fit the convection and capacity multipliers (and optionally a start offset) to a log's CSV text.
    strict : refuse a log that looks implausible (log_checks) instead of warning."""
    log = read_log(log_text, sensor, source)
    return fit_measured_log(scenario, log, sensor, fit_start_offset, strict, source)


def fit_measured_log(scenario: Scenario, log: MeasuredLog, sensor: str = "bulk",
                     fit_start_offset: bool = False, strict: bool = False, source: str = "log") -> FitResult:
    """The fit of a read log; a long one is thinned first (log_checks.thin_for_fit)."""
    plausibility = plausibility_warnings(log, scenario.start_K, limit_K(scenario)[0], scenario.units)
    if strict:
        refuse_implausible(plausibility, source)
    log = thin_for_fit(log)
    model = log_model(scenario, log, sensor)
    used = np.isfinite(log.oil_K)
    measured = log.oil_K[used]
    n_par = 3 if fit_start_offset else 2

    def predictions(thetas: np.ndarray) -> np.ndarray:
        offsets = thetas[:, 2] if n_par == 3 else 0.0
        return model.temperatures_K(np.exp(thetas[:, 0]), np.exp(thetas[:, 1]), offsets)[:, used]

    cache = {}

    def residuals(theta):
        key = tuple(theta)
        if key not in cache:
            cache[key] = predictions(theta[None, :])[0] - measured
        return cache[key]

    def jacobian(theta):
        steps = np.array([DIFFERENCE_STEP, DIFFERENCE_STEP, 100 * DIFFERENCE_STEP])[:n_par]
        shifted = np.concatenate([theta[None, :], theta + np.diag(steps), theta - np.diag(steps)])
        values = predictions(shifted)
        cache[tuple(theta)] = values[0] - measured
        return ((values[1:1 + n_par] - values[1 + n_par:]) / (2.0 * steps)[:, None]).T

    lower = [np.log(CONVECTION_BOUNDS[0]), np.log(CAPACITY_BOUNDS[0]), START_OFFSET_BOUNDS_K[0]][:n_par]
    upper = [np.log(CONVECTION_BOUNDS[1]), np.log(CAPACITY_BOUNDS[1]), START_OFFSET_BOUNDS_K[1]][:n_par]
    x0 = np.clip([np.log(max(scenario.convection_multiplier, CONVECTION_BOUNDS[0])),
                  np.log(scenario.capacity_multiplier), 0.0][:n_par], lower, upper)
    solution = least_squares(residuals, x0, jac=jacobian, bounds=(lower, upper), method="trf",
                             xtol=1e-10, ftol=1e-12, gtol=1e-10, max_nfev=60)
    theta = solution.x
    residual = residuals(theta)
    J = jacobian(theta)
    n = measured.size
    uncalibrated = model.temperatures_K(scenario.convection_multiplier, scenario.capacity_multiplier)[0, used]
    fitted = measured + residual
    names = ["convection_multiplier", "capacity_multiplier", "start_offset_K"][:n_par]
    ci95, correlation, relative_half_width = _intervals(theta, J, residual, names)

    convection, capacity = float(np.exp(theta[0])), float(np.exp(theta[1]))
    offset = float(theta[2]) if n_par == 3 else None
    rms = float(np.sqrt(np.mean(residual**2)))
    lag1 = float(np.sum(residual[:-1] * residual[1:]) / max(np.sum(residual**2), 1e-300))
    # Noise from successive differences of the residuals, blind to a slow misfit (von Neumann et
    # al., Ann. Math. Stat. 12, 1941): sigma^2 ~ mean(diff(r)^2) / 2.
    noise = float(np.sqrt(np.mean(np.diff(residual) ** 2) / 2.0))
    tau = cooling_time_constant_s(model.rig.with_changes(convection_multiplier=convection,
                                                         capacity_multiplier=capacity), float(np.max(measured)))
    calibrated = scenario.changed(**{"losses.convection_multiplier": float(f"{convection:.4g}"),
                                     "losses.capacity_multiplier": float(f"{capacity:.4g}")})
    in_wait = np.array([piece < 0 or not model.pieces[piece].is_pull for piece in model.point_piece[used]])
    warnings = plausibility + fit_warnings(scenario, log, measured, residual, noise, in_wait, rms, lag1, correlation, relative_half_width, theta, lower, upper,
                         names, solution, tau, fit_start_offset)
    notes = list(log.notes) + list(model.notes)
    if offset is not None:
        notes.append("the start offset describes that day's start only; it is not written to the calibrated scenario")
    return FitResult(
        sensor=sensor, units=scenario.units, convection_multiplier=convection, capacity_multiplier=capacity,
        start_offset_K=offset, ci95=ci95, correlation=correlation, rms_K=rms,
        max_abs_residual_K=float(np.max(np.abs(residual))),
        rms_uncalibrated_K=float(np.sqrt(np.mean((uncalibrated - measured) ** 2))), noise_K=noise,
        residual_lag1_autocorrelation=lag1, n_points=int(n), n_parameters=n_par,
        n_skipped_cells=log.n_skipped_cells, n_merged_rows=log.n_merged_rows,
        ambient_C=model.ambient_K - 273.15, ambient_source=model.ambient_source, heat_input=model.heat_input,
        time_constant_s=tau, converged=bool(solution.success), warnings=warnings, notes=notes,
        time_s=log.time_s[used], measured_K=measured, fitted_K=fitted, uncalibrated_K=uncalibrated,
        calibrated_scenario=calibrated)


def _intervals(theta, J, residual, names):
    """95 % intervals from the Jacobian; the multipliers' are exp() of the interval in ln."""
    n, p = J.shape
    s2 = float(residual @ residual) / (n - p)
    JTJ = J.T @ J
    ci95 = {name: None for name in names}
    if not np.all(np.isfinite(JTJ)) or np.linalg.cond(JTJ) > 1e14:
        return ci95, None, {name: np.inf for name in names}
    cov = s2 * np.linalg.inv(JTJ)
    se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    t = float(stats.t.ppf(0.975, n - p))
    half_width = {}
    for i, name in enumerate(names):
        low, high = theta[i] - t * se[i], theta[i] + t * se[i]
        if name.endswith("multiplier"):   # an interval past e^50 is none at all
            ci95[name] = [float(np.exp(low)), float(np.exp(high))] if t * se[i] < 50.0 else None
            half_width[name] = float(np.expm1(t * se[i])) if t * se[i] < 50.0 else np.inf
        else:
            ci95[name] = [float(low), float(high)]
            half_width[name] = 0.0
    correlation = float(cov[0, 1] / np.sqrt(cov[0, 0] * cov[1, 1])) if se[0] > 0 and se[1] > 0 else None
    return ci95, correlation, half_width
