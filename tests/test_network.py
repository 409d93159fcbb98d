"""The thermal network: structure, conservation, trade rules of thumb and limiting cases."""
import numpy as np
import pytest

from thermo_budget.network import (HARDWARE, OIL, WALL, Inputs, cooler_W_K, h_air_W_m2K, h_oil_side_W_m2K,
                                   hardware_to_ambient_W_K, heat_capacities_J_K, node_enthalpy_J,
                                   node_equations, oil_to_hardware_W_K, passive_rejection_W,
                                   return_line_rise_K, temperatures_from_enthalpy_K, wall_to_ambient_W_K)
from thermo_budget.scenario import build_rig, load_scenario
from thermo_budget.session import pump_flow_m3_s

from conftest import base_raw, set_path

# Exact unit factors
W_IN_BTU_PER_HR = 3600.0 / 1055.05585262      # 1 W in BTU/hr (IT Btu)
GAL_M3 = 3.785411784e-3                        # US gallon
STATES_K = np.array([[330.0, 320.0, 315.0], [300.0, 299.0, 298.0], [360.0, 340.0, 345.0]])


def flowing_inputs(rig, power_W=7000.0, rpm=3400.0, n=1):
    flow = pump_flow_m3_s(rig.displacement_m3, rpm, rig.volumetric_efficiency)
    return Inputs(power_W=np.full(n, power_W), volume_flow_m3_s=np.full(n, float(flow)))


def still_inputs(n=1):
    return Inputs(power_W=np.zeros(n), volume_flow_m3_s=np.zeros(n))


@pytest.fixture(scope="module")
def rig():
    return build_rig(load_scenario(base_raw()))


@pytest.mark.parametrize("flowing", [True, False])
def test_node_equations_conserve_heat(rig, flowing):
    # Internal links only move heat: each row of L sums to that node's conductance to ambient,
    # so that -L T + b summed over nodes = P - losses (first law).
    for T in STATES_K:
        T = T[None, :]
        inputs = flowing_inputs(rig) if flowing else still_inputs()
        C, L, b, g_amb, offset = node_equations(rig, T, inputs)
        np.testing.assert_allclose(L[0], L[0].T)
        np.testing.assert_allclose(L[0].sum(axis=1), g_amb[0], rtol=1e-12, atol=1e-12)
        net = np.sum(-L[0] @ T[0] + b[0])
        losses = np.sum(g_amb[0] * (T[0] - rig.ambient_K)) + offset[0]
        assert net == pytest.approx(float(inputs.power_W[0]) - losses, rel=1e-10, abs=1e-9)
        assert np.all(C > 0)
        assert np.all(np.linalg.eigvalsh(L[0]) >= -1e-9)   # passive: no link creates heat


def test_heat_capacities(rig):
    T = np.full((1, 3), 293.15)
    C = heat_capacities_J_K(rig, T)[0]
    assert C[OIL] == pytest.approx(float(rig.oil_mass_kg[0] * rig.oil.specific_heat(293.15)))
    assert C[WALL] == pytest.approx(float(np.asarray(rig.wall_capacity_J_K).ravel()[0]))
    # 8 kg of steel at 470 J/(kg K) (materials table, memory of Incropera Table A.1)
    assert C[HARDWARE] == pytest.approx(8.0 * 470.0)


def test_enthalpy_and_temperature_are_inverse(rig):
    H = node_enthalpy_J(rig, STATES_K)
    np.testing.assert_allclose(temperatures_from_enthalpy_K(rig, H), STATES_K, rtol=1e-12)


def test_painted_steel_box_overall_coefficient_in_still_air(rig):
    # Overall coefficient of a painted steel tank in still air, convection plus radiation:
    # about 6-15 W/(m^2 K) (common practice, no source), here as passive_rejection / area / dT
    # of the tank alone, at 20-60 K above ambient.
    area = float((rig.side_area_m2 + rig.top_area_m2 + rig.bottom_area_m2)[0])
    for rise in (20.0, 40.0, 60.0):
        T = np.array([rig.ambient_K + rise])
        U = float(wall_to_ambient_W_K(rig, T)[0]) / area
        assert 6.0 <= U <= 15.0, U


