"""The page's worker process: the same design chart and hot day as worked out in the page's own
process, its errors handed back, and a worker that has ended failing its requests with a
WorkerGone (which the page answers by working the charts out itself)."""
import numpy as np
import pytest

from thermo_budget import load_scenario
from thermo_budget.page_worker import Worker, WorkerGone, slow_charts

from conftest import SCENARIO_DIR


@pytest.fixture(scope="module")
def worker():
    started = Worker()
    yield started
    started.stop()


def test_the_worker_answers_as_the_page_would(worker):
    text = load_scenario(SCENARIO_DIR / "default.toml").changed(**{"reservoir.oil_volume": "14 L"}).to_toml()
    futures = [worker.submit(text, "SI"), worker.submit(text, "US")]   # answered in the order asked
    here = slow_charts(text, "SI")
    there, there_us = (future.result(timeout=300) for future in futures)
    assert there.design_png[:8] == b"\x89PNG\r\n\x1a\n" and there.hot_png[:8] == b"\x89PNG\r\n\x1a\n"
    assert there.design_png == here.design_png and there.hot_png == here.hot_png
    assert there_us.design_png != there.design_png          # drawn in the other units
    assert worker.ready()
    np.testing.assert_array_equal(there.hot.pulls, here.hot.pulls)
    np.testing.assert_array_equal(there.hot.cooler_W_per_K, here.hot.cooler_W_per_K)


def test_an_error_in_the_worker_comes_back_as_itself(worker):
    with pytest.raises(Exception) as raised:
        worker.submit("this is not TOML = = =", "SI").result(timeout=300)
    with pytest.raises(Exception) as here:
        slow_charts("this is not TOML = = =", "SI")
    assert type(raised.value) is type(here.value) and str(raised.value) == str(here.value)
    assert worker.alive()   # and it goes on answering


def test_a_worker_that_has_ended_fails_what_was_asked_of_it():
    gone = Worker()
    gone._process.kill()
    gone._process.wait()
    assert not gone.alive()
    with pytest.raises(WorkerGone):
        gone.submit(load_scenario(SCENARIO_DIR / "default.toml").to_toml(), "SI").result(timeout=60)


def test_the_page_asks_its_worker_once_it_is_ready():
    """After the first page the worker starts; once it is ready, a change of input is worked out
    there (its future is kept by the scenario's text) and the page shows the same charts."""
    import time
    from pathlib import Path
    from streamlit.testing.v1 import AppTest
    from thermo_budget import page_state
    page = AppTest.from_file(str(Path(__file__).resolve().parent.parent / "app.py"), default_timeout=300).run()
    running = page_state.worker(start=False)
    assert running is not None
    deadline = time.monotonic() + 120
    while not running.ready() and time.monotonic() < deadline:
        time.sleep(0.1)
    asked_before = len(page_state._slow_charts())
    oil = next(w for w in page.number_input if w.label.startswith("Oil in the tank"))
    oil.set_value(13.5).run()
    assert not page.exception and len(page.get("image")) == 3
    assert len(page_state._slow_charts()) == asked_before + 1
    (text, system), future = list(page_state._slow_charts().items())[-1]
    assert future.done() and future.result().design_png == slow_charts(text, system).design_png


def test_charts_drawn_in_the_page_are_kept_and_use_its_answers():
    """Where the worker was not asked, the page draws the charts itself with its own report (no
    second search for the sizing answers) and keeps them, so a rerun does not draw them again."""
    from thermo_budget import page_state, report
    scenario = load_scenario(SCENARIO_DIR / "default.toml").changed(**{"reservoir.oil_volume": "15.5 L"})
    text = scenario.to_toml()
    assert (text, "SI") not in page_state._slow_charts()
    drawn = page_state.slow_charts(text, "SI")
    kept = page_state._slow_charts()[(text, "SI")]
    assert kept.done() and kept.result() is drawn
    assert page_state.slow_charts(text, "SI") is drawn
    # the report's sizing answers give the grid the worker's own searches give
    from thermo_budget.design_sweep import design_axes
    for given, searched in zip(design_axes(scenario, report(scenario)), design_axes(scenario)):
        np.testing.assert_array_equal(given, searched)
