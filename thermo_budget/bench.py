"""Benchmark: `python -m thermo_budget.bench [--quick]`. Prints its figures; asserts nothing.

1. The 2,500-design sweep (50 oil volumes x 50 coolers, default scenario): wall time, and the planned-
   session part against a per-design loop of scipy solve_ivp (RK45, rtol 1e-6) on the same
   equations, timed on a subset and scaled; peak temperatures compared on that subset.
2. report() for the default scenario, as a multiple of one plain simulation of the session.
3. The floor: the same planned-session sweep with coefficients frozen at the start state and one
   closed-form step (matrix exponential of the augmented affine system) per step.
4. The page's work after one input change (a new oil volume on the default scenario): the answers,
   the temperature chart and the design chart, as the page computes them, without Streamlit; with
   --page, also whole reruns of app.py in Streamlit's AppTest (no browser).
"""
from __future__ import annotations

import argparse
import time

import numpy as np
from scipy.integrate import solve_ivp
from scipy.linalg import expm

from .network import N_NODES, OIL, Inputs, node_equations
from .planning import session_outcome, take_designs
from .report import report
from .scenario import DEFAULT_SCENARIO, build_rig, load_scenario
from .session import pump_flow_m3_s
from .solver import propagate_linear
from .design_sweep import sweep


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
    answers, the temperature chart PNG, the design chart's sweep, the design chart PNG)."""
    from . import page_charts
    from .report import simulate
    changed = scenario.changed(**{"reservoir.oil_volume": f"{oil_volume_L} L"})
    text = changed.to_toml()
    start = time.perf_counter()
    trace = simulate(changed)
    answers = report(changed, trace)
    answered = time.perf_counter()
    page_charts.trace_chart_png(text, changed.units, trace)
    traced = time.perf_counter()
    result = page_charts.design_sweep(text, answers)
    swept = time.perf_counter()
    page_charts.design_chart_png(text, changed.units, result=result)
    return answered - start, traced - answered, swept - traced, time.perf_counter() - swept


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


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python -m thermo_budget.bench")
    parser.add_argument("--quick", action="store_true", help="a smaller solve_ivp subset")
    parser.add_argument("--page", action="store_true", help="also time whole reruns of app.py (Streamlit AppTest)")
    args = parser.parse_args(argv)
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
    report(scenario)
    t_report, _ = _best_of(3, lambda: report(scenario))

    page_redraw_s(scenario, 17.0)   # warm up matplotlib
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
    print(f"report() with every sizing answer: {t_report:.3f} s = {t_report / t_one:.1f} plain simulations "
          f"of {t_one * 1000:.1f} ms (targets <= 40 and well under 0.5 s)")
    print(f"page after one input change (5 new oil volumes): median {median_total:.3f} s; best {sum(best_redraw):.3f} s ="
          f" answers {best_redraw[0]:.3f} + temperature chart {best_redraw[1]:.3f} + design chart's sweep"
          f" {best_redraw[2]:.3f} + its drawing {best_redraw[3]:.3f}"
          " (Streamlit and the browser add their own time)")
    reruns = apptest_redraws_s() if args.page else None
    if reruns:
        print(f"  the whole page in Streamlit's AppTest (no browser), 5 new oil volumes: median {np.median(reruns):.3f} s,"
              f" range {min(reruns):.3f}-{max(reruns):.3f} s")


if __name__ == "__main__":
    main()
