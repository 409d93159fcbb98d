"""Benchmark: `python tools/bench.py [--quick]`. Prints its figures; asserts nothing.

1. The 2,500-design sweep (50 oil volumes x 50 coolers, default scenario): wall time, and the planned-
   session part against a per-design loop of scipy solve_ivp (RK45, rtol 1e-6) on the same
   equations, timed on a subset and scaled; peak temperatures compared on that subset.
2. report() for the default scenario, as a multiple of one plain simulation of the session.
3. The floor: the same planned-session sweep with coefficients frozen at the start state and one
   closed-form step (matrix exponential of the augmented affine system) per step.
0. Start-up: whole processes of `--help`, `run --json` on the default scenario and the 2,500-design
   sweep (median of three runs each); `--startup` prints only these.
4. report() with the uncertainty band, and the band's share of it (default scenario, and the same
   rig asked for 30 pulls, where every sizing answer is non-trivial).
With --live, only the live watch over a ten-hour day logged every second (bench_live.py).
5. The page's work after one input change (a new oil volume on the default scenario): the answers,
   the design chart's sweep, the hot day and the three charts' Vega-Lite specs, as the page computes
   them, without Streamlit; with --page, also whole reruns of app.py in Streamlit's AppTest (no
   browser); with --browser, the redraw in headless Chromium.
"""
from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # the checkout's package, run as a script

import argparse
import os
import shutil
import subprocess
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp
from scipy.linalg import expm

from thermo_budget.physics.network import N_NODES, OIL, Inputs, node_equations
from thermo_budget.planning.session_runs import session_outcome
from thermo_budget.physics.rig import take_designs
from thermo_budget.planning.answers import report
from thermo_budget.inputs.scenario import DEFAULT_SCENARIO, load_scenario
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.engine.session import pump_flow_m3_s
from thermo_budget.engine.solver import propagate_linear
from thermo_budget.planning.design_sweep import sweep


def _best_of(repeats, function):
    best, result = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - start)
    return best, result


def solve_ivp_peak_K(rig, steps, T0_K, rtol=1e-6):
    """Peak bulk temperature of one design by solve_ivp (RK45) step by step on node_equations."""
    T = np.full(N_NODES, T0_K, dtype=float)
    peak = T[OIL]
    for step in steps:
        def rhs(t, y, step=step):
            fraction = t / step.duration_s
            inputs = Inputs(power_W=np.array([step.power_at(fraction)], dtype=float).reshape(1),
                            volume_flow_m3_s=np.array([pump_flow_m3_s(rig.displacement_m3, step.rpm_at(fraction),
                                                                      rig.volumetric_efficiency)], dtype=float).reshape(1))
            C, L, b, _, _ = node_equations(rig, y[None, :], inputs)
            return (b[0] - L[0] @ y) / C[0]
        solution = solve_ivp(rhs, (0.0, step.duration_s), T, method="RK45", rtol=rtol, atol=1e-6)
        T = solution.y[:, -1]
        peak = max(peak, float(solution.y[OIL].max()))
    return peak


def frozen_expm_session(rig, steps, T0_K, n, use_eigh=False):
    """The floor: coefficients frozen at the start state, one matrix exponential per step (scipy's
    expm of the augmented affine system, or, use_eigh=True, our own eigen-decomposition step)."""
    T = np.full((n, N_NODES), T0_K)
    peak = T[:, OIL].copy()
    frozen = {}
    for step in steps:
        key = (step.kind, step.engine, step.power_W, step.rpm, step.duration_s)
        if key not in frozen:
            flow = float(pump_flow_m3_s(rig.displacement_m3, step.rpm_at(0.5), rig.volumetric_efficiency))
            C, L, b, _, _ = node_equations(rig, T, Inputs(power_W=np.full(n, step.mean_power_W(0, 1)),
                                                          volume_flow_m3_s=np.full(n, flow)))
            frozen[key] = (C, L, b)
        C, L, b = frozen[key]
        if use_eigh:
            T, _ = propagate_linear(C, L, b, T, np.full(n, step.duration_s))
            peak = np.maximum(peak, T[:, OIL])
            continue
        k = N_NODES
        M = np.zeros((n, k + 1, k + 1))
        M[:, :k, :k] = -L / C[:, :, None]
        M[:, :k, k] = b / C
        E = expm(M * step.duration_s)
        T = np.einsum("nij,nj->ni", E[:, :k, :k], T) + E[:, :k, k]
        peak = np.maximum(peak, T[:, OIL])
    return peak


