"""Benchmark: a long planned day (200 pulls) answered with its band as a whole process, and the
sweep's memory estimate against the peak it measures. Prints its figures; asserts nothing.

    python tools/bench_long.py            # both
    python tools/bench_long.py --day      # the 200-pull day of every shipped scenario, median of 3
    python tools/bench_long.py --memory   # sweeps of 2,500 and 10,000 designs, fresh processes
"""
from __future__ import annotations

import argparse
import re
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SCENARIOS = ("default", "plastic_tank_cylinder", "us_20hp_small_tank", "us_units_fan")
DAY_PULLS = 200
DAY_TARGET_S = 5.0


def day_s(name: str, folder: Path, repeats: int = 3) -> list[float]:
    """Wall seconds of `python -m thermo_budget run` on the scenario with its cycle repeated to
    DAY_PULLS pulls (each shipped cycle holds one pull), whole processes."""
    text = (ROOT / "scenarios" / f"{name}.toml").read_text(encoding="utf-8")
    path = folder / f"{name}_{DAY_PULLS}.toml"
    path.write_text(re.sub(r"(?m)^repeat = \d+", f"repeat = {DAY_PULLS}", text), encoding="utf-8")
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "thermo_budget", "run", str(path)], cwd=ROOT, check=True,
                       stdout=subprocess.DEVNULL)
        times.append(time.perf_counter() - start)
    return times


def _sweep_peak(name: str, n_designs: int) -> None:
    """In this (fresh) process: a sweep of about n_designs over the scenario's own range, printed as
    'designs seconds measured_bytes estimated_bytes' (measured: the peak resident size over the
    resident size before it)."""
    import numpy as np
    from thermo_budget.errors import ScenarioError
    from thermo_budget.inputs.scenario import load_scenario
    from thermo_budget.planning.design_sweep import estimated_sweep_bytes, sweep
    scenario = load_scenario(ROOT / "scenarios" / f"{name}.toml")
    V0 = scenario.oil_volume_L
    side = int(round(n_designs ** 0.5))
    sweep(scenario, np.linspace(0.5 * V0, 3 * V0, 3), np.linspace(0, 50, 3))     # the compiled code loaded
    before = next(int(line.split()[1]) * 1024 for line in open("/proc/self/status") if line.startswith("VmRSS"))
    start = time.perf_counter()
    try:
        sweep(scenario, np.linspace(0.3 * V0, 4 * V0, side), np.linspace(0, 60, side))
    except ScenarioError:
        print(side * side, "refused", 0, estimated_sweep_bytes(scenario, side * side))
        return
    seconds = time.perf_counter() - start
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(side * side, f"{seconds:.2f}", peak - before, estimated_sweep_bytes(scenario, side * side))


def memory_rows() -> list[str]:
    rows = []
    for name in SCENARIOS:
        for n in (2_500, 10_000):
            out = subprocess.run([sys.executable, __file__, "--sweep-peak", name, str(n)], cwd=ROOT, check=True,
                                 capture_output=True, text=True).stdout.split()
            designs, seconds, measured, estimate = out[0], out[1], int(out[2]), int(out[3])
            if seconds == "refused":
                rows.append(f"  {name}, {designs} designs: refused (estimate {estimate / 2**20:.0f} MiB, over the cap)")
                continue
            rows.append(f"  {name}, {designs} designs: {seconds} s, peak {measured / 2**20:.0f} MiB, estimate "
                        f"{estimate / 2**20:.0f} MiB ({estimate / measured - 1:+.0%})")
    return rows


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python tools/bench_long.py")
    parser.add_argument("--day", action="store_true", help="only the 200-pull days")
    parser.add_argument("--memory", action="store_true", help="only the sweeps' memory")
    parser.add_argument("--sweep-peak", nargs=2, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.sweep_peak:
        sys.path.insert(0, str(ROOT))
        return _sweep_peak(args.sweep_peak[0], int(args.sweep_peak[1]))
    if not args.memory:
        print(f"a planned day of {DAY_PULLS} pulls, `run` with band and verdict, whole process (3 runs; target "
              f"<= {DAY_TARGET_S:.0f} s):")
        with tempfile.TemporaryDirectory() as folder:
            for name in SCENARIOS:
                times = sorted(day_s(name, Path(folder)))
                print(f"  {name}: median {times[1]:.2f} s (range {times[0]:.2f}-{times[-1]:.2f} s)", flush=True)
    if not args.day:
        print("sweep memory, measured peak against the estimate that sets the cap:")
        print("\n".join(memory_rows()))


if __name__ == "__main__":
    main()
