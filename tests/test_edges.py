"""Edges of the model (issue 13): states far outside the rig's range never crash the integrator,
a peak past the oil data gets a caution instead of a number, every answer is finite, and 500 random
plausible rigs give a report. Speed is measured in bench.py, not here."""
from __future__ import annotations

import math

import numpy as np
import pytest

from thermo_budget import report
from thermo_budget.errors import ScenarioError
from thermo_budget.network import OIL
from thermo_budget.answers import BEYOND_RANGE_KEYS, check_finite, model_range_max_K, simulate
from thermo_budget.scenario import limit_K, load_scenario
from thermo_budget.rig_build import build_rig
from thermo_budget.solver import GIVE_UP_ABOVE_K, integrate, propagate_linear

from conftest import SCENARIO_DIR, base_raw, set_path
from thermo_budget.units import ZERO_CELSIUS_K


def all_finite(value) -> bool:
    if isinstance(value, dict):
        return all(all_finite(v) for v in value.values())
    if isinstance(value, list):
        return all(all_finite(v) for v in value)
    return not isinstance(value, float) or math.isfinite(value)


def plastic_tank_40kW():
    """The reproducer: the plastic drum with 10 L of oil and pulls of 40 kW for 50 s, where the
    model's oil passes 400 degC and the eigen-solve used to fail."""
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    steps = [{"kind": "pull", "duration": "50 s", "power": "40 kW", "rpm": 3000}] + scenario.raw["session"]["steps"][1:]
    return scenario.changed(**{"reservoir.oil_volume": "10 L", "session.steps": steps})


def test_40kW_into_a_10L_plastic_tank_reports_with_a_caution():
    result = report(plastic_tank_40kW()).to_json()
    assert all_finite(result)
    assert result["beyond_model_range"] is True
    assert all(result[key] is None for key in BEYOND_RANGE_KEYS)
    assert "beyond the range" in result["cautions"][0]
    assert result["pulls_under_limit"] == 0
    assert result["min_oil_volume_L"] is None or result["min_oil_volume_L"] > 10.0


def test_a_30000_s_pull_on_the_default_scenario_reports():
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    steps = [dict(step, duration="30000 s") if step["kind"] == "pull" else step
             for step in scenario.raw["session"]["steps"]]
    result = report(scenario.changed(**{"session.steps": steps})).to_json()
    assert all_finite(result) and result["beyond_model_range"] and result["pulls_under_limit"] == 0


def test_a_design_far_past_the_limit_is_held_and_counted_as_over():
    scenario = plastic_tank_40kW()
    rig = build_rig(scenario, oil_volume_m3=np.array([0.0002, 0.01, 0.5]))   # 0.2 L, 10 L, 500 L
    trace = integrate(rig, scenario.steps, scenario.start_K, n_designs=3)
    oil = trace.T_K[:, :, OIL]
    assert np.all(np.isfinite(trace.T_K))
    assert oil[:, 0].max() > GIVE_UP_ABOVE_K > limit_K(scenario)[0]
    first = int(np.argmax(oil[:, 0] > GIVE_UP_ABOVE_K))
    assert np.all(oil[first:, 0] == oil[first, 0])        # held once past, not integrated on
    assert oil[:, 2].max() < limit_K(scenario)[0]          # 500 L stays cool
    # the energy balance still closes for every design (a held design gains nothing more)
    closure = trace.energy_in_J - trace.energy_lost_J - trace.energy_stored_J
    assert np.all(np.abs(closure) <= 1e-9 * trace.energy_in_J)


def test_the_eigen_solve_is_guarded_against_a_non_finite_system():
    C = np.array([[1e4, 2e3, 3e3], [1e4, 2e3, 3e3]])
    L = np.array([np.diag([1.0, 1.0, 1.0]), np.full((3, 3), np.nan)])
    b = np.zeros((2, 3))
    T0 = np.full((2, 3), 300.0)
    T1, T_int = propagate_linear(C, L, b, T0, np.array([10.0, 10.0]))
    assert np.all(np.isfinite(T1)) and np.all(np.isfinite(T_int))
    np.testing.assert_allclose(T1[1], T0[1])     # the bad design keeps its state


def test_a_peak_within_the_oil_data_is_a_number(default_report, default_scenario):
    assert default_report["beyond_model_range"] is False
    assert default_report["peak_C"] + ZERO_CELSIUS_K < model_range_max_K(default_scenario)


def test_a_non_finite_answer_is_refused_naming_it():
    with pytest.raises(ScenarioError, match=r"pump\.pressure_bar"):
        check_finite({"pump": {"pressure_bar": float("inf")}})


# ---------------------------------------------------------------- 500 random plausible rigs

def random_rig(rng) -> dict:
    """A plausible rig: tank 2-200 L, pulls of 1-40 kW for 5-60 s, waits of 0-20 min, ambient
    -10 to 45 degC, a steel, aluminium or plastic tank (invented ranges of the trade)."""
    raw = base_raw()
    raw["uncertainty"] = {"enabled": False}     # the band's sampled rigs are tested in tests/test_bands.py
    volume_L = float(rng.uniform(2.0, 200.0))
    side = (volume_L / 1000.0 / 0.7) ** (1.0 / 3.0)          # a cube-ish box, 70 % full
    material = str(rng.choice(["steel", "aluminium", "polyethylene"]))
    ambient = float(rng.uniform(-10.0, 45.0))
    wait = float(rng.uniform(0.0, 20.0 * 60.0))
    steps = [{"kind": "pull", "duration": f"{rng.uniform(5.0, 60.0):.3f} s",
              "power": f"{rng.uniform(1.0, 40.0):.3f} kW", "rpm": float(rng.uniform(1500, 6000))}]
    if wait >= 0.1:
        steps.append({"kind": "wait", "duration": f"{wait:.1f} s", "engine": str(rng.choice(["off", "idle"]))})
        if steps[-1]["engine"] == "idle":
            steps[-1].update(power=f"{rng.uniform(0, 500):.0f} W", rpm=1200)
    for path, value in (("ambient", f"{ambient:.2f} degC"), ("session.start_temperature", f"{ambient:.2f} degC"),
                        ("reservoir.oil_volume", f"{volume_L:.3f} L"), ("reservoir.length", f"{side:.4f} m"),
                        ("reservoir.width", f"{side:.4f} m"), ("reservoir.height", f"{side:.4f} m"),
                        ("reservoir.wall_material", material),
                        ("reservoir.wall_thickness", "6 mm" if material == "polyethylene" else "2 mm"),
                        ("fluid.max_temperature", f"{rng.uniform(max(ambient + 15, 50), 110):.1f} degC"),
                        ("fluid.min_viscosity", "8 cSt"), ("session.repeat", int(rng.integers(1, 4))),
                        ("session.steps", steps)):
        set_path(raw, path, value)
    return raw


def test_500_random_plausible_rigs_report_without_an_exception():
    rng = np.random.default_rng(13)
    refused = 0
    for i in range(500):
        raw = random_rig(rng)
        try:
            scenario = load_scenario(raw)
        except ScenarioError:
            refused += 1     # e.g. a limit the oil's viscosity sets below a hot ambient
            continue
        trace = simulate(scenario)
        result = report(scenario, trace).to_json()
        assert all_finite(result), raw
    assert refused < 50
