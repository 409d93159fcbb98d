"""The fit's words: its summary and the calibrated scenario's TOML."""
from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from ..display import format_difference, format_temperature
from ..units import ZERO_CELSIUS_K

if TYPE_CHECKING:
    from ..logs.calibrate import FitResult


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
              f"  ambient               {format_temperature(result.ambient_C + ZERO_CELSIUS_K, u)} ({result.ambient_source})",
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
