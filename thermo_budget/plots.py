"""Figures for the page and the command line. Pure functions: each takes results and returns a
matplotlib Figure (Agg backend, no window), drawn in the units of `system` ("SI" or "US")."""
from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.colors import BoundaryNorm  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from .network import OIL, WALL  # noqa: E402
from .page_format import to_shown, unit_symbol  # noqa: E402
from .scenario import limit_K  # noqa: E402

OIL_COLOUR, RETURN_COLOUR, WALL_COLOUR, LIMIT_COLOUR = "#b5461f", "#e39b2d", "#4a6c8c", "#8b0000"
PULL_SHADE = "#f2d7c9"
# Fixed margins (fractions of the figure): a layout engine would cost a second draw of every label.
_MARGINS = {"left": 0.09, "right": 0.98, "bottom": 0.12, "top": 0.92}


def _temperatures(T_K, system):
    return to_shown(np.asarray(T_K, dtype=float), "temperature", system)


def plot_trace(scenario, trace, system: str | None = None) -> Figure:
    """Bulk oil, return-line and tank wall temperature against time (min) for design 0, with the
    fluid limit as a line and each pull shaded."""
    system = system or scenario.units
    t_min = trace.time_s[:, 0] / 60.0
    limit, reason = limit_K(scenario)
    symbol = unit_symbol("temperature", system)
    fig = Figure(figsize=(8.0, 4.2))
    fig.subplots_adjust(**_MARGINS)
    ax = fig.add_subplot()
    for start, end in zip(trace.pull_start_s[:, 0], trace.pull_end_s[:, 0]):
        ax.axvspan(start / 60.0, end / 60.0, color=PULL_SHADE, lw=0, zorder=0)
    ax.plot(t_min, _temperatures(trace.return_K[:, 0], system), color=RETURN_COLOUR, lw=1.2,
            label="oil returning to the tank")
    ax.plot(t_min, _temperatures(trace.T_K[:, 0, OIL], system), color=OIL_COLOUR, lw=2.2, label="oil in the tank (bulk)")
    ax.plot(t_min, _temperatures(trace.T_K[:, 0, WALL], system), color=WALL_COLOUR, lw=1.2, ls="--",
            label="tank wall")
    limit_shown = to_shown(limit, "temperature", system)
    why = "hottest allowed" if reason == "max_temperature" else "pump's thinnest oil"
    ax.axhline(limit_shown, color=LIMIT_COLOUR, lw=1.5, ls=":")
    low, high = ax.get_ylim()   # headroom above the limit line for its label
    ax.set_ylim(low, max(high, limit_shown + 0.08 * (max(high, limit_shown) - low)))
    ax.annotate(f"limit {limit_shown:.0f} {symbol} ({why})", (t_min[-1], limit_shown), xytext=(0, 4),
                textcoords="offset points", ha="right", va="bottom", color=LIMIT_COLOUR, fontsize=9)
    ax.fill_between([], [], color=PULL_SHADE, label="pulls")  # legend entry for the shading
    ax.set_xlim(0.0, t_min[-1])
    ax.set_xlabel("time since the first pull started (min)")
    ax.set_ylabel(f"temperature ({symbol})")
    ax.set_title(scenario.name or "planned session", fontsize=11, loc="left", y=1.0)
    ax.grid(alpha=0.3)
    ax.legend(loc="lower right", fontsize=8, framealpha=0.9)
    return fig


def _run_levels(planned: int, highest: float) -> list:
    """Colour bands for pulls before the limit: a 1-2-5 ladder up to the highest finite count, with
    the planned session's count as one of the edges, closed by the next ladder value above both
    (so the top band holds every count above its lower edge, and the unlimited ones)."""
    ladder = [m * 10**e for e in range(0, 7) for m in (1, 2, 5)]
    top = max(highest, planned)
    levels = sorted({v for v in ladder if v <= top} | {planned})
    return [0] + levels + [next(v for v in ladder if v > top)]


