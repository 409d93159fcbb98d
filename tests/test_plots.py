"""Figures: they draw what they claim (units on the axes, the limit line, one shade per pull, the
planned-session contour and the rig marker), from real results and from a hand-built sweep."""
from __future__ import annotations

import types

import numpy as np
import pytest
from matplotlib.figure import Figure

from thermo_budget.output.plots import plot_design_chart, plot_trace
from thermo_budget.planning.answers import simulate


@pytest.fixture(scope="module")
def default(default_scenario):
    return default_scenario


@pytest.fixture(scope="module")
def trace(default):
    return simulate(default)


def test_trace_plot_has_three_temperatures_limit_and_pull_shading(default, trace):
    fig = plot_trace(default, trace)
    assert isinstance(fig, Figure)
    ax = fig.axes[0]
    assert "(°C)" in ax.get_ylabel() and "(min)" in ax.get_xlabel()
    labels = [line.get_label() for line in ax.get_lines()]
    assert {"bulk oil (tank)", "return line", "tank wall"} <= set(labels)
    limit = [line for line in ax.get_lines() if line.get_linestyle() == ":"][0]
    assert limit.get_ydata()[0] == pytest.approx(80.0)
    assert len(ax.patches) == trace.pull_start_s.shape[0]  # one shaded span per pull


def test_trace_plot_in_us_units(default, trace):
    ax = plot_trace(default, trace, "US").axes[0]
    assert "(°F)" in ax.get_ylabel()
    limit = [line for line in ax.get_lines() if line.get_linestyle() == ":"][0]
    assert limit.get_ydata()[0] == pytest.approx(176.0)  # 80 degC = 176 degF
    bulk = [line for line in ax.get_lines() if line.get_label() == "bulk oil (tank)"][0]
    assert bulk.get_ydata()[0] == pytest.approx(68.0)  # starts at 20 degC = 68 degF


def _fake_sweep():
    volumes = np.linspace(5.0, 40.0, 6)
    coolers = np.linspace(0.0, 10.0, 5)
    V, K = np.meshgrid(volumes, coolers, indexing="ij")
    runs = np.floor(V * (1.0 + K / 4.0) / 2.0)  # invented, rising with oil and cooler
    runs[V * (1 + K) > 150] = np.nan              # invented "can go on all day" corner
    return types.SimpleNamespace(oil_volumes_L=volumes, coolers_W_per_K=coolers, runs_before_limit=runs, sustainable=np.isnan(runs),
                                 peak_C=np.full(V.shape, 60.0), pulls_under_limit=np.minimum(runs, 10),
                                 pulls_planned=10, limit_C=80.0)


def test_design_chart_marks_rig_and_draws_planned_contour(default):
    fig = plot_design_chart(default, _fake_sweep())
    ax = fig.axes[0]
    assert "(L)" in ax.get_xlabel() and "W/K" in ax.get_ylabel()
    marker = [line for line in ax.get_lines() if line.get_label() == "your rig now"][0]
    assert marker.get_xdata()[0] == pytest.approx(18.0) and marker.get_ydata()[0] == 0.0
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "your plan: 10 pulls" in legend
    assert "ETD" in ax.get_ylabel() and any("entering temperature difference" in t.get_text() for t in fig.texts)
    assert "pulls before" in fig.axes[1].get_ylabel()  # the colour bar
    assert fig.axes[1].get_yticklabels()[-1].get_text() == "all day"


def test_design_chart_in_us_units(default):
    ax = plot_design_chart(default, _fake_sweep(), "US").axes[0]
    assert "(gal)" in ax.get_xlabel() and "BTU/hr/°F" in ax.get_ylabel()
    marker = [line for line in ax.get_lines() if line.get_label() == "your rig now"][0]
    assert marker.get_xdata()[0] == pytest.approx(18.0 / 3.785411784)  # 1 US gal = 3.785411784 L (NIST SP 811)


def test_design_chart_all_unlimited_and_all_short_do_not_fail(default):
    sweep = _fake_sweep()
    sweep.runs_before_limit = np.full_like(sweep.runs_before_limit, np.nan)
    assert isinstance(plot_design_chart(default, sweep), Figure)
    sweep.runs_before_limit = np.ones_like(sweep.peak_C)
    assert isinstance(plot_design_chart(default, sweep), Figure)


def _legend(fig):
    """The chart's legend entries (under the chart, plots.legend_below, or on the axes)."""
    legend = fig.legends[0] if fig.legends else fig.axes[0].get_legend()
    return [t.get_text() for t in legend.get_texts()]


