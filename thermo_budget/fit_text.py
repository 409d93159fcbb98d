"""The fit's words: its summary, the calibrated scenario's TOML and the `fit` command."""
from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

from .units import to_display, unit_label

if TYPE_CHECKING:
    from .calibrate import FitResult


def format_temperature(T_K: float, system: str) -> str:
    """A temperature in the display unit of "SI" or "US", e.g. '47.3 °C'."""
    return f"{to_display(T_K, 'temperature', system):.1f} {unit_label('temperature', system)}"


def format_difference(dT_K: float, system: str) -> str:
    """A temperature difference: '0.31 K', or '0.56 °F (0.31 K)' in US units."""
    if system == "SI":
        return f"{dT_K:.2f} K"
    return f"{to_display(dT_K, 'temperature_difference', system):.2f} {unit_label('temperature_difference', system)} ({dT_K:.2f} K)"


def summary_text(result: FitResult) -> str:
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
    if result.hardware_coupling_multiplier is not None:
        lines.append(f"  hardware coupling     {result.hardware_coupling_multiplier:.3f}  "
                     f"(95 %: {ci('hardware_coupling_multiplier')})")
    if result.start_offset_K is not None:
        lines.append(f"  start offset          {diff(result.start_offset_K)}  (95 %: {ci('start_offset_K')} K)")
    lines += [f"  RMS residual          {diff(result.rms_K)} (largest {diff(result.max_abs_residual_K)}); "
              f"uncalibrated {diff(result.rms_uncalibrated_K)}",
              f"  sensor noise (est.)   {diff(result.noise_K)} from successive differences",
              f"  ambient               {format_temperature(result.ambient_C + 273.15, u)} ({result.ambient_source})",
              f"  cooling time constant {result.time_constant_s / 60:.0f} min (the fitted rig's heat capacity over its "
              f"heat loss to the air per kelvin, at the log's hottest oil, engine off, no cooler: the time the "
              f"oil takes to cool 63 % of the way to ambient)"]
    if result.correlation is not None:
        lines.append(f"  correlation of the two multipliers {result.correlation:+.3f}")
    lines += [f"  warning: {w}" for w in result.warnings]
    lines += [f"  note: {n}" for n in result.notes]
    return "\n".join(lines)


def calibrated_toml(result: FitResult, log_name: str) -> str:
    """The calibrated scenario as TOML, with comment lines saying where the multipliers came from."""
    def fmt(name):
        pair = result.ci95.get(name)
        return "n/a" if pair is None else f"{pair[0]:.3g} to {pair[1]:.3g}"

    header = [f"Calibrated by `thermo_budget fit` from {toml_string(Path(log_name).name)} ({result.sensor} sensor, "
              f"{result.n_points} points, RMS residual {result.rms_K:.2f} K).",
              f"convection_multiplier 95 %: {fmt('convection_multiplier')}; "
              f"capacity_multiplier 95 %: {fmt('capacity_multiplier')}."]
    if result.hardware_coupling_multiplier is not None:
        header.append(f"hardware_coupling_multiplier 95 %: {fmt('hardware_coupling_multiplier')}.")
    header += [f"warning: {w}" for w in result.warnings]
    return "".join(toml_comment(line) for line in header) + result.calibrated_scenario.to_toml()


def toml_string(text: str) -> str:
    """text as a TOML basic string, escaped by tomli_w: no newline or quote in it can end the string."""
    import tomli_w
    return tomli_w.dumps({"x": str(text)})[len("x = "):].rstrip("\n")


def toml_comment(text: str) -> str:
    """One TOML comment line; control characters in text are escaped, so it cannot start a table."""
    return "# " + "".join(c if c.isprintable() else repr(c)[1:-1] for c in text) + "\n"


def fit_command(args) -> int:
    """`python -m thermo_budget fit SCENARIO LOG.csv [--sensor] [--json] [--write] [--plot]`."""
    from .calibrate import fit_log
    from .measured_log import log_file_text
    from .report import check_finite
    from .scenario import load_scenario
    scenario = load_scenario(args.scenario)
    text = log_file_text(args.log)
    result = fit_log(scenario, text, sensor=args.sensor, fit_start_offset=bool(getattr(args, "fit_start_offset", False)),
                     source=str(args.log), strict=bool(getattr(args, "strict", False)),
                     fit_hardware_coupling=bool(getattr(args, "fit_hardware_coupling", False)))
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
