"""A long planned day (more than LONG_SESSION_CYCLES cycles) answered without integrating all of it:
designs proven by their periodic state, the others followed only while open, a settled schedule
repeated. Each shortcut is held against the whole day integrated to its end."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.engine.long_session import PERIODIC_TOLERANCE_K, session_limiting_peak_K
from thermo_budget.engine.outcome import limiting_peak_K
from thermo_budget.engine.session import PLAN_RESOLUTION
from thermo_budget.engine.solver import integrate
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.planning.session_runs import (SEARCH_MARGIN_K, finishes_under_limit, limits_K, periodic_state,
                                                 session_peak_K)

from conftest import SCENARIO_DIR

VOLUME_FACTORS = np.array([0.6, 0.9, 1.0, 1.2, 1.5, 2.5, 4.0])   # from crossing early to never crossing


@pytest.fixture(scope="module")
def long_day():
    """The default rig's cycle 90 times (past LONG_SESSION_CYCLES), over a range of oil volumes, and
    the whole day of every design integrated to its end: (scenario, rig, its limiting peaks K)."""
    scenario = load_scenario(SCENARIO_DIR / "default.toml").changed(**{"session.repeat": 90})
    rig = build_rig(scenario, oil_volume_m3=VOLUME_FACTORS * scenario.reservoir.oil_volume_m3)
    whole = integrate(rig, scenario.steps, scenario.start_K, n_designs=VOLUME_FACTORS.size, resolution=PLAN_RESOLUTION)
    return scenario, rig, limiting_peak_K(whole, *limits_K(scenario))


def test_the_day_decided_from_the_periodic_state_is_the_whole_day_s_answer(long_day):
    scenario, rig, whole_peak = long_day
    threshold = limits_K(scenario)[0] - SEARCH_MARGIN_K
    decided = finishes_under_limit(scenario, rig, VOLUME_FACTORS.size)
    np.testing.assert_array_equal(decided, whole_peak <= threshold)
    assert decided.any() and not decided.all()           # both answers occur in the range


def test_the_periodic_peak_bounds_the_day_from_above(long_day):
    # The network is cooperative: from a start colder than the periodic state, every cycle's peak is
    # at or under the periodic cycle's (Kamke's comparison theorem for cooperative systems; Smith,
    # Monotone Dynamical Systems, 1995, ch. 3). So a periodic peak under the target proves the day.
    scenario, rig, whole_peak = long_day
    _, periodic_peak, converged = periodic_state(scenario, rig, VOLUME_FACTORS.size)
    assert converged.all()
    assert np.all(whole_peak <= periodic_peak + 1e-6)
    # and 90 cycles of 3 min 15 s leave the larger tanks unsettled: the gap grows with the volume
    gap = periodic_peak - whole_peak
    assert gap[-1] > 1.0 and np.all(np.diff(gap) > 0)


@pytest.mark.parametrize("repeat", [90, 200])
def test_a_long_day_s_peak_stands_in_by_the_periodic_one_only_where_it_is_settled(repeat):
    """session_peak_K takes the periodic peak for a design only where the day ends periodic to
    SETTLED_K (the start's departure carried through by the cycle map's Jacobian): every design's
    peak is then the whole day's, to the 0.025 K the resolutions agree to; at 200 cycles the smaller
    tanks stand in, at 90 none of the unsettled larger ones do."""
    from thermo_budget.planning import session_runs
    scenario = load_scenario(SCENARIO_DIR / "default.toml").changed(**{"session.repeat": repeat})
    rig = build_rig(scenario, oil_volume_m3=VOLUME_FACTORS * scenario.reservoir.oil_volume_m3)
    whole = limiting_peak_K(integrate(rig, scenario.steps, scenario.start_K, n_designs=VOLUME_FACTORS.size,
                                      resolution=PLAN_RESOLUTION), *limits_K(scenario))
    target = limits_K(scenario)[0] - SEARCH_MARGIN_K
    proven, settled, _, _ = session_runs._proven_under(scenario, rig, VOLUME_FACTORS.size, SEARCH_MARGIN_K, None)
    peak = session_peak_K(scenario, rig, VOLUME_FACTORS.size, threshold_K=target)
    np.testing.assert_allclose(peak, whole, atol=0.025)
    assert np.all(proven == (whole <= target)) and not settled[-1]
    assert settled.any() == (repeat == 200)


def test_a_long_day_followed_only_while_open_has_the_whole_day_s_peaks(long_day):
    # Designs are dropped once periodic (to PERIODIC_TOLERANCE_K); each chunk carries the integrator's
    # systems on, so the chunks are the whole integration
    scenario, rig, whole_peak = long_day
    followed = session_limiting_peak_K(rig, scenario, scenario.start_K, VOLUME_FACTORS.size, limits_K(scenario),
                                       resolution=PLAN_RESOLUTION)
    np.testing.assert_allclose(followed, whole_peak, atol=PERIODIC_TOLERANCE_K)


def test_a_long_day_closed_once_over_gives_a_peak_at_least_that_high(long_day):
    scenario, rig, whole_peak = long_day
    above = limits_K(scenario)[0]
    followed = session_limiting_peak_K(rig, scenario, scenario.start_K, VOLUME_FACTORS.size, limits_K(scenario),
                                       resolution=PLAN_RESOLUTION, decided_above_K=above)
    over = whole_peak > above
    assert over.any()
    assert np.all(followed[over] > above) and np.all(followed[over] <= whole_peak[over] + PERIODIC_TOLERANCE_K)
    np.testing.assert_allclose(followed[~over], whole_peak[~over], atol=PERIODIC_TOLERANCE_K)


def test_a_schedule_settled_with_alternating_waits_is_the_pull_by_pull_search_s(monkeypatch):
    """Once the limit governs, each pull's extra wait is a lattice point (ready_schedule._threshold_near)
    and may alternate between two neighbours; the schedule is then periodic over two cycles, and its
    later rows repeat the last two. Held against searching every pull."""
    from thermo_budget.planning import ready_schedule as rs
    scenario = load_scenario(SCENARIO_DIR / "default.toml").changed(**{"session.repeat": 90})
    periods = []
    original = rs._repeated_rows
    monkeypatch.setattr(rs, "_repeated_rows", lambda rows, p, count: periods.append((p, count)) or original(rows, p, count))
    settled = rs.ready_schedule(scenario, [])
    assert periods and periods[0][1] >= 10              # the real test engaged, with rows left to copy
    monkeypatch.setattr(rs, "_schedule_settled", lambda *args: 0)
    searched = rs.ready_schedule(scenario, [])
    assert len(settled) == len(searched) == 90 and searched[-1]["extra_wait_s"] > 0
    for a, b in zip(settled, searched):
        assert abs(a["extra_wait_s"] - b["extra_wait_s"]) <= 0.05            # the lattice's fine step is 1/32 s here
        assert abs(a["start_s"] - b["start_s"]) <= 1.0
        assert abs(a["peak_C"] - b["peak_C"]) <= 0.01 and abs(a["start_C"] - b["start_C"]) <= 0.01


# A rig of a review's random search (an invented cold-shop rig, ambient -7.5 degC): 19.6 kW pulls of
# 31.8 s on 12.6 L, an idle wait and an engine-off wait. Its limit sits between the peak of the
# periodic cycle run from a fresh start of each step and the whole day's peak, 0.07 K apart.
REVIEW_RIG = """
name = "cold shop, review rig"
units = "SI"
ambient = "-7.5 degC"
[reservoir]
oil_volume = "12.6 L"
shape = "box"
length = "0.355 m"
width = "0.231 m"
height = "0.222 m"
wall_material = "steel"
wall_thickness = "2 mm"
emissivity = 0.9
bottom = "open"
[fluid]
iso_vg = 46
viscosity_index = 100
density_15C = "872 kg/m^3"
max_temperature = "66.365 degC"
min_viscosity = "2 cSt"
[pump]
displacement = "33.7 cm^3"
volumetric_efficiency = 0.90
[hardware]
mass = "9 kg"
material = "steel"
hose_length = "5.87 m"
hose_outer_diameter = "39 mm"
emissivity = 0.95
[losses]
convection_multiplier = 1.0
air_speed = "4.5 m/s"
[session]
start_temperature = "-7.5 degC"
repeat = 140
[[session.steps]]
kind = "pull"
duration = "31.8 s"
power = "19.6 kW"
rpm = 2309
[[session.steps]]
kind = "wait"
duration = "320 s"
engine = "idle"
power = "450 W"
rpm = 1667
[[session.steps]]
kind = "wait"
duration = "210 s"
engine = "off"
"""


@pytest.mark.parametrize("repeat", [61, 140])
def test_the_periodic_cycle_is_the_session_s_own_so_its_decision_is_the_whole_day_s(repeat):
    """The session starts each step's first sub-step from the corrector system the step left a cycle
    before; the periodic state is found with the cycle run the same way (session_runs.periodic_state),
    so its peak is the whole day's last cycle's. Run from a fresh start of each step instead, it was
    0.07 K lower here, and the day was taken as finishing when it does not."""
    import tomllib
    scenario = load_scenario(tomllib.loads(REVIEW_RIG)).changed(**{"session.repeat": repeat})
    rig = build_rig(scenario)
    whole = limiting_peak_K(integrate(rig, scenario.steps, scenario.start_K, resolution=PLAN_RESOLUTION),
                            *limits_K(scenario))[0]
    _, periodic_peak, converged = periodic_state(scenario, rig, 1)
    assert converged[0] and abs(periodic_peak[0] - whole) < 1e-3
    threshold = limits_K(scenario)[0] - SEARCH_MARGIN_K
    assert not whole <= threshold and not finishes_under_limit(scenario, rig, 1)[0]
    assert session_peak_K(scenario, rig, 1, threshold_K=threshold)[0] == pytest.approx(whole, abs=1e-3)


def test_a_design_s_answer_does_not_depend_on_the_waits_of_its_batch():
    """A batch is cut into sub-steps for its longest step (solver.integrate); designs whose waits
    take different numbers of sub-steps are integrated apart (solver.substep_groups), so a design's
    peak and periodic state are the ones it has alone. Here a 3-minute wait (two sub-steps) shares a
    batch with a 15-minute one (six), on the drum whose idling waits heat the oil; before the
    groups, the shorter one's peak moved with it (by 4e-4 K)."""
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml").changed(**{"session.repeat": 70})
    rig = build_rig(scenario, oil_volume_m3=np.array([1.0, 2.5]) * scenario.reservoir.oil_volume_m3)
    waits = np.array([180.0, 900.0])
    cycle_s = [step.duration_s if step.is_pull else waits for step in scenario.cycle]
    from thermo_budget.physics.rig import take_designs
    for design in range(2):
        alone = [d if np.ndim(d) == 0 else d[design:design + 1] for d in cycle_s]
        one = take_designs(rig, np.array([design]))
        np.testing.assert_allclose(session_peak_K(scenario, rig, 2, cycle_s)[design],
                                   session_peak_K(scenario, one, 1, alone)[0], rtol=0, atol=1e-9)
        X, peak, _ = periodic_state(scenario, rig, 2, cycle_s=cycle_s)
        X_one, peak_one, _ = periodic_state(scenario, one, 1, cycle_s=alone)
        np.testing.assert_allclose(X[design], X_one[0], rtol=0, atol=1e-9)
        np.testing.assert_allclose(peak[design], peak_one[0], rtol=0, atol=1e-9)


