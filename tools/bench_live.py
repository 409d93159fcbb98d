"""The live watch over a whole test day: `python tools/bench.py --live` (or `python tools/bench_live.py`).
Prints its figures; asserts nothing.

The day is synthetic, made by our own model: an invented rig (the demo rig A of
scenarios/default.toml) run through a ten-hour plan of pulls, idling waits and engine-off breaks,
with a spell of pulls pushed past the oil's limit, read every second with 0.3 K of noise
(`simulated_day`; the tests use the same day).

Figures:
1. First answer: `watch --once --json` on the whole day's file as a whole process (start-up, reading
   36,000 rows, the estimate and the forecast), median of three.
2. Each later update, in one process following the file as a logger writes it (one row a second,
   a poll every two rows), at several times of the day: the estimate's part and the whole update
   (with the forecast).
3. Memory: the peak Python allocation (tracemalloc) while one watch reads the day at once, for the
   first two hours and for the whole day (a bounded estimate grows only by its thinned chart).
4. The page's live section on the whole day in Streamlit's AppTest: its first run and a later one.
5. The log fit on the same day (`fit` as a whole process).
The machine's other work makes every figure noisy; they are wall-clock times.
"""
from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # the checkout's package, run as a script

import subprocess
import sys
import tempfile
import time
import tracemalloc
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from thermo_budget.physics.network import OIL
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.inputs.scenario import DEFAULT_SCENARIO, load_scenario
from thermo_budget.engine.session import Resolution, Step
from thermo_budget.engine.solver import integrate

DAY_S = 10 * 3600.0
NOISE_K = 0.3
# The day's truth: 8 sub-steps per pull and at most 15 s in a wait, read every second between its
# points by linear interpolation (against solve_ivp, tests/test_live_day.py: the oil within 0.05 K;
# the hose liner, fastest after a pull, within 1 K).
DAY_RESOLUTION = Resolution(pull_substeps=8, curve_substeps=8, max_substep_s=15.0, max_substeps=100_000)


def day_scenario():
    """The demo rig A with its planned cadence (7 kW pulls of 15 s, 3 min idling), ten of them."""
    return load_scenario(DEFAULT_SCENARIO)