def test_design_chart_from_real_sweep(default, default_report):
    """A real sweep around the default rig (6-30 L x 0-5 W/K): more oil or a larger cooler never
    gives fewer pulls, a hotter peak or a cadence that stops being sustainable; the rig's own cell
    (18 L, no cooler) is the report's answer; and the chart draws the plan's contour exactly when
    the plan splits the grid (10 planned: every design finishes, no contour; 30: some do not)."""
    from thermo_budget.planning.design_sweep import sweep
    volumes, coolers = [6.0, 12.0, 18.0, 30.0], [0.0, 2.0, 5.0]
    result = sweep(default, volumes, coolers)
    runs = np.nan_to_num(result.runs_before_limit, nan=np.inf)
    for grid in (runs, result.sustainable, -result.peak_C):
        assert np.all(grid[1:] >= grid[:-1] - 1e-6) and np.all(grid[:, 1:] >= grid[:, :-1] - 1e-6)
    assert result.runs_before_limit[2, 0] == default_report["runs_before_limit"]
    assert result.peak_C[2, 0] == pytest.approx(default_report["peak_C"], abs=0.05)   # two resolutions
    assert 0 < np.count_nonzero(result.sustainable) < result.sustainable.size
    fig = plot_design_chart(default, result)
    assert _legend(fig) == ["your rig now"]                 # 10 planned, every design gets there
    assert fig.axes[1].get_yticklabels()[-1].get_text() == "all day"
    busy = default.changed(**{"session.repeat": 30})
    busy_result = sweep(busy, volumes, coolers)
    assert np.nanmin(busy_result.runs_before_limit) < 30 < np.nanmax(busy_result.runs_before_limit)
    assert _legend(plot_design_chart(busy, busy_result)) == ["your plan: 30 pulls", "your rig now"]


@pytest.mark.parametrize("planned,cap", [(12, 48), (10, 40), (1, 40), (40, 160), (3, 40), (26, 104)])
def test_run_levels_are_built_around_the_plan(planned, cap):
    from thermo_budget.output.plots import band_colours, run_levels
    levels = run_levels(planned, cap)
    assert levels[0] == 0 and all(a < b for a, b in zip(levels, levels[1:]))
    assert planned in levels and cap in levels
    assert levels[-1] > cap                     # the "all day" band above the cap
    below = [lv for lv in levels[:-1] if lv < planned]
    assert len(below) >= min(planned, 3)        # the plan's own neighbourhood gets bands of its own
    colours = band_colours(levels, planned)
    assert len(colours) == len(levels) - 1
    warm, cool = colours[:len(below)], colours[len(below):]
    assert all(c[0] > c[2] for c in warm) and all(c[2] > c[0] for c in cool)   # red below the plan, blue from it


def test_band_edges_are_inked_to_read_on_their_band():
    # White on the darkest band of the chart's colour map, black on the palest (common practice, no source).
    import matplotlib
    from thermo_budget.output.plots import _ink_on
    cmap = matplotlib.colormaps["YlGnBu"]
    assert _ink_on(cmap(1.0)) == "w"
    assert _ink_on(cmap(0.0)) == "k"


def _text_boxes(fig):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw(renderer)
    from matplotlib.text import Text
    return renderer, [t for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()]


def test_charts_are_readable_on_a_phone(default):
    """Every text at least 11 px when the chart is shown 360 px wide (a 400 px phone), the legend off
    the axes (so off every curve), the limit's label above every series, and every contour label
    wholly inside the axes."""
    from thermo_budget.page.page_charts import CHART_DPI
    from thermo_budget.planning.answers import simulate
    shown_scale = 360.0 / (5.6 * CHART_DPI)
    for fig in (plot_trace(default, simulate(default)), plot_design_chart(default, _fake_sweep())):
        renderer, texts = _text_boxes(fig)
        for text in texts:
            assert text.get_fontsize() * CHART_DPI / 72.0 * shown_scale >= 11.0, text.get_text()
        ax = fig.axes[0]
        assert ax.get_legend() is None and fig.legends      # the legend is the figure's, under the axes
        legend_box = fig.legends[0].get_window_extent(renderer)
        assert legend_box.y1 <= ax.get_window_extent(renderer).y0
        for text in ax.texts:
            box, frame = text.get_window_extent(renderer), ax.get_window_extent(renderer)
            assert frame.x0 <= box.x0 and box.x1 <= frame.x1 + 1 and frame.y0 <= box.y0 and box.y1 <= frame.y1 + 1, \
                text.get_text()
    fig = plot_trace(default, simulate(default))
    limit_label = next(t for t in fig.axes[0].texts if t.get_text().startswith("limit"))
    assert limit_label.get_zorder() > max(line.get_zorder() for line in fig.axes[0].get_lines())
    assert limit_label.get_bbox_patch() is not None                              # on a box of its own


def test_trace_chart_swatches_are_all_different(default):
    """No two series of the temperature chart share a swatch (colour and style)."""
    from matplotlib.colors import to_hex
    from thermo_budget.planning.answers import simulate
    fig = plot_trace(default, simulate(default))
    swatches = []
    for handle in fig.legends[0].legend_handles:
        colour = handle.get_color() if hasattr(handle, "get_linestyle") and not hasattr(handle, "get_facecolor") \
            else handle.get_facecolor()
        swatches.append((to_hex(colour), getattr(handle, "get_linestyle", lambda: "patch")()))
    assert len(set(swatches)) == len(swatches), swatches
