"""Figures for the page and the command line. Pure functions: each takes results and returns a
matplotlib Figure (Agg backend, no window), drawn in the units of `system` ("SI" or "US")."""
from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib import patheffects  # noqa: E402
from matplotlib.colors import BoundaryNorm, ListedColormap  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402

from ..physics.network import OIL, WALL  # noqa: E402
from ..display import to_shown, unit_symbol  # noqa: E402
from ..inputs.scenario import limit_K  # noqa: E402
from ..units import ZERO_CELSIUS_K  # noqa: E402

OIL_COLOUR, RETURN_COLOUR, WALL_COLOUR, LIMIT_COLOUR = "#b5461f", "#e39b2d", "#4a6c8c", "#8b0000"
PULL_SHADE = "#dcdcdc"     # grey: no series shares the oil's hues
# Fixed margins (fractions of the figure): a layout engine would cost a second draw of every label.
_MARGINS = {"left": 0.14, "right": 0.98, "bottom": 0.31, "top": 0.91}
# The smallest text on a chart, pt. A chart is drawn 5.6 in wide at 90 dpi (504 px) and shown about
# 360 px wide on a 400 px phone (x 0.71): 12.5 pt = 15.6 px drawn, 11.1 px shown, above 11 px.
MIN_FONT_PT = 12.5
PAGE_FONTS = {"font.size": 13, "axes.titlesize": 13, "axes.labelsize": 13, "xtick.labelsize": MIN_FONT_PT,
               "ytick.labelsize": MIN_FONT_PT, "legend.fontsize": MIN_FONT_PT}
