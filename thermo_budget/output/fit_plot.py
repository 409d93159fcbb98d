"""The figure of a fit: measured against fitted temperature, and the residuals below."""
from __future__ import annotations

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from ..units import to_display, unit_label


def plot_fit(result, system: str | None = None) -> Figure:
    """Measured and fitted sensor temperature against time (the uncalibrated model dashed), and the
    residuals (measured minus fitted) with the RMS band. system: "SI" or "US" (default: the
    scenario's units). Returns a matplotlib Figure (no pyplot state)."""
    system = system or result.units
    from .plots import MIN_FONT_PT, PAGE_FONTS
    with matplotlib.rc_context(PAGE_FONTS):
        return _draw_fit(result, system, MIN_FONT_PT)


def _draw_fit(result, system: str, min_font_pt: float) -> Figure:
    def to_temperature(T_K):
        return to_display(np.asarray(T_K, dtype=float), "temperature", system)

    def delta(dT_K):
        return to_display(dT_K, "temperature_difference", system)

    t_min = np.asarray(result.time_s) / 60.0
    t_label, d_label = unit_label("temperature", system), unit_label("temperature_difference", system)
    sensor = "bulk oil (tank)" if result.sensor == "bulk" else "return-line oil"

    # 5.6 in wide like the page's other charts, so that its text reads at 11 px or more on a phone
    figure = Figure(figsize=(5.6, 6.0), layout="constrained")
    top, bottom = figure.subplots(2, 1, sharex=True, height_ratios=(3, 1.3))
    top.plot(t_min, to_temperature(result.measured_K), ".", ms=3, color="0.35", label="measured")
    top.plot(t_min, to_temperature(result.uncalibrated_K), "--", lw=1.0, color="tab:orange",
             label=f"model as given (RMS {delta(result.rms_uncalibrated_K):.2f} {d_label})")
    top.plot(t_min, to_temperature(result.fitted_K), "-", lw=1.6, color="tab:blue",
             label=f"fitted (RMS {delta(result.rms_K):.2f} {d_label})")
    top.set_ylabel(f"{sensor}, {t_label}")
    top.set_title(f"convection × {result.convection_multiplier:.3f}, capacity × {result.capacity_multiplier:.3f},\n"
                  f"{result.n_points} points", fontsize=min_font_pt, loc="left")
    figure.legend(loc="outside lower center", ncol=1, frameon=False, fontsize=min_font_pt)   # off the data
    top.grid(alpha=0.3)

    residual = delta(np.asarray(result.measured_K) - np.asarray(result.fitted_K))
    bottom.axhline(0.0, color="0.2", lw=0.8)
    for sign in (-1.0, 1.0):
        bottom.axhline(sign * delta(result.rms_K), color="tab:blue", lw=0.8, ls=":")
    bottom.plot(t_min, residual, ".", ms=3, color="tab:blue")
    bottom.set_ylabel(f"residual, {d_label}")
    bottom.set_xlabel("time from session start, min")
    bottom.grid(alpha=0.3)
    return figure
