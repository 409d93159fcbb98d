"""The page's charts as Vega-Lite specifications (output/vega_charts.py): valid against the
published Vega-Lite schema, and showing the results they are drawn from: one cell per design of the
sweep, the plan's line where the designs part, the hot day's bars, temperatures in the unit shown."""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.output import vega_charts
from thermo_budget.output.plots import run_levels
from thermo_budget.page import page_charts
from thermo_budget.planning.answers import report, simulate
from thermo_budget.planning.hot_day import hot_day
from thermo_budget.units import ZERO_CELSIUS_K

SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"


@pytest.fixture(scope="module")
def rigs(default_scenario):
    """The default rig and the small US tank (a return-line limit; a hotter day that needs a cooler),
    each with its trace, report, sweep and hot day."""
    out = {}
    for name, scenario in (("default", default_scenario),
                           ("small tank", load_scenario(SCENARIOS / "us_20hp_small_tank.toml"))):
        trace = simulate(scenario)
        answers = report(scenario, trace)
        out[name] = (scenario, trace, answers, page_charts.design_sweep(scenario.to_toml(), answers),
                     hot_day(scenario))
    return out


def _specs(rig, system):
    scenario, trace, answers, sweep, hot = rig
    return {"trace": vega_charts.trace_spec(scenario, trace, system, answers.band.envelope),
            "design": vega_charts.design_spec(scenario, sweep, system),
            "hot": vega_charts.hot_day_spec(scenario, hot, system)}


def _layers(spec):
    for layer in spec["layer"]:
        yield from _layers(layer) if "layer" in layer else [layer]


def test_every_spec_is_valid_vega_lite_and_plain_json(rigs):
    # Outside reference: the Vega-Lite v6 JSON schema (vega.github.io/schema/vega-lite/v6.json), in
    # the copy altair ships, which is the version Streamlit's page draws with.
    import jsonschema
    from altair.vegalite.v6 import schema as schema_module
    validator = jsonschema.Draft7Validator(schema_module.load_schema())
    for rig in rigs.values():
        for system in ("SI", "US"):
            for name, spec in _specs(rig, system).items():
                json.dumps(spec, allow_nan=False)       # no NaN or inf reaches the browser
                errors = [e.message[:200] for e in validator.iter_errors(spec)]
                assert not errors, (name, system, errors)


def test_design_cells_are_the_sweep_and_tile_the_grid(rigs):
    scenario, _, _, sweep, _ = rigs["default"]
    spec = vega_charts.design_spec(scenario, sweep, "SI")
    cells = next(layer for layer in _layers(spec) if layer["mark"]["type"] == "rect")["data"]["values"]
    runs, all_day = np.asarray(sweep.runs_before_limit, dtype=float), np.asarray(sweep.sustainable)
    assert len(cells) == runs.size
    levels = run_levels(sweep.pulls_planned, sweep.max_pulls)
    names = vega_charts.band_names(levels)
    n_coolers = runs.shape[1]
    for k, cell in enumerate(cells):
        i, j = divmod(k, n_coolers)
        n = runs[i, j]
        assert cell["x"] < cell["xc"] < cell["x2"] and cell["y"] < cell["yc"] < cell["y2"]
        assert cell["xc"] == pytest.approx(sweep.oil_volumes_L[i], abs=1e-4)      # SI: litres
        assert cell["yc"] == pytest.approx(sweep.coolers_W_per_K[j], abs=1e-4)
        assert (cell["mark"] == "∞") == bool(all_day[i, j])
        if math.isfinite(n):
            assert cell["pulls"] == str(int(n))
            band = names.index(cell["band"])
            assert levels[band] <= n and (band == len(names) - 1 or n < levels[band + 1])
        else:
            assert cell["band"] == names[-1] and cell["pulls"] in ("all day", f"more than {sweep.max_pulls}")
        if j + 1 < n_coolers:        # neighbours share their edge: the cells tile the chart
            assert cells[k + 1]["y"] == cell["y2"]
        if i + 1 < runs.shape[0]:
            assert cells[k + n_coolers]["x"] == cell["x2"]