# A label over the data: drawn above every series, on a box of the background's colour.
_LABEL_BOX = {"boxstyle": "square,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.9}
TITLE_CHARS = 44           # a longer title is wrapped onto a second line


def _title(ax, text: str):
    """The chart's title at the top left, wrapped so that it never runs past the figure."""
    import textwrap
    lines = textwrap.wrap(text, TITLE_CHARS)[:2] or [""]
    ax.set_title("\n".join(lines), loc="left", y=1.0, fontsize="medium")
    return len(lines)


def legend_below(fig, ax, columns: int = 2):
    """The axes' legend under the chart, off every curve (the figure keeps room for it at the bottom)."""
    handles, labels = ax.get_legend_handles_labels()
    if ax.get_legend() is not None:
        ax.get_legend().remove()
    for legend in list(fig.legends):
        legend.remove()
    fig.legend(handles, labels, loc="lower center", ncol=columns, frameon=False, fontsize=MIN_FONT_PT,
               bbox_to_anchor=(0.5, 0.0), handlelength=1.6, columnspacing=1.0)


def temperatures_shown(T_K, system: str):
    """Temperatures (K, any shape) in the unit shown in `system` (degC or degF)."""
    return to_shown(np.asarray(T_K, dtype=float), "temperature", system)


def plot_trace(scenario, trace, system: str | None = None) -> Figure:
    """Bulk oil, return-line and tank wall temperature against time (min) for design 0, with the
    fluid limit (and the return line's, where given) as lines and each pull shaded."""
    system = system or scenario.units
    with matplotlib.rc_context(PAGE_FONTS):
        return _draw_trace(scenario, trace, system)


def _draw_trace(scenario, trace, system: str) -> Figure:
    t_min = trace.time_s[:, 0] / 60.0
    limit, reason = limit_K(scenario)
    symbol = unit_symbol("temperature", system)
    fig = Figure(figsize=(5.6, 5.2))
    fig.subplots_adjust(**_MARGINS)
    ax = fig.add_subplot()
    for start, end in zip(trace.pull_start_s[:, 0], trace.pull_end_s[:, 0]):
        ax.axvspan(start / 60.0, end / 60.0, color=PULL_SHADE, lw=0, zorder=0)
    ax.plot(t_min, temperatures_shown(trace.return_K[:, 0], system), color=RETURN_COLOUR, lw=1.2,
            label="return line")
    ax.plot(t_min, temperatures_shown(trace.T_K[:, 0, OIL], system), color=OIL_COLOUR, lw=2.2, label="bulk oil (tank)")
    ax.plot(t_min, temperatures_shown(trace.T_K[:, 0, WALL], system), color=WALL_COLOUR, lw=1.2, ls="--",
            label="tank wall")
    limit_shown = temperatures_shown(limit, system)
    why = "hottest allowed" if reason == "max_temperature" else "pump's thinnest oil"
    ax.axhline(limit_shown, color=LIMIT_COLOUR, lw=1.5, ls=":")
    tops = [limit_shown]
    if scenario.return_line_max_temperature_K is not None:
        line_limit = to_shown(scenario.return_line_max_temperature_K, "temperature", system)
        ax.axhline(line_limit, color=RETURN_COLOUR, lw=1.5, ls=":")
        ax.annotate(f"return-line limit {line_limit:.0f} {symbol}", (t_min[-1], line_limit), xytext=(-2, 3),
                    textcoords="offset points", ha="right", va="bottom", color="#a0600a", fontsize=MIN_FONT_PT,
                    bbox=_LABEL_BOX, zorder=6)
        tops.append(line_limit)
    low, high = ax.get_ylim()   # headroom above the limit lines for their labels
    ax.set_ylim(low, max(high, max(tops) + 0.1 * (max(high, max(tops)) - low)))
    # at the left, where the oil is still cool, and above every series
    ax.annotate(f"limit {limit_shown:.0f} {symbol} ({why})", (0.0, limit_shown), xytext=(3, 3),
                textcoords="offset points", ha="left", va="bottom", color=LIMIT_COLOUR, fontsize=MIN_FONT_PT,
                bbox=_LABEL_BOX, zorder=6)
    ax.fill_between([], [], color=PULL_SHADE, label="pulls")  # legend entry for the shading
    ax.set_xlim(0.0, t_min[-1])
    ax.set_xlabel("time since the first pull (min)")
    ax.set_ylabel(f"temperature ({symbol})")
    if _title(ax, scenario.name or "planned session") > 1:
        fig.subplots_adjust(top=0.86)
    ax.grid(alpha=0.3)
    legend_below(fig, ax)
    return fig


def run_levels(planned: int, cap: int) -> list:
    """Edges of the colour bands for pulls before the limit, built around the planned pulls P:
    0, P/4, P/2, 3P/4, P, 1.5P, 2P, 3P and the cap (the most pulls the sweep counts); one band
    more, above the cap, holds the designs that go on all day or past the cap."""
    P = max(int(planned), 1)
    edges = {0, P, cap}
    edges |= {int(round(f * P)) for f in (0.25, 0.5, 0.75, 1.5, 2.0, 3.0)}
    edges = sorted(e for e in edges if 0 <= e <= cap)
    return edges + [cap + max(1, cap // 4)]


def band_colours(levels: list, planned: int):
    """One colour per band: warm (red to yellow) below the plan, cool (pale to deep blue) from the
    plan up, and the deepest blue for "all day"."""
    below = [lv for lv in levels[:-1] if lv < planned]
    above = [lv for lv in levels[:-1] if lv >= planned]
    warm = matplotlib.colormaps["YlOrRd_r"]
    cool = matplotlib.colormaps["GnBu"]
    colours = [warm(0.15 + 0.6 * i / max(len(below) - 1, 1)) for i in range(len(below))]
    colours += [cool(0.3 + 0.65 * i / max(len(above) - 1, 1)) for i in range(len(above))]
    return colours


def is_light(rgb) -> bool:
    """True where black reads better than white on the colour rgb (sRGB values 0-1; by its relative
    luminance, WCAG 2 weights without the gamma step: enough to pick one of two inks)."""
    red, green, blue = rgb[:3]
    return 0.2126 * red + 0.7152 * green + 0.0722 * blue > 0.45


def _ink_on(rgba) -> str:
    """Black or white (matplotlib's "k" or "w"), whichever reads better on a band of colour rgba."""
    return "k" if is_light(rgba) else "w"


def _labels_inside(fig, ax, texts) -> list:
    """The contour labels whose box lies wholly inside the axes; the others (which the axes would cut)
    are removed. The colour bar names every level, so a dropped label loses nothing."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    renderer = (fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)).get_renderer()
    box = ax.get_window_extent(renderer)
    kept = []
    for text in texts:
        extent = text.get_window_extent(renderer)
        gap = 5.0       # px clear of the axes' edges
        if (extent.x0 >= box.x0 + gap and extent.x1 <= box.x1 - gap and extent.y0 >= box.y0 + gap
                and extent.y1 <= box.y1 - gap):
            kept.append(text)
        else:
            text.remove()
    return kept


def plot_design_chart(scenario, sweep_result, system: str | None = None) -> Figure:
    """Pulls before the limit over oil volume (x) and cooler size (y), repeating the planned cycle
    from a cold start. The colour bands are built around the planned pulls (warm below the plan,
    cool from it up, the deepest for "all day"); the planned pull count is a bold outlined line; designs
    that can go on all day are hatched; the current rig is marked."""
    system = system or scenario.units
    r = sweep_result
    volumes = to_shown(np.asarray(r.oil_volumes_L) / 1000.0, "oil_volume", system)
    coolers = to_shown(np.asarray(r.coolers_W_per_K, dtype=float), "conductance", system)
    runs = np.asarray(r.runs_before_limit, dtype=float)
    unlimited = np.isnan(runs)           # sustainable, or more pulls than the sweep counted
    all_day = np.asarray(r.sustainable, dtype=bool)
    planned = int(r.pulls_planned)
    cap = int(getattr(r, "max_pulls", max(4 * planned, 40)))
    levels = run_levels(planned, cap)
    filled = np.where(unlimited, 0.5 * (levels[-2] + levels[-1]), np.minimum(runs, cap))

    with matplotlib.rc_context(PAGE_FONTS):
        fig = Figure(figsize=(5.6, 6.2))
        fig.subplots_adjust(left=0.15, right=0.80, bottom=0.33, top=0.93)
        ax = fig.add_subplot()
        X, Y = np.meshgrid(volumes, coolers, indexing="ij")
        colours = band_colours(levels, planned)
        cmap = ListedColormap(colours)
        norm = BoundaryNorm(levels, cmap.N)
        bands = ax.contourf(X, Y, filled, levels=levels, cmap=cmap, norm=norm)
        if all_day.any():
            ax.contourf(X, Y, all_day.astype(float), levels=[0.5, 1.5], colors="none", hatches=["//"])
        edges = [lv for lv in levels[1:-1] if lv != planned and filled.min() < lv < filled.max()]
        if edges:
            lines = ax.contour(X, Y, filled, levels=edges, colors="#333333", linewidths=0.5, alpha=0.7)
            texts = ax.clabel(lines, fmt="%d", fontsize=MIN_FONT_PT, inline_spacing=2)
            for text, level in zip(texts, edges * len(texts)):
                band = max(i for i, lv in enumerate(levels[:-1]) if lv <= float(text.get_text()))
                text.set_color(_ink_on(colours[band]))
                text.set_path_effects([])
        else:
            texts = []
        handles = []
        if filled.min() < planned < filled.max():
            line = ax.contour(X, Y, filled, levels=[planned], colors="white", linewidths=2.4)
            line.set_path_effects([patheffects.withStroke(linewidth=4.5, foreground="black")])
            handles.append(Line2D([], [], color="white", lw=2.4, path_effects=[
                patheffects.withStroke(linewidth=4.5, foreground="black")], label=f"your plan: {planned} pulls"))
        rig_volume = to_shown(scenario.reservoir.oil_volume_m3, "oil_volume", system)
        rig_cooler = to_shown(scenario.cooler_W_K, "conductance", system)
        star = ax.plot([rig_volume], [rig_cooler], marker="*", ms=16, color="#d62728", mec="white", mew=1.2,
                       ls="none", label="your rig now", clip_on=False, zorder=5)
        handles.append(star[0])
        bar = fig.colorbar(bands, ax=ax, ticks=levels[:-1], fraction=0.06, pad=0.03)
        bar.ax.set_yticks(levels[:-1] + [0.5 * (levels[-2] + levels[-1])])
        bar.ax.set_yticklabels([str(lv) for lv in levels[:-1]] + ["all day"])
        bar.set_label("pulls before the limit")
        _labels_inside(fig, ax, texts)       # the colour bar has taken its room: the axes are final
        v_unit, k_unit = unit_symbol("oil_volume", system), unit_symbol("conductance", system)
        ax.set_xlabel(f"oil in the tank ({v_unit}), tank scaled to fit")
        ax.set_ylabel(f"cooler size ({k_unit} of ETD)")
        limit_shown = to_shown(r.limit_C + ZERO_CELSIUS_K, "temperature", system)
        ax.set_title(f"Pulls before {limit_shown:.0f} {unit_symbol('temperature', system)}, repeating your cycle",
                     loc="left", y=1.0, fontsize="medium")
        fig.text(0.01, 0.01, "ETD: entering temperature difference (oil into\nthe cooler minus air). "
                 f"Top band: all day or over {cap}\npulls; hatched: can go on all day.", fontsize=MIN_FONT_PT,
                 va="bottom")
        fig.legend(handles=handles, loc="lower center", ncol=2, frameon=False, fontsize=MIN_FONT_PT,
                   bbox_to_anchor=(0.5, 0.13), handlelength=1.6, columnspacing=1.0)
    return fig
