"""Page helpers: unit-system round trips, edits that keep the scenario valid, and a saved scenario
that loads back to the same answers."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from thermo_budget import DEFAULT_SCENARIO, load_scenario
from thermo_budget.page import page_inputs as pi
from thermo_budget.planning.answers import report, simulate
from thermo_budget.planning.planning import runs_before_limit
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.inputs.scenario import SCENARIO_DIR, read_toml_text


@pytest.fixture(scope="module")
def default():
    return load_scenario(DEFAULT_SCENARIO)


# Conversion factors, exact by definition (NIST SP 811, Appendix B): 1 gal = 3.785411784 L,
# 1 in = 25.4 mm, 1 hp (mechanical) = 745.69987158227 W, 1 lb = 0.45359237 kg, degF = 1.8 degC + 32.
@pytest.mark.parametrize("quantity, si, us", [
    ("oil_volume", 3.785411784e-3, 1.0),
    ("thickness", 0.0254, 1.0),
    ("power", 745.69987158227, 1.0),
    ("mass", 0.45359237, 1.0),
    ("temperature", 373.15, 212.0),
    ("displacement", 16.387064e-6, 1.0),
    # 1 BTU/hr/degF = 0.5275 W/K with BTU_IT = 1055.05585262 J (NIST SP 811); pint's BTU differs from
    # BTU_IT in the 7th digit, hence the looser tolerance below.
    ("conductance", 1055.05585262 / 3600.0 * 1.8, 1.0),
])
def test_us_display_units_match_exact_definitions(quantity, si, us):
    assert pi.to_shown(si, quantity, "US") == pytest.approx(us, rel=1e-6)
    assert pi.from_shown(us, quantity, "US") == pytest.approx(si, rel=1e-6)


@given(value=st.floats(min_value=0.01, max_value=1e4), quantity=st.sampled_from(sorted(pi.QUANTITIES)),
       system=st.sampled_from(pi.SYSTEMS))
@settings(max_examples=200, deadline=None)
def test_display_round_trip_is_identity(value, quantity, system):
    assert pi.to_shown(pi.from_shown(value, quantity, system), quantity, system) == pytest.approx(value, rel=1e-9)


def test_field_written_in_us_units_reads_back_in_both_systems(default):
    field = pi.FIELDS["reservoir.oil_volume"]
    raw = pi.with_field(default.raw, field, 5.0, "US")
    assert raw["reservoir"]["oil_volume"] == "5 gal"
    assert default.raw["reservoir"]["oil_volume"] == "18 L"  # the input dict is not changed
    assert pi.field_value(raw, field, "SI") == pytest.approx(5 * 3.785411784)
    assert load_scenario(raw).oil_volume_L == pytest.approx(5 * 3.785411784)


def test_every_field_of_every_shipped_scenario_round_trips_unchanged():
    for path in sorted(SCENARIO_DIR.glob("*.toml")):
        scenario = load_scenario(path)
        for system in pi.SYSTEMS:
            raw = scenario.raw
            for field in pi.FIELDS.values():
                value = pi.field_value(raw, field, system)
                if value is not None:
                    raw = pi.with_field(raw, field, value, system)
            again = load_scenario(raw)
            assert again.oil_volume_L == pytest.approx(scenario.oil_volume_L, rel=1e-5)
            assert again.max_temperature_K == pytest.approx(scenario.max_temperature_K, abs=1e-4)
        # the saved file gives the same session, to the last bit, and the same pulls before the limit
        # (counted as report() counts them, without the band and the sizing searches it adds)
        saved = load_scenario(read_toml_text(scenario.to_toml()))
        np.testing.assert_array_equal(simulate(saved).T_K, simulate(scenario).T_K)
        runs = [runs_before_limit(s, build_rig(s), 1, np.zeros(1, bool), max_pulls=300) for s in (scenario, saved)]
        np.testing.assert_array_equal(*runs)


def test_saved_scenario_loads_back_to_the_same_answers(default):
    edited = load_scenario(pi.with_wait(pi.with_pull(default.raw, "US", power=12.0), "US", wait_min=4.0))
    text = edited.changed(units="US").to_toml()
    assert report(load_scenario(read_toml_text(text))).to_json() == report(edited).to_json() | {"units": "US"}


def test_shape_switch_keeps_footprint(default):
    raw = pi.with_shape(default.raw, "cylinder")
    round_tank = load_scenario(raw)
    assert round_tank.reservoir.footprint_m2 == pytest.approx(default.reservoir.footprint_m2, rel=1e-3)
    back = load_scenario(pi.with_shape(raw, "box"))
    assert back.reservoir.footprint_m2 == pytest.approx(default.reservoir.footprint_m2, rel=1e-3)


def test_wait_edits_scale_all_waits_and_zero_means_back_to_back():
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")  # waits of 2 min and 1 min
    raw = pi.with_wait(scenario.raw, "SI", wait_min=6.0)
    durations = [s.duration_s for s in load_scenario(raw).cycle if not s.is_pull]
    assert durations == pytest.approx([240.0, 120.0])
    back_to_back = load_scenario(pi.with_wait(raw, "SI", wait_min=0.0))
    assert all(step.is_pull for step in back_to_back.cycle)
    again = load_scenario(pi.with_wait(pi.with_wait(raw, "SI", wait_min=0.0), "SI", wait_min=3.0))
    assert [s.duration_s for s in again.cycle if not s.is_pull] == [180.0]


def test_engine_switch_in_wait_keeps_the_file_valid(default):
    off = load_scenario(pi.with_wait(default.raw, "SI", engine="off"))
    assert [s.engine for s in off.cycle if not s.is_pull] == ["off"]
    idle = load_scenario(pi.with_wait(off.raw, "US", engine="idle", idle_power=0.5, idle_rpm=1100))
    wait = [s for s in idle.cycle if not s.is_pull][0]
    assert wait.engine == "idle" and wait.rpm == 1100
    assert wait.power_W == pytest.approx(0.5 * 745.69987158227)


def test_pull_mode_switch_round_trip_keeps_peak_power(default):
    view = pi.session_view(default.raw)
    speeds, powers, start, end = pi.curve_from_constant(view.power_W, view.rpm)
    curve = load_scenario(pi.with_curve(default.raw, "SI", speeds, [p / 1000 for p in powers], False, start, end))
    assert curve.cycle[0].peak_power_W() == pytest.approx(7000.0)
    constant = load_scenario(pi.with_constant_power(curve.raw, *pi.constant_from_curve(pi.session_view(curve.raw))))
    assert constant.cycle[0].power_W == pytest.approx(7000.0)


def test_torque_curve_converts_to_power():
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    power_W, rpm = pi.constant_from_curve(pi.session_view(scenario.raw))
    assert power_W == pytest.approx(scenario.cycle[0].peak_power_W(), rel=1e-9)  # P = tau * 2 pi n / 60
    # 31 N*m at 4000 rpm is 12.99 kW, more than 35 N*m at 3500 rpm (12.83 kW)
    assert rpm == 4000 and power_W == pytest.approx(31.0 * 2.0 * 3.141592653589793 * 4000.0 / 60.0)


def test_cooler_on_and_off(default):
    raw = pi.with_cooler(default.raw, True, 12.0, "always")
    assert load_scenario(raw).cooler_W_K == 12.0
    assert load_scenario(pi.with_cooler(raw, False)).cooler_W_K == 0.0


def test_grade_and_thinning_switches(default):
    raw = pi.with_grade(default.raw, pi.OTHER_GRADE, default.oil.nu40_cSt)
    raw = pi.with_thinning(raw, "nu100", default.oil.viscosity_index, default.oil.nu100_cSt)
    same = load_scenario(raw)
    assert same.oil.nu40_cSt == pytest.approx(default.oil.nu40_cSt)
    assert same.oil.nu100_cSt == pytest.approx(default.oil.nu100_cSt, rel=1e-3)
    assert load_scenario(pi.with_grade(raw, 68, 0.0)).oil.nu40_cSt == 68.0  # ISO 3448 mid-point of VG 68


def test_notes_restated_in_us_units():
    note = pi.note_in("settles at 61.2 degC, below the 80.0 degC limit; no cooler up to 300 W/K; even 40 L", "US")
    assert "142.2 °F" in note and "176.0 °F" in note and "gal" in note and "degC" not in note


def test_trace_csv_in_us_units(default):
    trace = simulate(default)
    text = pi.trace_csv_shown(trace, "US")
    header, first = text.splitlines()[:2]
    assert header == "time_s,oil_F,return_F,wall_F,hardware_F,power_hp"
    assert float(first.split(",")[1]) == pytest.approx(68.0, abs=1e-6)  # start 20 degC = 68 degF
    assert len(text.splitlines()) == trace.time_s.shape[0] + 1