def test_passive_rejection_of_the_whole_rig_is_in_the_trade_band(rig):
    # Same band (common practice, no source) on the whole rig: tank plus hoses, pump and valve.
    area = float((rig.side_area_m2 + rig.top_area_m2 + rig.bottom_area_m2)[0]) + np.pi * \
        rig.hose_outer_diameter_m * rig.hose_length_m + rig.body_area_m2
    rise = 60.0
    U = float(passive_rejection_W(rig, rig.ambient_K + rise)[0]) / area / rise
    assert 6.0 <= U <= 18.0   # hoses are thin cylinders, a little better than flat walls


def test_passive_rejection_zero_at_ambient_and_rising(rig):
    assert float(passive_rejection_W(rig, rig.ambient_K)[0]) == pytest.approx(0.0, abs=1e-9)
    q = passive_rejection_W(rig, rig.ambient_K + np.array([5.0, 20.0, 40.0, 60.0]))
    assert np.all(np.diff(q) > 0)
    # grows faster than linearly (both h_conv and h_rad rise with dT)
    assert q[3] / q[2] > 1.5


@pytest.mark.parametrize("power_W, rpm, T_C", [(7000.0, 3400.0, 50.0), (15000.0, 4000.0, 70.0),
                                               (3000.0, 2000.0, 30.0)])
def test_return_line_rise_matches_the_210_rule(rig, power_W, rpm, T_C):
    # BTU/hr = gpm x 210 x dT(degF) for hydraulic oil (common practice, no source): within 15 %.
    inputs = flowing_inputs(rig, power_W, rpm)
    rise_K = float(return_line_rise_K(rig, np.array([T_C + 273.15]), inputs)[0])
    gpm = float(inputs.volume_flow_m3_s[0]) * 60.0 / GAL_M3
    rule_dT_F = power_W * W_IN_BTU_PER_HR / (gpm * 210.0)
    assert rise_K * 1.8 == pytest.approx(rule_dT_F, rel=0.15)


def test_no_return_rise_without_flow(rig):
    assert float(return_line_rise_K(rig, np.array([330.0]), Inputs(np.array([500.0]), np.array([0.0])))[0]) == 0.0


def test_adiabatic_rig_has_no_path_to_ambient():
    raw = base_raw()
    set_path(raw, "losses.convection_multiplier", 0.0)
    set_path(raw, "reservoir.emissivity", 0.0)
    set_path(raw, "hardware.emissivity", 0.0)
    rig = build_rig(load_scenario(raw))
    T = np.array([[350.0, 340.0, 345.0]])
    assert float(wall_to_ambient_W_K(rig, T[:, WALL])[0]) == 0.0
    assert float(np.atleast_1d(hardware_to_ambient_W_K(rig, T[:, HARDWARE]))[0]) == 0.0
    for inputs in (flowing_inputs(rig), still_inputs()):
        _, _, _, g_amb, offset = node_equations(rig, T, inputs)
        assert np.all(g_amb == 0.0) and np.all(offset == 0.0)


def test_hot_top_face_beats_hot_bottom_face():
    # McAdams: hot face up 0.54 Ra^1/4 vs hot face down 0.27 Ra^1/4 (Incropera eqs. 9.30, 9.32).
    up = h_air_W_m2K("top", 0.1, 340.0, 295.0)
    down = h_air_W_m2K("bottom", 0.1, 340.0, 295.0)
    assert float(up) == pytest.approx(2.0 * float(down), rel=1e-9)


def test_wind_never_lowers_the_air_side_coefficient():
    for kind in ("vertical", "top", "bottom", "cylinder"):
        still = float(h_air_W_m2K(kind, 0.3, 340.0, 295.0))
        for speed in (0.5, 2.0, 8.0):
            assert float(h_air_W_m2K(kind, 0.3, 340.0, 295.0, speed, 0.4)) >= still


def test_natural_convection_vertical_wall_order_of_magnitude():
    # A 0.3 m hot wall 40 K above room air: h ~ 4-6 W/(m^2 K) (Incropera, ch. 9 examples;
    # common practice, no source for the band).
    assert 3.5 < float(h_air_W_m2K("vertical", 0.3, 333.15, 293.15)) < 6.5


