"""Head room for the oil's expansion: the level of the hot oil in its tank, checked by hand."""
from __future__ import annotations

import pytest

from thermo_budget import load_scenario
from thermo_budget.physics.headroom import headroom_at, hot_oil_volume_m3
from thermo_budget.planning.answers import report
from thermo_budget.units import ZERO_CELSIUS_K


def test_default_tank_at_the_limit_by_hand(default_scenario):
    # 18 L at 15 degC, beta 7e-4 1/K, at 80 degC: 18 * (1 + 7e-4 * 65) = 18.819 L in a 0.40 x 0.26 m box
    at = headroom_at(default_scenario, 353.15)
    assert at.oil_volume_m3 == pytest.approx(0.018819, rel=1e-12)
    assert at.oil_level_m == pytest.approx(0.018819 / (0.40 * 0.26), rel=1e-12)   # 0.18095 m
    assert at.headroom_m == pytest.approx(0.25 - 0.018819 / 0.104, rel=1e-12)
    assert at.headroom_m3 == pytest.approx(0.40 * 0.26 * 0.25 - 0.018819, rel=1e-12)


def test_expansion_is_linear_from_15_degC():
    assert hot_oil_volume_m3(1.0, 7e-4, 288.15) == 1.0
    assert hot_oil_volume_m3(1.0, 7e-4, 298.15) == pytest.approx(1.007)


def test_report_states_the_head_room_and_the_smallest_tank_has_room_to_spare(default_scenario):
    from conftest import SCENARIO_DIR
    for scenario in (default_scenario, load_scenario(SCENARIO_DIR / "us_units_fan.toml")):
        answers = report(scenario).to_json()
        assert answers["headroom_at_limit_L"] > 0 and answers["headroom_at_limit_m"] > 0
        assert answers["headroom_at_peak_L"] >= answers["headroom_at_limit_L"] - 1e-9 or answers["peak_C"] > answers["limit_C"]
        assert answers["min_oil_volume_L"] is not None
        # the smallest oil volume, in its tank scaled to it, still leaves room at the limit
        assert answers["min_oil_volume_headroom_L"] > 0
        smallest = headroom_at(scenario, answers["limit_C"] + ZERO_CELSIUS_K, answers["min_oil_volume_L"] / 1000.0)
        # geometric scaling keeps the fraction of the tank left free
        assert smallest.fraction == pytest.approx(headroom_at(scenario, answers["limit_C"] + ZERO_CELSIUS_K).fraction, rel=1e-9)