def _ink_on(rgba) -> str:
    """Black or white, whichever reads better on a band of colour rgba (by its relative luminance,
    WCAG 2 weights on the sRGB values, without the gamma step: enough to pick one of two inks)."""
    red, green, blue = rgba[:3]
    return "k" if 0.2126 * red + 0.7152 * green + 0.0722 * blue > 0.45 else "w"


def plot_design_chart(scenario, sweep_result, system: str | None = None) -> Figure:
    """Pulls before the limit over oil volume (x) and cooler size (y), repeating the planned cycle
    from a cold start. The line where it equals the planned session's pull count is drawn bold;
    designs that can go on all day are hatched; the current rig is marked."""
    system = system or scenario.units
    r = sweep_result
    volumes = to_shown(np.asarray(r.oil_volumes_L) / 1000.0, "oil_volume", system)
    coolers = to_shown(np.asarray(r.coolers_W_per_K, dtype=float), "conductance", system)
    runs = np.asarray(r.runs_before_limit, dtype=float)
    unlimited = np.isnan(runs)           # sustainable, or more pulls than the sweep counted
    all_day = np.asarray(r.sustainable, dtype=bool)
    finite = runs[~unlimited]
    highest = float(finite.max()) if finite.size else float(r.pulls_planned)
    levels = _run_levels(int(r.pulls_planned), highest)
    ceiling = levels[-1]
    filled = np.where(unlimited, ceiling, runs)  # unlimited counts above every band

    fig = Figure(figsize=(8.0, 5.2))
    fig.subplots_adjust(**_MARGINS)
    ax = fig.add_subplot()
    X, Y = np.meshgrid(volumes, coolers, indexing="ij")
    cmap = matplotlib.colormaps["YlGnBu"]
    norm = BoundaryNorm(levels, cmap.N)
    bands = ax.contourf(X, Y, filled, levels=levels, cmap=cmap, norm=norm)
    if all_day.any():
        ax.contourf(X, Y, all_day.astype(float), levels=[0.5, 1.5], colors="none", hatches=["//"])
    edges = [lv for lv in levels[1:-1] if lv != r.pulls_planned]
    lines = ax.contour(X, Y, filled, levels=edges, colors=[_ink_on(cmap(norm(lv))) for lv in edges],
                       linewidths=0.4, alpha=0.6)
    ax.clabel(lines, fmt="%d", fontsize=7)
    if finite.size and (filled.min() < r.pulls_planned < filled.max()):
        planned = ax.contour(X, Y, filled, levels=[r.pulls_planned], colors=LIMIT_COLOUR, linewidths=2.5)
        ax.clabel(planned, fmt=f"planned session: {r.pulls_planned} pulls", fontsize=9)
    rig_volume = to_shown(scenario.reservoir.oil_volume_m3, "oil_volume", system)
    rig_cooler = to_shown(scenario.cooler_W_K, "conductance", system)
    ax.plot([rig_volume], [rig_cooler], marker="*", ms=16, color="#d62728", mec="white", mew=1.2, ls="none",
            label="your rig now", clip_on=False, zorder=5)
    bar = fig.colorbar(bands, ax=ax, ticks=levels[:-1])
    bar.set_label(f"pulls before the oil reaches the limit (top band: {levels[-2]} or more)")
    v_unit, k_unit = unit_symbol("oil_volume", system), unit_symbol("conductance", system)
    ax.set_xlabel(f"oil in the tank ({v_unit}); tank scaled to keep its shape")
    ax.set_ylabel(f"cooler size ({k_unit} of ETD)")
    limit_shown = to_shown(r.limit_C + 273.15, "temperature", system)
    ax.set_title(f"Pulls before {limit_shown:.0f} {unit_symbol('temperature', system)}, repeating the planned "
                 f"cycle. Hatched: can go on all day", fontsize=10, loc="left", y=1.0)
    ax.legend(loc="upper right", fontsize=9, framealpha=0.9)
    return fig