def page_redraw_s(scenario, oil_volume_L: float) -> tuple[float, float, float, float]:
    """Seconds the page spends, after the oil volume changes to a value not seen before, on (the
    answers with the band, the temperature chart's spec, the design chart's sweep and the hot day,
    the design and hot-day charts' specs). The browser draws the charts from the specs."""
    from thermo_budget.page import page_charts
    from thermo_budget.planning.answers import simulate
    from thermo_budget.output.vega_charts import design_spec, hot_day_spec
    changed = scenario.changed(**{"reservoir.oil_volume": f"{oil_volume_L} L"})
    text = changed.to_toml()
    start = time.perf_counter()
    trace = simulate(changed)
    answers = report(changed, trace)
    answered = time.perf_counter()
    page_charts.trace_chart_spec(text, changed.units, trace, answers.band.envelope)
    traced = time.perf_counter()
    result = page_charts.design_sweep(text, answers)
    from thermo_budget.planning.hot_day import hot_day
    hot = hot_day(changed)
    swept = time.perf_counter()
    design_spec(changed, result, changed.units)
    hot_day_spec(changed, hot, changed.units)
    return answered - start, traced - answered, swept - traced, time.perf_counter() - swept


def band_share_s(scenario, repeats: int = 3) -> tuple[float, float]:
    """(report() with the band, of it the band alone) s, best of `repeats` each."""
    from thermo_budget.planning.bands import band_report
    from thermo_budget.planning.answers import planning_answers, session_report, simulate
    trace = simulate(scenario)
    point = session_report(scenario, trace)
    point.update(planning_answers(scenario))
    t_report, _ = _best_of(repeats, lambda: report(scenario, trace))
    t_band, _ = _best_of(repeats, lambda: band_report(scenario, point))
    return t_report, t_band


def apptest_redraws_s(oil_volumes_L=(16.5, 17.5, 18.5, 19.5, 20.5)) -> list[float] | None:
    """Seconds per rerun of app.py (Streamlit AppTest, no browser) after the oil volume changes to
    each value in turn; None where app.py is not beside the package."""
    from pathlib import Path
    app = Path(__file__).resolve().parent.parent / "app.py"
    if not app.exists():
        return None
    from streamlit.testing.v1 import AppTest
    page = AppTest.from_file(str(app), default_timeout=120).run()
    times = []
    for volume in oil_volumes_L:
        oil = next(w for w in page.number_input if w.label.startswith("Oil in the tank"))
        start = time.perf_counter()
        oil.set_value(volume).run()
        times.append(time.perf_counter() - start)
    return times


# The browser: $THERMO_BROWSER, else the first Chromium on the PATH (never downloaded).
BROWSER = os.environ.get("THERMO_BROWSER") or shutil.which("chromium") or shutil.which("chromium-browser")
BROWSER_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
# True once the script run is over: the run marked some element stale (Streamlit does so while it
# reruns) and none is stale now, no spinner is left, at least `count` charts are drawn by the browser
# (each a canvas or an svg: every chart on the page depends on the oil volume, so each is drawn anew)
# and every image on the page is loaded. window.__tbStaleSeen is set by _WATCH_STALE below.
_PAGE_SETTLED = """([count]) => {
  if (!window.__tbStaleSeen) return false;
  if (document.querySelector('[data-stale=true], [data-testid=stSpinner]')) return false;
  const charts = [...document.querySelectorAll('[data-testid=stVegaLiteChart]')];
  if (charts.filter(c => c.querySelector('canvas, svg')).length < count) return false;
  return [...document.querySelectorAll('img')].every(img => img.complete && img.naturalWidth > 0);
}"""
# Arms the flag above: set once an element turns stale after the input is committed.
_WATCH_STALE = """() => {
  window.__tbStaleSeen = false;
  const seen = () => { if (document.querySelector('[data-stale=true]')) window.__tbStaleSeen = true; };
  if (window.__tbObserver) window.__tbObserver.disconnect();
  window.__tbObserver = new MutationObserver(seen);
  window.__tbObserver.observe(document.body, {subtree: true, attributes: true, childList: true,
                                               attributeFilter: ['data-stale']});
}"""


