"""Oxidation ageing as equivalent hours at 60 degC: the rule that the rate doubles per 10 K
(common practice, no source), checked on hand-computed histories."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.physics.oil_life import ageing_equivalent_h, ageing_rate
from thermo_budget.units import ZERO_CELSIUS_K


def _constant(hours: float, celsius: float):
    t = np.linspace(0.0, hours * 3600.0, 61)
    return t, np.full_like(t, celsius + ZERO_CELSIUS_K)


@pytest.mark.parametrize("celsius, factor", [(60.0, 1.0), (70.0, 2.0), (80.0, 4.0), (50.0, 0.5), (90.0, 8.0)])
def test_one_hour_at_a_constant_temperature(celsius, factor):
    # by hand: 2 ** ((T - 60) / 10); one hour at 70 degC is two hours at 60 degC
    assert ageing_equivalent_h(*_constant(1.0, celsius)) == pytest.approx(factor, rel=1e-12)


def test_hours_add_up_over_a_history():
    # 30 min at 60 degC then 30 min at 80 degC (a step): 0.5 * 1 + 0.5 * 4 = 2.5 h
    t = np.array([0.0, 1800.0, 1800.0, 3600.0])
    T = np.array([60.0, 60.0, 80.0, 80.0]) + ZERO_CELSIUS_K
    assert ageing_equivalent_h(t, T) == pytest.approx(2.5, rel=1e-12)


def test_rate_grows_with_temperature_and_the_report_carries_it(default_scenario):
    assert np.all(np.diff(ageing_rate(np.linspace(280.0, 400.0, 50))) > 0)
    from thermo_budget.planning.answers import report, simulate
    trace = simulate(default_scenario)
    hours = ageing_equivalent_h(trace.time_s[:, 0], trace.T_K[:, 0, 0])
    duration_h = trace.time_s[-1, 0] / 3600.0
    # the default session stays between 20 and 53 degC, so it ages less than its own length at 60 degC
    assert ageing_rate(293.15) * duration_h < hours < duration_h
    assert report(default_scenario, trace).to_json()["oil_ageing_equivalent_h"] == pytest.approx(hours, abs=1e-4)
