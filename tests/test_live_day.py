"""A whole test day watched live: ten hours logged every second (36,001 rows), made by our own model
with 0.3 K of noise (tools/bench_live.py's simulated_day, the benchmark's day), checked against
a reference integrated independently here (scipy's solve_ivp on the same network equations).

The day is made once per session. Speed is measured by the benchmark (`python -m
tools/bench.py --live`), not here. The scenario's uncertainty band is off here, so the ready
time is the model's own, and re-running the model with it is a check of it.
"""
from __future__ import annotations

import re

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from conftest import load_tool

day_plan, day_scenario, simulated_day = (getattr(load_tool("bench_live"), name) for name in ("day_plan", "day_scenario", "simulated_day"))
from thermo_budget.logs.live_forecast import OFF, planned_pull
from thermo_budget.logs.live_watch import LiveWatch
from thermo_budget.physics.network import OIL, Inputs, node_equations
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.inputs.scenario import limit_K
from thermo_budget.engine.session import pump_flow_m3_s

IN_PULL_S = 3905.0            # 5 s into the morning's 21st pull (3900-3915 s)
OVER_LIMIT_S = 6220.0         # 10 s into the engine-off break that follows them, the oil above 80 degC
CHUNK_ENDS_S = (1800.0, IN_PULL_S, OVER_LIMIT_S, 5 * 3600.0, 36000.0)


@pytest.fixture(scope="module")
def scenario():
    return day_scenario().changed(**{"uncertainty.enabled": False})


@pytest.fixture(scope="module")
def day():
    return simulated_day()


def reference_K(scenario, steps, start_K, t0_s, times_s):
    """The network's states at times_s (after t0_s) from start_K, by solve_ivp (LSODA, rtol 1e-8)
    step by step on network.node_equations: an integrator independent of the package's."""
    rig = build_rig(scenario)
    y, t, out = np.asarray(start_K, dtype=float), t0_s, []
    for step in steps:
        flow = float(pump_flow_m3_s(rig.displacement_m3, float(step.rpm_at(0.5)), rig.volumetric_efficiency))
        inputs = Inputs(power_W=np.array([step.power_W if step.flowing else 0.0]), volume_flow_m3_s=np.array([flow]))

        def rhs(_, T, inputs=inputs):
            C, L, b = node_equations(rig, T[None, :], inputs)[:3]
            return (b[0] - L[0] @ T) / C[0]
        end = t + step.duration_s
        inside = times_s[(times_s > t) & (times_s <= end)]
        solution = solve_ivp(rhs, (t, end), y, method="LSODA", rtol=1e-8, atol=1e-6, dense_output=True)
        if inside.size:
            out.append(solution.sol(inside).T)
        y, t = solution.y[:, -1], end
    return np.concatenate(out)


def plan_from(t_s: float):
    """The day's plan cut at t_s: the steps after it (the first one shortened)."""
    plan, start = day_plan(), 0.0
    for j, step in enumerate(plan):
        if start + step.duration_s > t_s:
            return [step.with_duration(start + step.duration_s - t_s)] + plan[j + 1:]
        start += step.duration_s
    return []


def test_the_simulated_day_agrees_with_solve_ivp_through_the_pulls_past_the_limit(scenario, day):
    """Our model's day, read every second, against solve_ivp from the same state at 5,700 s, through
    the four long pulls and into the break (5,700-6,400 s): the oil (what is logged) within 0.06 K
    (measured 0.053 K on the six-node model, at the day's resolution),
    every node within 1 K (the hose liner cools fast after a pull, between the day's points 15 s
    apart)."""
    i0 = int(np.searchsorted(day.time_s, 5700.0))
    times = day.time_s[(day.time_s > 5700.0) & (day.time_s <= 6400.0)]
    steps = plan_from(5700.0)
    reference = reference_K(scenario, steps[:10], day.state_K[i0], 5700.0, times)
    ours = day.state_K[i0 + 1:i0 + 1 + times.size]
    assert reference.shape == ours.shape
    assert np.max(np.abs(ours[:, OIL] - reference[:, OIL])) < 0.06
    assert np.max(np.abs(ours - reference)) < 1.0
    assert day.state_K[:, OIL].max() > limit_K(scenario)[0] + 5.0      # the day does pass the limit


