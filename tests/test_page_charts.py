"""The page's charts as functions of the scenario text: PNGs, and a design grid that brackets the
rig and the sizing answers."""
from __future__ import annotations

import io

import matplotlib.image
import numpy as np
import pytest

from thermo_budget.planning import design_sweep
from thermo_budget.page import page_charts

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def default(default_scenario):
    return default_scenario


def test_design_axes_bracket_the_rig_and_the_answers(default, default_report):
    from thermo_budget.planning.results import Report
    answers = Report.from_json(default_report)
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


def test_design_grid_without_an_all_day_cooler_uses_the_passive_loss(default, default_report):
    answers = default_report
    _, coolers = design_sweep.design_grid(default, None, None)
    passive_W_K = answers["passive_rejection_at_limit_W"] / (answers["limit_C"] - answers["ambient_C"])
    assert coolers[-1] == pytest.approx(3.0 * passive_W_K, rel=1e-3)


def _image(png: bytes) -> np.ndarray:
    assert png.startswith(PNG_SIGNATURE)
    return matplotlib.image.imread(io.BytesIO(png))


def test_charts_are_pictures_of_the_scenario_in_its_units(default):
    """Each chart decodes to a picture of the figure's size at the page's resolution (5.6 in wide at
    CHART_DPI), with something drawn on it; it follows the unit system (the axes change) and the
    trace chart follows the scenario (more oil, another curve)."""
    text = default.to_toml()
    sweep = page_charts.design_sweep(text)
    width_px = round(5.6 * page_charts.CHART_DPI)
    pictures = {}
    for system in ("SI", "US"):
        for name, png in (("design", page_charts.design_chart_png(text, system, result=sweep)),
                          ("trace", page_charts.envelope_png(text, system))):
            image = _image(png)
            assert image.shape[1] == width_px and image.shape[0] > 0.6 * width_px and image.shape[2] in (3, 4)
            assert len(np.unique(image.reshape(-1, image.shape[2]), axis=0)) > 50, (name, system)  # not blank
            pictures[name, system] = png
    assert pictures["design", "SI"] != pictures["design", "US"]
    assert pictures["trace", "SI"] != pictures["trace", "US"]
    more_oil = default.changed(**{"reservoir.oil_volume": "22 L"}).to_toml()
    assert page_charts.envelope_png(more_oil, "SI") != pictures["trace", "SI"]


def test_design_chart_from_a_kept_sweep_is_the_same_picture(default):
    # The page keeps the sweep (it does not depend on the units) and only redraws on a unit switch.
    text = default.to_toml()
    result = page_charts.design_sweep(text)
    for system in ("SI", "US"):
        assert page_charts.design_chart_png(text, system, result=result) == page_charts.design_chart_png(text, system)