def day_plan() -> list[Step]:
    """Ten hours: the planned cadence in the morning, a spell of longer pulls pushed past the
    limit, an engine-off break, pulls with longer waits, lunch with the engine off, and the longer
    waits to the end of the day. Every pull and wait starts on a whole second."""
    pull = Step(kind="pull", duration_s=15.0, engine="on", power_W=7000.0, rpm=3600)
    long_pull = pull.with_duration(30.0)
    idle = Step(kind="wait", duration_s=180.0, engine="idle", power_W=150.0, rpm=1400)
    off = Step(kind="wait", duration_s=1.0, engine="off")
    slow = idle.with_duration(300.0)
    plan = [pull, idle] * 30 + [long_pull, idle.with_duration(60.0)] * 4 + [off.with_duration(2400.0)]
    plan += [pull, slow] * 20 + [off.with_duration(3600.0)]
    used = sum(step.duration_s for step in plan)
    cycles = int((DAY_S - used) // 315.0)
    plan += [pull, slow] * cycles
    plan.append(off.with_duration(DAY_S - sum(step.duration_s for step in plan)))
    return plan


@dataclass
class SimulatedDay:
    """A logged day: time_s (M,), the true state (M, k) K, the reading (M,) K with noise, and the
    pull flag and absorbed power of the interval that ends at each row (M,)."""
    time_s: np.ndarray
    state_K: np.ndarray
    reading_K: np.ndarray
    pull: np.ndarray
    power_W: np.ndarray

    def lines(self, rows=None) -> list[str]:
        """The CSV's header and rows (time_s, oil_C, pull, power_W)."""
        rows = range(self.time_s.size) if rows is None else rows
        return ["time_s,oil_C,pull,power_W"] + [
            f"{self.time_s[i]:.0f},{self.reading_K[i] - 273.15:.3f},{int(self.pull[i])},{self.power_W[i]:.0f}"
            for i in rows]


def simulated_day(scenario=None, plan=None, dt_s: float = 1.0, seed: int = 20) -> SimulatedDay:
    """Run the plan through our model from the scenario's start temperature and read it every dt_s."""
    scenario = day_scenario() if scenario is None else scenario
    plan = day_plan() if plan is None else plan
    trace = integrate(build_rig(scenario), plan, scenario.start_K, resolution=DAY_RESOLUTION)
    end = float(trace.time_s[-1, 0])
    times = np.arange(0.0, end + 0.5 * dt_s, dt_s)
    state = np.stack([np.interp(times, trace.time_s[:, 0], trace.T_K[:, 0, k]) for k in range(trace.T_K.shape[2])],
                     axis=1)
    ends = np.cumsum([step.duration_s for step in plan])
    step_of_row = np.minimum(np.searchsorted(ends, times - 0.5 * dt_s, side="right"), len(plan) - 1)
    pull = np.array([plan[j].is_pull for j in step_of_row])
    power = np.array([plan[j].power_W if plan[j].flowing else 0.0 for j in step_of_row])
    pull[0], power[0] = False, 0.0
    noise = np.random.default_rng(seed).normal(0.0, NOISE_K, times.size)
    return SimulatedDay(time_s=times, state_K=state, reading_K=state[:, OIL] + noise, pull=pull, power_W=power)


def _whole_process_s(args: list[str], repeats: int = 3) -> tuple[float, float]:
    """(median wall-clock s, median CPU s of the child) of `python -m thermo_budget ARGS`."""
    import resource
    times, cpu = [], []
    for _ in range(repeats):
        used = resource.getrusage(resource.RUSAGE_CHILDREN)
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "thermo_budget", *args], check=True, capture_output=True)
        times.append(time.perf_counter() - start)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpu.append(after.ru_utime + after.ru_stime - used.ru_utime - used.ru_stime)
    return float(np.median(times)), float(np.median(cpu))


def follow_updates_s(scenario, day: SimulatedDay, path: Path, at_s, rows_per_poll: int = 2, polls: int = 20):
    """Per-update times at each time in at_s: the file written up to that time at once and read,
    then `polls` polls of rows_per_poll new rows each. Returns, per time, (time, median and max of
    the reading and estimate's part, median and max of the whole update with the forecast)."""
    from thermo_budget.logs.live_watch import LiveWatch
    lines = day.lines()
    results = []
    for at in at_s:
        first = int(np.searchsorted(day.time_s, at))
        path.write_text("\n".join(lines[:first + 1]) + "\n")
        watch = LiveWatch(scenario, path)
        watch.update()
        estimate_s, whole_s, cpu_s = [], [], []
        with open(path, "a") as handle:
            for k in range(polls):
                rows = lines[first + 1 + k * rows_per_poll: first + 1 + (k + 1) * rows_per_poll]
                handle.write("\n".join(rows) + "\n")
                handle.flush()
                start, cpu = time.perf_counter(), time.process_time()
                watch.read()
                read = time.perf_counter()
                watch.state()
                end = time.perf_counter()
                estimate_s.append(read - start)
                whole_s.append(end - start)
                cpu_s.append(time.process_time() - cpu)
        results.append((at, float(np.median(estimate_s)), float(np.max(estimate_s)),
                        float(np.median(whole_s)), float(np.max(whole_s)), float(np.median(cpu_s))))
    return results