def test_the_plan_line_follows_the_cell_edges_between_fit_and_not():
    # A staircase drawn by hand on a 3 x 3 grid with edges at 0, 1, 2, 3 (volume i along x, cooler j
    # along y; True: the design fits the planned pulls).
    fits = [[False, False, True],
            [False, True, True],
            [True, True, True]]
    segments = vega_charts.plan_boundary(fits, [0, 1, 2, 3], [0, 1, 2, 3])
    got = {(s["x"], s["x2"], s["y"], s["y2"]) for s in segments}
    assert got == {(1, 1, 1, 2), (0, 1, 2, 2), (2, 2, 0, 1), (1, 2, 1, 1)}
    assert vega_charts.plan_boundary(np.ones((3, 3), bool), [0, 1, 2, 3], [0, 1, 2, 3]) == []


def test_the_temperature_chart_in_fahrenheit(rigs, default_report):
    scenario, trace, answers, _, _ = rigs["default"]
    si, us = vega_charts.trace_spec(scenario, trace, "SI"), vega_charts.trace_spec(scenario, trace, "US")
    fahrenheit = default_report["limit_C"] * 9.0 / 5.0 + 32.0        # the definition of the °F scale
    rules = [layer for layer in _layers(us) if layer["mark"]["type"] == "rule"]
    assert rules[0]["encoding"]["y"]["datum"] == pytest.approx(fahrenheit, abs=1e-3)
    labels = [layer["encoding"]["text"]["value"] for layer in _layers(us) if layer["mark"]["type"] == "text"]
    assert labels[0].startswith(f"limit {fahrenheit:.0f} °F")
    oil_si = next(layer for layer in _layers(si) if layer["mark"]["type"] == "line")["data"]["values"]
    oil_us = next(layer for layer in _layers(us) if layer["mark"]["type"] == "line")["data"]["values"]
    assert oil_si[0]["series"] == "bulk oil (tank)" and len(oil_si) == trace.time_s.shape[0]
    for a, b in zip(oil_si, oil_us):
        assert b["T"] == pytest.approx(a["T"] * 1.8 + 32.0, abs=1e-3) and a["t"] == b["t"]
    # the axis reaches past the limit, with room for its label
    y_top = next(layer for layer in _layers(us) if layer["mark"]["type"] == "line")["encoding"]["y"]["scale"]["domain"][1]
    assert y_top > fahrenheit


def test_the_return_line_limit_is_drawn_where_given(rigs):
    scenario, trace, _, _, _ = rigs["small tank"]
    spec = vega_charts.trace_spec(scenario, trace, "US")
    labels = [layer["encoding"]["text"]["value"] for layer in _layers(spec) if layer["mark"]["type"] == "text"]
    assert any(label == "return-line limit 185 °F" for label in labels)      # the scenario's 185 degF


def test_hot_day_bars_are_the_hot_day(rigs):
    for scenario, _, _, _, hot in rigs.values():
        spec = vega_charts.hot_day_spec(scenario, hot, "SI")
        bars = next(layer for layer in _layers(spec) if layer["mark"]["type"] == "rect")["data"]["values"]
        assert [b["air"] for b in bars] == pytest.approx(np.asarray(hot.ambients_K) - ZERO_CELSIUS_K, abs=1e-3)
        for bar, pulls, every in zip(bars, hot.pulls, hot.all_day):
            if every:
                assert bar["inside"] == "all day" and bar["pulls"] == hot.max_pulls
            elif math.isfinite(pulls):
                assert bar["pulls"] == pulls and bar["label"] == f"{int(pulls)}"
            else:
                assert bar["label"] == f">{hot.max_pulls}"
            assert bar["x"] < bar["air"] < bar["x2"]
        needs_cooler = bool(np.any(np.asarray(hot.cooler_W_per_K) != 0))
        lines = [layer for layer in _layers(spec) if layer["mark"]["type"] == "line"]
        assert bool(lines) == needs_cooler
        rule = next(layer for layer in _layers(spec) if layer["mark"]["type"] == "rule")
        assert rule["encoding"]["x"]["datum"] == pytest.approx(scenario.ambient_K - ZERO_CELSIUS_K, abs=1e-3)
    assert any(np.any(np.asarray(hot.cooler_W_per_K) != 0) for *_, hot in rigs.values())   # both kinds seen
