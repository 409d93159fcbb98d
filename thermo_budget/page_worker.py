"""The page's second process: the design chart and the hot day, worked out beside the answers.

The slowest parts of the page that need none of its answers (the design chart's sweep over 100
rigs and the hot day's batched run, with their charts) go to one long-lived worker process as
soon as the scenario's text is known. On a 2-core machine they are then worked out while the page
works out its answers. Text in, PNG bytes and small arrays out; no physics here.

The worker is `python -m thermo_budget.page_worker`, fed pickled requests on its stdin and
answering in order on its stdout. It is a plain child process rather than a multiprocessing pool:
a pool started from inside Streamlit would run the page's script again in the child.
"""
from __future__ import annotations

import collections
import os
import pickle
import subprocess
import sys
import threading
from concurrent.futures import Future
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

from . import page_charts
from .results import Report


@dataclass(frozen=True)
class SlowCharts:
    """design_png : the design chart; hot : hot_day.HotDay of the scenario; hot_png : its chart."""
    design_png: bytes
    hot: object
    hot_png: bytes


READY = "ready"   # the worker's first message


class WorkerGone(RuntimeError):
    """The worker process ended before it answered."""


KEEP = page_charts.CHARTS_KEPT  # design sweeps and hot days kept, by scenario text
_sweeps: dict = {}              # the design sweeps, oldest first
_sweeps_lock = threading.Lock()


def _sweep(toml_text: str, answers: Report | None = None):
    """The design chart's sweep, kept by text. answers: the scenario's report where the caller has
    it (the page's own process); else the sizing answers its grid needs are worked out here."""
    with _sweeps_lock:
        if toml_text in _sweeps:
            return _sweeps[toml_text]
    result = page_charts.design_sweep(toml_text, answers)
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


def slow_charts(toml_text: str, system: str, answers: Report | None = None) -> SlowCharts:
    """The design chart and the hot day of the scenario in `toml_text`, in the units of `system`
    (answers: its report, if known). The sweep and the hot day are kept by text, so a change of
    units only redraws."""
    hot = _hot_day(toml_text)
    return SlowCharts(page_charts.design_chart_png(toml_text, system, result=_sweep(toml_text, answers)), hot,
                      page_charts.hot_day_chart_png(toml_text, system, hot))


class Worker:
    """The worker process and the futures of the requests it has not answered yet (in order)."""

    def __init__(self):
        package_parent = str(Path(__file__).resolve().parent.parent)
        env = {**os.environ, "PYTHONPATH": os.pathsep.join(
            [package_parent] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p])}
        self._process = subprocess.Popen([sys.executable, "-m", "thermo_budget.page_worker"],
                                         stdin=subprocess.PIPE, stdout=subprocess.PIPE, env=env)
        self._pending: collections.deque[Future] = collections.deque()   # in the order asked
        self._asking = threading.Lock()
        self._ready = threading.Event()   # set when the worker has said it is ready
        threading.Thread(target=self._read_answers, name="page-worker-reader", daemon=True).start()

    def submit(self, toml_text: str, system: str) -> Future:
        """A future of slow_charts(toml_text, system), worked out in the worker."""
        future: Future = Future()
        with self._asking:   # the answers come back in the order the requests were written
            self._pending.append(future)
            try:
                pickle.dump((toml_text, system), self._process.stdin)
                self._process.stdin.flush()
            except (OSError, ValueError):   # the worker has ended (the reader fails the others)
                self._pending.remove(future)
                future.set_exception(WorkerGone("the page's worker process has ended"))
        return future

    def ready(self) -> bool:
        """True once the worker has imported what it needs (it says so before its first answer)."""
        return self._ready.is_set()

    def _read_answers(self):
        try:
            self._ready.set() if pickle.load(self._process.stdout) == READY else self._process.kill()
        except Exception:
            self._process.kill()
        while True:
            try:
                ok, value = pickle.load(self._process.stdout)
            except Exception:   # it ended, or sent what this side cannot read: either way, gone
                self._process.kill()
                break
            future = self._pending.popleft()
            future.set_result(value) if ok else future.set_exception(value)
        self._process.wait()
        with self._asking:
            while self._pending:
                self._pending.popleft().set_exception(WorkerGone("the page's worker process has ended"))

    def alive(self) -> bool:
        return self._process.poll() is None

    def stop(self):
        if self.alive():
            self._process.stdin.close()
            self._process.wait(timeout=10)


def serve(requests, answers):
    """The worker's loop: say READY, then read (toml_text, system) pickles from `requests` and write
    (True, SlowCharts) or (False, the exception) pickles to `answers`, until `requests` ends."""
    answers.write(pickle.dumps(READY))
    answers.flush()
    while True:
        try:
            toml_text, system = pickle.load(requests)
        except EOFError:
            return
        try:
            answer = (True, slow_charts(toml_text, system))
        except Exception as error:  # handed back to the page, which raises it where it waits
            answer = (False, error)
        try:
            data = pickle.dumps(answer)
            if not answer[0]:
                pickle.loads(data)   # an exception must also unpickle on the page's side
        except Exception:  # one that does not goes back as its text
            data = pickle.dumps((False, RuntimeError(f"{type(answer[1]).__name__}: {answer[1]}")))
        answers.write(data)
        answers.flush()


if __name__ == "__main__":
    answers_out = os.fdopen(os.dup(sys.stdout.fileno()), "wb")
    os.dup2(sys.stderr.fileno(), sys.stdout.fileno())   # a stray print must not corrupt the answers
    from thermo_budget import hot_day, page_worker, plots  # noqa: F401  (imported before the first request)
    page_charts.png_bytes(plots.Figure(figsize=(1, 1)).text(0.5, 0.5, "°").figure)   # and the fonts loaded
    page_worker.serve(sys.stdin.buffer, answers_out)   # by its own name, so that its answers unpickle