def memory_bytes(scenario, day: SimulatedDay, path: Path, until_s: float) -> tuple[int, int, int]:
    """(Python allocation kept by one watch after reading the day up to until_s at once, the peak
    while it read, the file's size)."""
    from thermo_budget.logs.live_watch import LiveWatch
    rows = int(np.searchsorted(day.time_s, until_s))
    path.write_text("\n".join(day.lines(range(rows))) + "\n")
    tracemalloc.start()
    watch = LiveWatch(scenario, path)
    watch.update()
    kept, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    del watch
    return kept, peak, path.stat().st_size


def page_live_s(day: SimulatedDay, folder: Path) -> tuple[float, float] | None:
    """(the page's live section's first run on the whole day, a later run after two more rows), s,
    in Streamlit's AppTest (no browser); None without streamlit."""
    try:
        from streamlit.testing.v1 import AppTest
    except ImportError:
        return None

    def app(folder_name):
        from pathlib import Path

        from thermo_budget.page.page_live import live_section
        from thermo_budget.inputs.scenario import DEFAULT_SCENARIO
        live_section(Path(DEFAULT_SCENARIO).read_text(), "SI", Path(folder_name))
    lines = day.lines()
    path = folder / "page" / "day.csv"
    path.parent.mkdir()
    path.write_text("\n".join(lines[:-2]) + "\n")
    at = AppTest.from_function(app, args=(str(path.parent),), default_timeout=600)
    start = time.perf_counter()
    at.run()
    first = time.perf_counter() - start
    with open(path, "a") as handle:
        handle.write("\n".join(lines[-2:]) + "\n")
    start = time.perf_counter()
    at.run()
    return first, time.perf_counter() - start


def main(argv=None):
    scenario = day_scenario()
    start = time.perf_counter()
    day = simulated_day(scenario)
    made = time.perf_counter() - start
    print(f"live watch on a simulated day: {day.time_s.size} rows at 1 s ({made:.1f} s to make it), peak oil "
          f"{day.state_K[:, OIL].max() - 273.15:.1f} degC; wall-clock figures on a shared machine, noisy")
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "day.csv"
        path.write_text("\n".join(day.lines()) + "\n")
        first, first_cpu = _whole_process_s(["watch", str(DEFAULT_SCENARIO), str(path), "--once", "--json"])
        print(f"  first answer, `watch --once --json` on the whole day as a whole process: {first:.2f} s wall, "
              f"{first_cpu:.2f} s CPU (medians of 3; target <= 5 s)")
        for at, est_med, est_max, whole_med, whole_max, cpu in follow_updates_s(scenario, day, Path(folder) / "live.csv",
                                                                                 (3600.0, 5 * 3600.0, 9.9 * 3600.0)):
            print(f"  later updates at {at / 3600:.1f} h (2 new rows each, 20 polls): reading and estimate median "
                  f"{est_med * 1000:.1f} ms, max {est_max * 1000:.1f} ms; whole update with the forecast median "
                  f"{whole_med * 1000:.0f} ms, max {whole_max * 1000:.0f} ms, CPU median {cpu * 1000:.0f} ms "
                  f"(target <= 200 ms)")
        for until in (2 * 3600.0, DAY_S):
            kept, peak, size = memory_bytes(scenario, day, Path(folder) / "memory.csv", until)
            print(f"  Python allocation after reading {until / 3600:.0f} h at once: kept {kept / 1e6:.2f} MB, peak while "
                  f"reading {peak / 1e6:.1f} MB (the file: {size / 1e6:.2f} MB)")
        page = page_live_s(day, Path(folder))
        if page:
            print(f"  the page's live section on the whole day (AppTest, no browser): first run {page[0]:.2f} s, "
                  f"a later run with 2 new rows {page[1]:.2f} s (its refresh: every 3 s)")
        fit, fit_cpu = _whole_process_s(["fit", str(DEFAULT_SCENARIO), str(path), "--json"], repeats=1)
        print(f"  `fit` on the whole day as a whole process: {fit:.1f} s wall, {fit_cpu:.1f} s CPU (target <= 30 s)")


if __name__ == "__main__":
    main(sys.argv[1:])