@pytest.fixture(scope="module")
def followed(scenario, day, tmp_path_factory):
    """The day followed as it is written (five appends, one update after each; the two minutes before
    the break two rows a poll), and at two of them a second watch started afresh on the file as it
    stands. {time: (followed, restarted)}."""
    folder = tmp_path_factory.mktemp("day")
    path = folder / "day.csv"
    lines = day.lines()
    watch = LiveWatch(scenario, path)
    states, done = {}, 0
    path.write_text(lines[0] + "\n")
    for end in CHUNK_ENDS_S:
        rows = int(np.searchsorted(day.time_s, end + 1e-6))
        # before the break, two rows a poll as a logger writes them (across two flag edges)
        polls = range(int(np.searchsorted(day.time_s, 6100.0)), rows, 2) if end == OVER_LIMIT_S else []
        for upto in list(polls) + [rows]:
            with open(path, "a") as handle:
                handle.write("\n".join(lines[1 + done:1 + upto]) + "\n")
            done = upto
            if upto < rows:
                watch.read()
        state = watch.update()
        copy = folder / f"restart_{end:.0f}.csv"
        copy.write_text(path.read_text())
        states[end] = (state, LiveWatch(scenario, copy).update()) if end in (OVER_LIMIT_S, 5 * 3600.0) else (state, None)
    return states


def test_restarted_mid_day_the_estimate_is_the_followed_one_and_near_the_truth(followed, day):
    for end, (state, restarted) in followed.items():
        truth = day.state_K[int(np.searchsorted(day.time_s, end))]
        assert state.time_s == end
        assert abs(state.estimate_K[OIL] - truth[OIL]) < 0.5, end
        assert np.max(np.abs(state.estimate_K - truth)) < 2.0, end
        if restarted is not None:
            assert np.max(np.abs(restarted.estimate_K - state.estimate_K)) <= 0.3
            assert restarted.in_pull == state.in_pull and restarted.forecast.pulls_left == state.forecast.pulls_left


def test_during_a_pull_the_wait_counts_through_its_rest(followed):
    state, _ = followed[IN_PULL_S]
    assert state.in_pull and state.forecast.wait_s is not None
    assert state.forecast.wait_s >= 10.0 - 1e-9          # at least the rest of the pull
    assert state.to_dict()["next_pull_ready_s"] == pytest.approx(IN_PULL_S + state.forecast.wait_s, abs=0.1)


def test_over_the_limit_the_wait_lets_the_next_pull_end_at_the_limit(followed, scenario):
    """The oil over its limit: wait_s is a number, the words say how long to cool and how many
    pulls then, and the model re-run (solve_ivp) from the estimated state with that wait, then
    the next planned pull, ends that pull within 1 K of the limit."""
    state, _ = followed[OVER_LIMIT_S]
    limit, _ = limit_K(scenario)
    assert state.over_limit and state.estimate_K[OIL] > limit + 2.0
    f = state.forecast
    assert f.wait_s is not None and f.wait_s > 60.0 and f.pulls_left is not None and f.pulls_left >= 1
    words = state.to_dict()["advice"]
    assert re.fullmatch(r"over the limit: cool for \d+ min \d+ s, then \d+ more pulls?", words), words
    assert "cool for" in state.alarm
    pull, waits = planned_pull(scenario, f.next_pull_index)
    cool = waits[-1] if waits else OFF
    end = reference_K(scenario, [cool.with_duration(f.wait_s), pull], state.estimate_K, 0.0,
                      np.array([f.wait_s + pull.duration_s]))[-1]
    assert abs(end[OIL] - limit) < 1.0
