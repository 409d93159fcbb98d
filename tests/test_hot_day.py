"""A hot day: the pull count and the cooler needed across ambients, in one batch. A hotter day never
gives more pulls nor needs a smaller cooler; the scenario's own ambient gives the report's answers."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.planning.hot_day import default_ambients_K, hot_day
from thermo_budget.planning.answers import report
from thermo_budget.inputs.scenario import load_scenario

from conftest import SCENARIO_DIR
from thermo_budget.units import ZERO_CELSIUS_K


@pytest.mark.parametrize("name", ["default.toml", "us_units_fan.toml", "us_20hp_small_tank.toml"])
def test_hotter_never_gives_more_pulls_and_the_own_ambient_matches_the_report(name):
    scenario = load_scenario(SCENARIO_DIR / name)
    ambients = np.sort(np.append(default_ambients_K(scenario), scenario.ambient_K))
    day = hot_day(scenario, ambients)
    counted = np.where(day.all_day | np.isnan(day.pulls), 1e9, day.pulls)   # uncounted: more than any count
    assert np.all(np.diff(counted) <= 0)                         # hotter: never more pulls
    coolers = np.where(np.isnan(day.cooler_W_per_K), 1e12, day.cooler_W_per_K)   # none can: larger than any
    assert np.all(np.diff(coolers) >= -1e-3)                      # hotter: never a smaller cooler
    own = int(np.flatnonzero(ambients == scenario.ambient_K)[0])
    answers = report(scenario).to_json()
    if answers["runs_before_limit"] is not None and answers["runs_before_limit"] <= day.max_pulls:
        assert day.pulls[own] == answers["runs_before_limit"]
    assert day.cooler_W_per_K[own] == pytest.approx(answers["cooler_required_W_per_K"], rel=0.02, abs=0.01)


def test_batch_equals_separate_runs_and_default_range():
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    ambients = default_ambients_K(scenario)
    assert ambients[0] == pytest.approx(ZERO_CELSIUS_K) and ambients[-1] == pytest.approx(318.15)
    batch = hot_day(scenario, ambients[[2, 8]])
    for i, a in enumerate(ambients[[2, 8]]):
        alone = hot_day(scenario, [a])
        assert alone.pulls[0] == batch.pulls[i] or (np.isnan(alone.pulls[0]) and np.isnan(batch.pulls[i]))
        assert alone.cooler_W_per_K[0] == pytest.approx(batch.cooler_W_per_K[i])


def test_a_room_at_the_limit_leaves_no_pull():
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    day = hot_day(scenario, [353.15, 363.15])   # 80 and 90 degC air, at and above the 80 degC limit
    assert list(day.pulls) == [0.0, 0.0] and np.isnan(day.cooler_W_per_K).all()