def test_the_bound_of_a_rising_day_never_lies_under_the_rest_of_it():
    """long_session.rising_bound_K, which lets a slowly rising day be decided under its threshold
    before its end: taken after every 20 cycles of the drum's 200-pull day on tanks from 3 to 8
    times its oil, it must never lie under the peak that the rest of the day reaches (whole-day
    integration), and it must become tight enough to decide (under 1 K over it) before the end."""
    from thermo_budget.engine.long_session import _cycle_starts, rising_bound_K
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml").changed(**{"session.repeat": 200})
    factors = np.array([3.0, 5.0, 8.0])
    rig = build_rig(scenario, oil_volume_m3=factors * scenario.reservoir.oil_volume_m3)
    whole = integrate(rig, scenario.steps, scenario.start_K, n_designs=factors.size, resolution=PLAN_RESOLUTION)
    starts = whole.T_K[_cycle_starts(whole, len(scenario.cycle))]             # (201, N, k)
    per_point = np.maximum(whole.T_K[:, :, 0], 0.0)                           # the bulk (no return-line limit)
    ends = _cycle_starts(whole, len(scenario.cycle))
    tight = np.zeros(factors.size, bool)
    for done in range(20, 200, 20):
        so_far = per_point[:ends[done] + 1].max(axis=0)
        bound = rising_bound_K(starts[done - 1:done + 1], so_far, 200 - done)
        final = per_point.max(axis=0)
        assert np.all(bound >= final - 1e-9), (done, bound - final)
        tight |= bound < final + 1.0
    assert tight.all()


def test_a_long_day_decided_under_its_threshold_early_is_the_whole_day_s_answer():
    """finishes_under_limit closes a slowly rising day once the rest of it cannot reach the threshold
    (rising_bound_K): on the drum's 200-pull day, on tanks around the smallest that finishes it,
    the answer is the whole day's."""
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml").changed(**{"session.repeat": 200})
    factors = np.array([5.0, 5.8, 6.0, 6.2, 6.6, 8.0, 12.0])
    rig = build_rig(scenario, oil_volume_m3=factors * scenario.reservoir.oil_volume_m3)
    whole = limiting_peak_K(integrate(rig, scenario.steps, scenario.start_K, n_designs=factors.size,
                                      resolution=PLAN_RESOLUTION), *limits_K(scenario))
    threshold = limits_K(scenario)[0] - SEARCH_MARGIN_K
    decided = finishes_under_limit(scenario, rig, factors.size)
    np.testing.assert_array_equal(decided, whole <= threshold)
    assert decided.any() and not decided.all()
