"""The page's charts as functions of the scenario text: PNGs, and a design grid that brackets the
rig and the sizing answers."""
from __future__ import annotations

import pytest

from thermo_budget import DEFAULT_SCENARIO, load_scenario, report
from thermo_budget import design_sweep, page_charts

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def default():
    return load_scenario(DEFAULT_SCENARIO)


def test_design_axes_bracket_the_rig_and_the_answers(default):
    answers = report(default)
    volumes, coolers = design_sweep.design_axes(default)
    assert [a.tolist() for a in design_sweep.design_axes(default, answers)] == [volumes.tolist(), coolers.tolist()]
    assert volumes.size == page_charts.DESIGN_VOLUMES and coolers.size == page_charts.DESIGN_COOLERS
    assert volumes[0] < default.oil_volume_L < volumes[-1]
    assert volumes[0] < answers.min_oil_volume_L < volumes[-1]
    assert coolers[0] == 0.0 and coolers[-1] > answers.cooler_required_sustained_W_per_K


def test_design_grid_reaches_past_the_smallest_tank_and_the_own_cooler(default):
    volumes, coolers = design_sweep.design_grid(default.changed(**{"cooler.specific_dissipation": "40 W/K"}),
                                               min_oil_volume_L=100.0, cooler_sustained_W_K=2.0)
    assert volumes[-1] == pytest.approx(130.0)
    assert coolers[-1] == pytest.approx(60.0)


def test_design_grid_without_an_all_day_cooler_uses_the_passive_loss(default):
    answers = report(default).to_json()
    _, coolers = design_sweep.design_grid(default, None, None)
    passive_W_K = answers["passive_rejection_at_limit_W"] / (answers["limit_C"] - answers["ambient_C"])
    assert coolers[-1] == pytest.approx(3.0 * passive_W_K, rel=1e-3)


@pytest.mark.parametrize("system", ["SI", "US"])
def test_charts_are_png(default, system):
    text = default.to_toml()
    assert page_charts.design_chart_png(text, system).startswith(PNG_SIGNATURE)
    assert page_charts.trace_chart_png(text, system).startswith(PNG_SIGNATURE)


def test_design_chart_from_a_kept_sweep_is_the_same_picture(default):
    # The page keeps the sweep (it does not depend on the units) and only redraws on a unit switch.
    text = default.to_toml()
    result = page_charts.design_sweep(text)
    for system in ("SI", "US"):
        assert page_charts.design_chart_png(text, system, result=result) == page_charts.design_chart_png(text, system)