def browser_redraws_s(oil_volumes_L=(16.5, 17.5, 18.5, 19.5, 20.5)) -> list[float] | None:
    """Seconds from committing a new oil volume in the sidebar (Enter) to the page being drawn again
    (the run marked the page stale, then the run over, no spinner, the three charts drawn and every
    image loaded), in headless
    Chromium against `streamlit run app.py` on 127.0.0.1, 1366 x 900. None where Chromium,
    playwright or app.py is missing."""
    import os
    import signal
    import socket
    import urllib.request
    from pathlib import Path
    app = Path(__file__).resolve().parent.parent / "app.py"
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        return None
    if not (app.exists() and BROWSER and Path(BROWSER).exists()):
        return None
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port = sock.getsockname()[1]
    url = f"http://127.0.0.1:{port}"
    server = subprocess.Popen([sys.executable, "-m", "streamlit", "run", str(app), "--server.headless", "true",
                               "--server.address", "127.0.0.1", "--server.port", str(port),
                               "--browser.gatherUsageStats", "false"], cwd=app.parent,
                              stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    try:
        for _ in range(180):
            try:
                with urllib.request.urlopen(url + "/_stcore/health", timeout=2):
                    break
            except OSError:
                time.sleep(0.5)
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=BROWSER, args=BROWSER_FLAGS)
            page = browser.new_page(viewport={"width": 1366, "height": 900})
            page.goto(url)
            page.evaluate("() => { window.__tbStaleSeen = true; }")
            page.wait_for_function(_PAGE_SETTLED, arg=[3], timeout=180_000)
            page.wait_for_timeout(2000)
            field = page.locator('[data-testid="stSidebar"] [data-testid="stNumberInput"]').filter(
                has_text="Oil in the tank").locator("input")
            times = []
            for volume in oil_volumes_L:
                field.fill(f"{volume}")
                page.evaluate(_WATCH_STALE)
                start = time.perf_counter()
                field.press("Enter")
                page.wait_for_function(_PAGE_SETTLED, arg=[3], timeout=180_000, polling=20)
                times.append(time.perf_counter() - start)
            browser.close()
        return times
    finally:
        os.killpg(server.pid, signal.SIGTERM)
        server.wait(timeout=20)


STARTUP_COMMANDS = {
    "--help": ["--help"],
    "run --json": ["run", str(DEFAULT_SCENARIO), "--json"],
    "sweep, 2,500 designs": ["sweep", str(DEFAULT_SCENARIO), "--oil-volumes", "5:40:50", "--coolers", "0:100:50"],
}
# `run`'s start-up: what every run does before its answers (the imports, the compiled engine's cached
# code loaded, the scenario read, its rig built, its session simulated once), on standard air, in a
# process that ends as the command does (cli.console_main).
STARTUP_PROBE = ("import os, sys; from thermo_budget.inputs.scenario import load_scenario; "
                 "from thermo_budget.planning.answers import simulate; simulate(load_scenario(sys.argv[1])); "
                 "sys.stdout.flush(); os._exit(0)")
STARTUP_TARGETS_S = {"--help": 0.5, "run --json": 1.0, "run's start-up (to the first simulation)": 1.0,
                     "sweep, 2,500 designs": 2.5}


def startup_s(repeats: int = 3) -> dict[str, float]:
    """Median wall time (s) of each STARTUP_COMMANDS as a whole process (`python -m thermo_budget ...`),
    and of `run`'s start-up (STARTUP_PROBE)."""
    commands = {name: [sys.executable, "-m", "thermo_budget", *args] for name, args in STARTUP_COMMANDS.items()}
    commands["run's start-up (to the first simulation)"] = [sys.executable, "-c", STARTUP_PROBE, str(DEFAULT_SCENARIO)]
    times = {}
    for name, command in commands.items():
        runs = []
        for _ in range(repeats):
            start = time.perf_counter()
            subprocess.run(command, stdout=subprocess.DEVNULL, check=True)
            runs.append(time.perf_counter() - start)
        times[name] = float(np.median(runs))
    return times


