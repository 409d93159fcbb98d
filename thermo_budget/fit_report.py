"""The fit's report: its summary text, the calibrated scenario as TOML, and the `fit` command.
The numerics are in calibrate.py."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import tomli_w

from .units import to_display, unit_label

STRONG_CORRELATION = 0.95
POOR_RELATIVE_HALF_WIDTH = 0.25
CORRELATED_RESIDUALS = 0.5            # lag-1 autocorrelation of the residuals


def format_temperature(T_K: float, system: str) -> str:
    """A temperature in the display unit of "SI" or "US", e.g. '47.3 °C'."""
    return f"{to_display(T_K, 'temperature', system):.1f} {unit_label('temperature', system)}"


def format_difference(dT_K: float, system: str) -> str:
    """A temperature difference: '0.31 K', or '0.56 °F (0.31 K)' in US units."""
    if system == "SI":
        return f"{dT_K:.2f} K"
    return f"{to_display(dT_K, 'temperature_difference', system):.2f} {unit_label('temperature_difference', system)} ({dT_K:.2f} K)"


def largest_fall_K(T_K) -> float:
    """Largest fall of the measured temperature below its running maximum, after a 5-point running
    median that keeps single noisy readings from counting. Given the readings taken in waits only,
    so that a return-line sensor's drop at the end of each pull does not count as cooling."""
    if T_K.size >= 5:
        windows = np.lib.stride_tricks.sliding_window_view(np.pad(T_K, 2, mode="edge"), 5)
        T_K = np.median(windows, axis=1)
    return float(np.max(np.maximum.accumulate(T_K) - T_K))


def fit_warnings(scenario, log, measured, residual, noise, in_wait, rms, lag1, correlation, half_width, theta, lower, upper, names,
              solution, tau, fit_start_offset) -> list:
    u = scenario.units
    warnings = []
    fall = largest_fall_K(measured[in_wait]) if np.count_nonzero(in_wait) >= 2 else 0.0
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


def summary_text(result) -> str:
    """A short readable summary in the scenario's units."""
    u = result.units

    def diff(K):
        return format_difference(K, u)

    def ci(name):
        pair = result.ci95.get(name)
        return "n/a" if pair is None else f"{pair[0]:.3f} to {pair[1]:.3f}"

    lines = [f"fit of the {result.sensor} sensor, {result.n_points} points, heat input from {result.heat_input}",
             f"  convection multiplier {result.convection_multiplier:.3f}  (95 %: {ci('convection_multiplier')})",
             f"  capacity multiplier   {result.capacity_multiplier:.3f}  (95 %: {ci('capacity_multiplier')})"]
    if result.start_offset_K is not None:
        lines.append(f"  start offset          {diff(result.start_offset_K)}  (95 %: {ci('start_offset_K')} K)")
    lines += [f"  RMS residual          {diff(result.rms_K)} (largest {diff(result.max_abs_residual_K)}); "
              f"uncalibrated {diff(result.rms_uncalibrated_K)}",
              f"  sensor noise (est.)   {diff(result.noise_K)} from successive differences",
              f"  ambient               {format_temperature(result.ambient_C + 273.15, u)} ({result.ambient_source})",
              f"  cooling time constant {result.time_constant_s / 60:.0f} min"]
    if result.correlation is not None:
        lines.append(f"  correlation of the two multipliers {result.correlation:+.3f}")
    lines += [f"  warning: {w}" for w in result.warnings]
    lines += [f"  note: {n}" for n in result.notes]
    return "\n".join(lines)


def calibrated_toml(result, log_name: str) -> str:
    """The calibrated scenario as TOML, with comment lines saying where the multipliers came from."""
    def fmt(name):
        pair = result.ci95.get(name)
        return "n/a" if pair is None else f"{pair[0]:.3g} to {pair[1]:.3g}"

    header = [f"Calibrated by `thermo_budget fit` from {toml_string(Path(log_name).name)} ({result.sensor} sensor, "
              f"{result.n_points} points, RMS residual {result.rms_K:.2f} K).",
              f"convection_multiplier 95 %: {fmt('convection_multiplier')}; "
              f"capacity_multiplier 95 %: {fmt('capacity_multiplier')}."]
    header += [f"warning: {w}" for w in result.warnings]
    return "".join(toml_comment(line) for line in header) + result.calibrated_scenario.to_toml()


def toml_string(text: str) -> str:
    """text as a TOML basic string, escaped by tomli_w: no newline or quote in it can end the string."""
    return tomli_w.dumps({"x": str(text)})[len("x = "):].rstrip("\n")


def toml_comment(text: str) -> str:
    """One TOML comment line; control characters in text are escaped, so it cannot start a table."""
    return "# " + "".join(c if c.isprintable() else repr(c)[1:-1] for c in text) + "\n"


def fit_command(args) -> int:
    """`python -m thermo_budget fit SCENARIO LOG.csv [--sensor] [--json] [--write] [--plot]`."""
    from .calibrate import fit_log
    from .report import check_finite
    from .measured_log import log_file_text
    from .scenario import load_scenario
    scenario = load_scenario(args.scenario)
    text = log_file_text(args.log)
    result = fit_log(scenario, text, sensor=args.sensor, fit_start_offset=bool(getattr(args, "fit_start_offset", False)),
                     source=str(args.log), strict=bool(getattr(args, "strict", False)))
    if args.write:
        Path(args.write).write_text(calibrated_toml(result, args.log), encoding="utf-8")
    if args.plot:
        from .fit_plot import plot_fit
        figure = plot_fit(result)
        figure.savefig(args.plot, dpi=120, bbox_inches="tight")
    answers = result.to_dict(include_series=False)
    check_finite(answers)
    print(json.dumps(answers, indent=2, allow_nan=False) if args.json else summary_text(result))
    return 0
