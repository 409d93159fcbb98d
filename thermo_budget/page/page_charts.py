"""The page's charts as pure functions of a scenario's TOML text: Vega-Lite specifications for
the browser to draw (output/vega_charts.py), and PNG bytes of the same charts for the downloads.

Text in, spec or bytes out: easy to cache by the scenario's text, and nothing here depends on Streamlit.
"""
from __future__ import annotations

import io
import threading
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..display import to_shown
from ..planning.design_sweep import DESIGN_COOLERS, DESIGN_VOLUMES, design_axes  # noqa: F401 (the page's grid)
from ..output.plots import legend_below, plot_design_chart, plot_trace
from ..output.vega_charts import ENVELOPE_COLOUR, ENVELOPE_LABEL, design_spec, hot_day_spec, trace_spec
from ..planning.results import Report
from ..planning.answers import simulate
from ..inputs.scenario import load_scenario, read_toml_text
from ..units import ZERO_CELSIUS_K

CHART_DPI = 90
CHARTS_KEPT = 32   # design sweeps and hot days kept by the page, by scenario text


# zlib's fastest level: the temperature chart's PNG took 48 ms instead of 57 ms, the design chart's
# 61 ms instead of 75 ms, for 3-5 % more bytes (measured on the default scenario).
PNG_COMPRESS_LEVEL = 1


def png_bytes(figure, dpi: int = CHART_DPI) -> bytes:
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi, pil_kwargs={"compress_level": PNG_COMPRESS_LEVEL})
    return buffer.getvalue()


def design_sweep(toml_text: str, answers: Report | None = None):
    """The design chart's sweep (pulls before the limit over oil volume x cooler size) of the
    scenario in `toml_text`; answers: its report, if known. It does not depend on the unit system,
    so a page can keep it and redraw only the chart when the units change. Counting stops at four
    times the planned pulls (at least 40): the colour scale needs no more."""
    from ..planning.design_sweep import sweep
    scenario = load_scenario(read_toml_text(toml_text))
    volumes, coolers = design_axes(scenario, answers)
    planned = sum(step.is_pull for step in scenario.steps)
    return sweep(scenario, volumes, coolers, max_pulls=max(4 * planned, 40))


def design_chart_png(toml_text: str, system: str, answers: Report | None = None, result=None) -> bytes:
    """The design chart of the scenario in `toml_text`, drawn in the units of `system`.
    result: its design_sweep, if already known (else worked out here)."""
    scenario = load_scenario(read_toml_text(toml_text))
    result = design_sweep(toml_text, answers) if result is None else result
    return png_bytes(plot_design_chart(scenario, result, system))


def trace_chart_figure(toml_text: str, system: str, trace=None):
    """The temperature chart of the planned session as a Figure (trace: simulate() of it, if known)."""
    scenario = load_scenario(read_toml_text(toml_text))
    return plot_trace(scenario, simulate(scenario) if trace is None else trace, system)


def envelope_png(toml_text: str, system: str, trace=None, envelope: dict | None = None) -> bytes:
    """The temperature chart (the page's download) with the P10-P90 envelope of the bulk oil behind
    its line where one is given (trace: simulate() of the scenario, if already known)."""
    figure = trace_chart_figure(toml_text, system, trace)
    if envelope:
        ax = figure.axes[0]
        minutes = np.asarray(envelope["time_s"]) / 60.0
        low = to_shown(np.asarray(envelope["p10_C"]) + ZERO_CELSIUS_K, "temperature", system)
        high = to_shown(np.asarray(envelope["p90_C"]) + ZERO_CELSIUS_K, "temperature", system)
        ax.fill_between(minutes, low, high, color=ENVELOPE_COLOUR, alpha=0.18, lw=0, zorder=1,
                        label=ENVELOPE_LABEL)
        legend_below(figure, ax)
    return png_bytes(figure)


def trace_chart_spec(toml_text: str, system: str, trace, envelope: dict | None) -> dict:
    """The temperature chart (with the band's P10-P90 envelope where given) as a Vega-Lite spec."""
    return trace_spec(load_scenario(read_toml_text(toml_text)), trace, system, envelope)


# --- the design chart and the hot day, kept by the scenario's text -------------------------------------

@dataclass(frozen=True)
class SlowCharts:
    """The design chart and the hot day of one scenario in one unit system.
    sweep : design_sweep.SweepResult, the design chart's grid; design_spec : its Vega-Lite chart;
    hot : hot_day.HotDay of the scenario; hot_spec : its Vega-Lite chart."""
    sweep: object
    design_spec: dict
    hot: object
    hot_spec: dict


KEEP = CHARTS_KEPT              # design sweeps and hot days kept, by scenario text
_sweeps: dict = {}              # the design sweeps, oldest first
_sweeps_lock = threading.Lock()


def _sweep(toml_text: str, answers: Report | None = None):
    """The design chart's sweep, kept by text. answers: the scenario's report where the caller has
    it; else the sizing answers its grid needs are worked out here."""
    with _sweeps_lock:
        if toml_text in _sweeps:
            return _sweeps[toml_text]
    result = design_sweep(toml_text, answers)
    with _sweeps_lock:
        while len(_sweeps) >= KEEP:
            _sweeps.pop(next(iter(_sweeps)))
        _sweeps[toml_text] = result
    return result


@lru_cache(maxsize=KEEP)
def _hot_day(toml_text: str):
    from ..planning.hot_day import hot_day
    from ..inputs.scenario import load_scenario, read_toml_text
    return hot_day(load_scenario(read_toml_text(toml_text)))


def slow_charts(toml_text: str, system: str, answers: Report | None = None) -> SlowCharts:
    """The design chart and the hot day of the scenario in `toml_text`, in the units of `system`
    (answers: its report, if known). The sweep and the hot day are kept by text, so a change of
    units only redraws. Their pictures (design_chart_png for the design chart's download) are drawn only when
    asked for."""
    scenario = load_scenario(read_toml_text(toml_text))
    sweep, hot = _sweep(toml_text, answers), _hot_day(toml_text)
    return SlowCharts(sweep, design_spec(scenario, sweep, system), hot, hot_day_spec(scenario, hot, system))