def startup_line(times: dict[str, float]) -> str:
    python_alone = float(np.median([_best_of(1, lambda: subprocess.run([sys.executable, "-c", "pass"]))[0]
                                    for _ in range(3)]))
    parts = [f"{name} {t:.2f} s (target < {STARTUP_TARGETS_S[name]:g})" for name, t in times.items()]
    return "start-up, whole process, median of 3: " + "; ".join(parts) + f"; python alone {python_alone:.2f} s"


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python tools/bench.py")
    parser.add_argument("--quick", action="store_true", help="a smaller solve_ivp subset")
    parser.add_argument("--page", action="store_true", help="also time whole reruns of app.py (Streamlit AppTest)")
    parser.add_argument("--startup", action="store_true", help="only the start-up times of whole processes")
    parser.add_argument("--browser", action="store_true",
                        help="also time the page in headless Chromium after each of 5 oil-volume changes")
    parser.add_argument("--live", action="store_true",
                        help="only the live watch over a simulated ten-hour day (tools/bench_live.py)")
    args = parser.parse_args(argv)
    if args.live:
        _sys.path.insert(0, str(_Path(__file__).resolve().parent))
        from bench_live import main as live_main
        return live_main()
    print(startup_line(startup_s()), flush=True)
    if args.startup:
        return
    scenario = load_scenario(DEFAULT_SCENARIO)
    volumes = np.linspace(5.0, 40.0, 50)
    coolers = np.linspace(0.0, 100.0, 50)
    V, K = np.meshgrid(volumes, coolers, indexing="ij")
    rig = build_rig(scenario, oil_volume_m3=V.ravel() / 1000.0, cooler_W_K=K.ravel())
    n = V.size
    sweep(scenario, volumes[:3], coolers[:3])  # warm up tables and caches

    t_sweep, _ = _best_of(2, lambda: sweep(scenario, volumes, coolers))
    t_session, (peaks, _) = _best_of(3, lambda: session_outcome(scenario, rig, n))
    subset = np.linspace(0, n - 1, 6 if args.quick else 20).astype(int)
    start = time.perf_counter()
    reference = np.array([solve_ivp_peak_K(take_designs(rig, np.array([i])), scenario.steps, scenario.start_K)
                          for i in subset])
    t_loop = (time.perf_counter() - start) / subset.size * n
    t_floor, _ = _best_of(3, lambda: frozen_expm_session(rig, scenario.steps, scenario.start_K, n))
    t_floor_eigh, _ = _best_of(3, lambda: frozen_expm_session(rig, scenario.steps, scenario.start_K, n, True))

    one = build_rig(scenario)
    t_one, _ = _best_of(5, lambda: session_outcome(scenario, one, 1))
    pointwise = scenario.changed(**{"uncertainty.enabled": False})   # the point answers alone
    report(pointwise)
    t_report, _ = _best_of(3, lambda: report(pointwise))

    band_figures = [(name, *band_share_s(s)) for name, s in
                    (("default", scenario), ("default asked for 30 pulls", scenario.changed(**{"session.repeat": 30})))]

    page_redraw_s(scenario, 17.0)   # warm up
    redraws = [page_redraw_s(scenario, volume) for volume in (16.5, 17.5, 18.5, 19.5, 20.5)]
    best_redraw = min(redraws, key=sum)
    median_total = float(np.median([sum(r) for r in redraws]))

    print(f"sweep, 2,500 designs (session, sustainability, runs before limit): {t_sweep:.3f} s")
    print(f"  planned session for all designs, one batch:   {t_session:.3f} s")
    print(f"  solve_ivp RK45 loop (rtol 1e-6), scaled from {subset.size} designs: {t_loop:.1f} s"
          f"  -> {t_loop / t_session:.0f}x faster (target >= 30x)")
    print(f"  peak temperature, max |ours - solve_ivp| on the subset: {np.max(np.abs(peaks[subset] - reference)):.4f} K"
          " (target <= 0.1 K)")
    print(f"  floor (frozen coefficients, one expm per step): {t_floor:.3f} s -> ours / floor = "
          f"{t_session / t_floor:.2f} (target <= 5)")
    print(f"  floor with our eigen-decomposition step instead of scipy expm: {t_floor_eigh:.3f} s -> ours / floor = "
          f"{t_session / t_floor_eigh:.2f}")
    print(f"report() with every sizing answer, band off: {t_report:.3f} s = {t_report / t_one:.1f} plain simulations "
          f"of {t_one * 1000:.1f} ms (targets <= 40 and well under 0.5 s)")
    from thermo_budget.planning.bands import N_SAMPLES, N_SIZING_SAMPLES
    for name, t_with, t_band in band_figures:
        print(f"report() with the band ({N_SAMPLES} samples, {N_SIZING_SAMPLES} for the sizing answers), {name}: "
              f"{t_with:.3f} s, of it the band {t_band:.3f} s ({100 * t_band / t_with:.0f} %, "
              f"{t_band / t_one:.1f} plain simulations) (target <= 1 s)")
    print(f"the page's work after one input change, in one process (5 new oil volumes): median {median_total:.3f} s;"
          f" best {sum(best_redraw):.3f} s ="
          f" answers {best_redraw[0]:.3f} + temperature chart's spec {best_redraw[1]:.3f} + design chart's sweep"
          f" and the hot day {best_redraw[2]:.3f} + their specs {best_redraw[3]:.3f}"
          " (Streamlit and the browser add their own time)")
    in_browser = browser_redraws_s() if args.browser else None
    if in_browser:
        print(f"page in the browser after one input change (headless Chromium, 5 new oil volumes): median "
              f"{np.median(in_browser):.3f} s, range {min(in_browser):.3f}-{max(in_browser):.3f} s (target <= 1.5 s)")
    elif args.browser:
        print("page in the browser: not measured (no chromium on the PATH nor THERMO_BROWSER, no playwright, or no app.py)")
    reruns = apptest_redraws_s() if args.page else None
    if reruns:
        print(f"  the whole page in Streamlit's AppTest (no browser), 5 new oil volumes: median {np.median(reruns):.3f} s,"
              f" range {min(reruns):.3f}-{max(reruns):.3f} s")


if __name__ == "__main__":
    main()
