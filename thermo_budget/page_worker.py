"""The page's second core: a worker process draws the design chart and the hot-day chart while the
page's own process works out report() and draws the rest.

Neither chart needs the page's answers: the design chart's axes come from the same searches as
report()'s (page_charts.design_axes), so they are the same numbers, and the hot day is its own
batched run. On the 2-core machine this takes the two charts (about half the page's work after an
input change) off the page's critical path. The worker keeps the sweep and the hot day of the last
scenarios it saw, so a change of units only redraws. Where the worker cannot start or breaks, the
page draws the charts itself (charts_of returns None).
"""
from __future__ import annotations

import multiprocessing
from concurrent.futures import CancelledError, Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from functools import lru_cache


def _warm_up():
    """In the worker, once: the imports and the tables every chart needs."""
    from . import hot_day, page_charts  # noqa: F401
    from .air import air_table
    air_table()


@lru_cache(maxsize=16)
def _sweep_and_hot_day(toml_text: str):
    from . import page_charts
    from .hot_day import hot_day
    from .scenario import load_scenario, read_toml_text
    return page_charts.design_sweep(toml_text), hot_day(load_scenario(read_toml_text(toml_text)))


def draw_charts(toml_text: str, system: str) -> dict:
    """The worker's job: {"design_png", "hot_day", "hot_day_png"} for a scenario and a unit system."""
    from . import page_charts
    sweep, hot = _sweep_and_hot_day(toml_text)
    return {"design_png": page_charts.design_chart_png(toml_text, system, result=sweep),
            "hot_day": hot, "hot_day_png": page_charts.hot_day_chart_png(toml_text, system, hot)}


def start_pool() -> ProcessPoolExecutor | None:
    """One worker process (started fresh, not forked from the page's threads); None where it cannot start."""
    try:
        return ProcessPoolExecutor(max_workers=1, mp_context=multiprocessing.get_context("spawn"),
                                   initializer=_warm_up)
    except (OSError, ValueError):
        return None


def submit(pool: ProcessPoolExecutor | None, toml_text: str, system: str) -> Future | None:
    """Ask the worker for the charts; None where there is no worker."""
    if pool is None:
        return None
    try:
        return pool.submit(draw_charts, toml_text, system)
    except RuntimeError:      # the pool is broken or shut down
        return None


def charts_of(future: Future | None) -> dict | None:
    """The worker's charts, or None where there is no worker or it broke (the page then draws them
    itself). An error of the scenario's own is raised here, as it would be in the page's process."""
    if future is None:
        return None
    try:
        return future.result()
    except (BrokenProcessPool, CancelledError):
        return None