def test_circulating_oil_transfers_more_than_still_oil(rig):
    T_oil, T_wall = np.array([330.0]), np.array([325.0])
    still = h_oil_side_W_m2K(rig, T_oil, T_wall, 0.0)
    moving = h_oil_side_W_m2K(rig, T_oil, T_wall, 8e-4)
    assert float(moving[0]) >= float(still[0]) > 0


def test_oil_to_hardware_is_bounded_by_the_capacity_rate(rig):
    # A heat exchanger with effectiveness eps = 1 - exp(-NTU) <= 1, so G <= m_dot c_p (Incropera, ch. 8 and 11).
    T = np.array([330.0])
    for flow in (1e-5, 1e-4, 8e-4):
        m_dot = float(rig.oil.density_kg_m3(330.0)) * flow
        cp = float(rig.oil.specific_heat(330.0))
        G = float(oil_to_hardware_W_K(rig, T, np.array([flow]), np.array([m_dot]), np.array([cp]))[0])
        assert 0 < G <= m_dot * cp
    still = float(np.atleast_1d(oil_to_hardware_W_K(rig, T, np.array([0.0]), np.array([0.0]), np.array([2000.0])))[0])
    assert still < 0.01


def test_cooler_is_capped_at_the_capacity_rate_and_off_without_flow():
    raw = base_raw()
    raw["cooler"] = {"specific_dissipation": "50 W/K", "fan": "with_flow"}
    rig = build_rig(load_scenario(raw))
    assert float(cooler_W_K(rig, np.array([True]), np.array([30.0]))[0]) == pytest.approx(30.0)
    assert float(cooler_W_K(rig, np.array([True]), np.array([1000.0]))[0]) == pytest.approx(50.0)
    assert float(cooler_W_K(rig, np.array([False]), np.array([1000.0]))[0]) == 0.0
    raw["cooler"]["fan"] = "always"
    rig = build_rig(load_scenario(raw))
    assert float(cooler_W_K(rig, np.array([False]), np.array([0.0]))[0]) == pytest.approx(50.0)


def test_floor_bottom_is_adiabatic():
    raw = base_raw()
    open_rig = build_rig(load_scenario(raw))
    set_path(raw, "reservoir.bottom", "floor")
    floor_rig = build_rig(load_scenario(raw))
    assert float(floor_rig.bottom_area_m2[0]) == 0.0
    T = np.array([340.0])
    assert float(wall_to_ambient_W_K(floor_rig, T)[0]) < float(wall_to_ambient_W_K(open_rig, T)[0])


def test_rig_geometry_of_a_box():
    rig = build_rig(load_scenario(base_raw()))
    # 0.35 x 0.25 x 0.30 m box, 15 L (numbers of the invented base rig)
    assert float(rig.side_area_m2[0]) == pytest.approx(2 * (0.35 + 0.25) * 0.30)
    assert float(rig.top_area_m2[0]) == pytest.approx(0.35 * 0.25)
    assert float(rig.fill_height_m[0]) == pytest.approx(0.015 / (0.35 * 0.25))
    assert float(rig.oil_mass_kg[0]) == pytest.approx(15.0 * 0.870)


def test_plastic_wall_conduction_matters():
    # A 6 mm polyethylene wall (k ~0.4 W/(m K)) must reject noticeably less than 2 mm steel.
    raw = base_raw()
    steel = build_rig(load_scenario(raw))
    set_path(raw, "reservoir.wall_material", "polyethylene")
    set_path(raw, "reservoir.wall_thickness", "6 mm")
    plastic = build_rig(load_scenario(raw))
    T = np.array([350.0])
    g_steel, g_plastic = float(wall_to_ambient_W_K(steel, T)[0]), float(wall_to_ambient_W_K(plastic, T)[0])
    assert g_plastic < g_steel
    assert g_plastic > 0.7 * g_steel   # the air side still dominates (R''_wall ~0.015 vs 1/h ~0.08)
