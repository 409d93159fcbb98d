"""The page's two charts as pure functions of a scenario's TOML text, returning PNG bytes.

Text in, bytes out: easy to cache by the scenario's text, and nothing here depends on Streamlit.
"""
from __future__ import annotations

import io
import threading
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .network import passive_rejection_W
from .planning import minimum_oil_volume_L, required_cooler_W_K
from .plots import plot_design_chart, plot_hot_day, plot_trace
from .report import simulate
from .scenario import Scenario, build_rig, limit_K, load_scenario, read_toml_text

DESIGN_VOLUMES, DESIGN_COOLERS = 10, 10   # the page's design grid
CHART_DPI = 90


def png_bytes(figure, dpi: int = CHART_DPI) -> bytes:
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def design_grid(scenario: Scenario, min_oil_volume_L: float | None, cooler_sustained_W_K: float | None,
                n_volumes: int = DESIGN_VOLUMES, n_coolers: int = DESIGN_COOLERS):
    """Oil volumes (L) and cooler sizes (W/K) for the design chart.

    Volumes run from a quarter to three times the current oil, below the smallest reservoir that
    finishes the session (0.8 x) and past it (1.3 x) where the quarter and the three times do not. Coolers run from none to 2.5 x the all-day
    cooler (which is at least the session's cooler), and past 1.5 x the rig's own cooler; where no
    cooler can sustain the cadence, to three times the rig's own passive loss at the limit.
    """
    volume_L = scenario.oil_volume_L
    top_L = max(3.0 * volume_L, 1.3 * (min_oil_volume_L or 0.0))
    bottom_L = min(0.25 * volume_L, 0.8 * (min_oil_volume_L or volume_L))
    volumes = np.linspace(bottom_L, top_L, n_volumes)
    sizes = [1.5 * scenario.cooler_W_K]
    if cooler_sustained_W_K:
        sizes.append(2.5 * cooler_sustained_W_K)
    else:
        limit, _ = limit_K(scenario)
        passive_W = float(passive_rejection_W(build_rig(scenario, cooler_W_K=0.0), limit)[0])
        sizes.append(3.0 * passive_W / max(limit - scenario.ambient_K, 1e-9))
    coolers = np.linspace(0.0, max(max(sizes), 1.0), n_coolers)
    return volumes, coolers


def design_axes(scenario: Scenario, answers: dict | None = None, n_volumes: int = DESIGN_VOLUMES,
                n_coolers: int = DESIGN_COOLERS):
    """design_grid with the two sizing answers it needs: taken from `answers` (the scenario's
    report) where given, else worked out here by the report's own searches."""
    if answers is None:
        notes: list[str] = []
        answers = {"cooler_required_sustained_W_per_K": required_cooler_W_K(scenario, notes, sustained=True),
                   "min_oil_volume_L": minimum_oil_volume_L(scenario, notes)}
    return design_grid(scenario, answers["min_oil_volume_L"], answers["cooler_required_sustained_W_per_K"],
                       n_volumes, n_coolers)


def design_sweep(toml_text: str, answers: dict | None = None):
    """The design chart's sweep (pulls before the limit over oil volume x cooler size) of the
    scenario in `toml_text`; answers: its report, if known. It does not depend on the unit system,
    so a page can keep it and redraw only the chart when the units change. Counting stops at four
    times the planned pulls (at least 40): the colour scale needs no more."""
    from .design_sweep import sweep
    scenario = load_scenario(read_toml_text(toml_text))
    volumes, coolers = design_axes(scenario, answers)
    planned = sum(step.is_pull for step in scenario.steps)
    return sweep(scenario, volumes, coolers, max_pulls=max(4 * planned, 40))


def design_chart_png(toml_text: str, system: str, answers: dict | None = None, result=None) -> bytes:
    """The design chart of the scenario in `toml_text`, drawn in the units of `system`.
    result: its design_sweep, if already known (else worked out here)."""
    scenario = load_scenario(read_toml_text(toml_text))
    result = design_sweep(toml_text, answers) if result is None else result
    return png_bytes(plot_design_chart(scenario, result, system))


def trace_chart_figure(toml_text: str, system: str, trace=None):
    """The temperature chart of the planned session as a Figure (trace: simulate() of it, if known)."""
    scenario = load_scenario(read_toml_text(toml_text))
    return plot_trace(scenario, simulate(scenario) if trace is None else trace, system)


def trace_chart_png(toml_text: str, system: str, trace=None) -> bytes:
    """The temperature chart of the planned session (trace: simulate() of it, if already known)."""
    return png_bytes(trace_chart_figure(toml_text, system, trace))


def hot_day_chart_png(toml_text: str, system: str, hot=None) -> bytes:
    """The hot-day chart (hot: hot_day.hot_day() of the scenario, if already known)."""
    from .hot_day import hot_day
    scenario = load_scenario(read_toml_text(toml_text))
    return png_bytes(plot_hot_day(scenario, hot_day(scenario) if hot is None else hot, system))


# --- the design chart and the hot day, kept by the scenario's text -------------------------------------

@dataclass(frozen=True)
class SlowCharts:
    """design_png : the design chart; hot : hot_day.HotDay of the scenario; hot_png : its chart."""
    design_png: bytes
    hot: object
    hot_png: bytes


KEEP = 32                       # design sweeps and hot days kept, by scenario text
_sweeps: dict = {}              # the design sweeps, oldest first
_sweeps_lock = threading.Lock()


def _sweep(toml_text: str, answers: dict | None = None):
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
    from .hot_day import hot_day
    from .scenario import load_scenario, read_toml_text
    return hot_day(load_scenario(read_toml_text(toml_text)))


def slow_charts(toml_text: str, system: str, answers: dict | None = None) -> SlowCharts:
    """The design chart and the hot day of the scenario in `toml_text`, in the units of `system`
    (answers: its report, if known). The sweep and the hot day are kept by text, so a change of
    units only redraws."""
    hot = _hot_day(toml_text)
    return SlowCharts(design_chart_png(toml_text, system, result=_sweep(toml_text, answers)), hot,
                      hot_day_chart_png(toml_text, system, hot))
