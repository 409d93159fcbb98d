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
