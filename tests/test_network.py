"""The thermal network: structure, conservation, trade rules of thumb and limiting cases."""
import numpy as np
import pytest

from thermo_budget.physics.materials import HOSE_WALL
from thermo_budget.physics.correlations import cylinder_wall_conductance_W_K
from thermo_budget.physics.network import (HARDWARE, HOSE, HOSE_COVER, HOSE_LINER_FRACTION, LOOP_OIL, N_NODES, NODE_NAMES,
                                   OIL, WALL,
                                   Inputs, ambient_conductances_W_K, cooler_W_K, hose_mean_K, hose_ring_link_W_K, hose_rings_m,
                                   dry_shell_W_K, h_oil_bottom_W_m2K, h_oil_side_W_m2K,
                                   hardware_to_ambient_W_K, heat_capacities_J_K, hose_to_ambient_W_K,
                                   loop_conductances_W_K, node_enthalpy_J, node_equations, oil_to_hardware_W_K,
                                   oil_to_hose_W_K, passive_rejection_W, return_line_rise_K,
                                   stirring_velocity_m_s, temperatures_from_enthalpy_K, wall_to_ambient_W_K)
from thermo_budget.inputs.hardware_defaults import default_internal_area_m2
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.engine.session import pump_flow_m3_s

from conftest import SCENARIO_DIR, base_raw, set_path
from thermo_budget.units import ZERO_CELSIUS_K

# Exact unit factors
W_IN_BTU_PER_HR = 3600.0 / 1055.05585262      # 1 W in BTU/hr (IT Btu)
GAL_M3 = 3.785411784e-3                        # US gallon
STATES_K = np.array([[330.0, 320.0, 315.0, 310.0, 305.0, 318.0], [300.0, 299.0, 298.0, 297.0, 296.5, 299.5],
                     [360.0, 340.0, 345.0, 330.0, 325.0, 350.0]])


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


def test_node_names_live_in_one_place():
    assert len(NODE_NAMES) == N_NODES == 6
    assert (NODE_NAMES[OIL], NODE_NAMES[WALL], NODE_NAMES[HARDWARE], NODE_NAMES[HOSE], NODE_NAMES[HOSE_COVER],
            NODE_NAMES[LOOP_OIL]) == ("oil", "wall", "hardware", "hose liner", "hose cover", "loop oil")


def test_heat_capacities(rig):
    T = np.full((1, N_NODES), 293.15)
    C = heat_capacities_J_K(rig, T)[0]
    # The base rig's loop: 2.5 m of hose, 28 mm outside, bore 0.66 x 28 mm; 8 kg of steel bodies
    # with a 16 cm^3 pump. Loop oil = the hoses' bore plus the bodies' passages (area x bore / 4).
    bore, outside, length = 0.66 * 0.028, 0.028, 2.5
    internal = default_internal_area_m2(8.0, 7850.0, 16e-6, bore)
    loop_oil_m3 = np.pi / 4 * bore**2 * length + internal * bore / 4
    assert loop_oil_m3 * 1000 == pytest.approx(0.85, abs=0.1)      # "about 1 L" on a small rig
    # the tank's oil in OIL, the loop's in LOOP_OIL (its own node since the standing loop oil)
    assert C[OIL] == pytest.approx(15e-3 * 870.0 * float(rig.oil.specific_heat(293.15)))
    assert C[LOOP_OIL] == pytest.approx(loop_oil_m3 * 870.0 * float(rig.oil.specific_heat(293.15)))
    assert C[WALL] == pytest.approx(float(np.asarray(rig.wall_capacity_J_K).ravel()[0]))
    # 8 kg of steel at 470 J/(kg K) (materials table, memory of Incropera Table A.1)
    assert C[HARDWARE] == pytest.approx(8.0 * 470.0)
    # the hose wall: its annulus times the composite's rho c (materials.HOSE_WALL, from memory)
    hose_m3 = np.pi / 4 * (outside**2 - bore**2) * length
    rho_c = HOSE_WALL["density_kg_m3"] * HOSE_WALL["specific_heat_J_kgK"]
    assert C[HOSE] + C[HOSE_COVER] == pytest.approx(hose_m3 * rho_c)
    assert 1.5 < hose_m3 * HOSE_WALL["density_kg_m3"] < 3.0        # kg: "a few kg on a small rig"
    # the two rings: the liner is the inner fifth of the wall's thickness, each holds its ring's volume
    r_i, r_o = bore / 2, outside / 2
    r_s = r_i + 0.2 * (r_o - r_i)
    assert C[HOSE] == pytest.approx(np.pi * (r_s**2 - r_i**2) * length * rho_c)
    assert C[HOSE_COVER] == pytest.approx(np.pi * (r_o**2 - r_s**2) * length * rho_c)


def test_hose_rings_are_finite_volumes_of_the_wall(rig):
    # Each node at its ring's mid-radius; the shell conductance 2 pi k L / ln(r_b / r_a) between
    # neighbouring centres (Incropera eq. 3.27). In series, bore -> liner -> cover -> outside face
    # is the whole wall's conduction, as a steady state through the wall must give.
    r_i, r_s, r_o, r_1, r_2 = hose_rings_m(rig.hose_inner_diameter_m, rig.hose_outer_diameter_m)
    assert HOSE_LINER_FRACTION == 0.2
    assert (r_s - r_i) == pytest.approx(0.2 * (r_o - r_i))
    assert (r_1, r_2) == pytest.approx((0.5 * (r_i + r_s), 0.5 * (r_s + r_o)))
    k, L = HOSE_WALL["conductivity_W_mK"], rig.hose_length_m
    parts = rig.constants
    assert float(hose_ring_link_W_K(rig)) == pytest.approx(2 * np.pi * k * L / np.log(r_2 / r_1))
    assert parts["hose_inner_W_K"] == pytest.approx(2 * np.pi * k * L / np.log(r_1 / r_i))
    assert parts["hose_outer_W_K"] == pytest.approx(2 * np.pi * k * L / np.log(r_o / r_2))
    series = 1.0 / (1.0 / parts["hose_inner_W_K"] + 1.0 / parts["hose_link_W_K"] + 1.0 / parts["hose_outer_W_K"])
    whole = cylinder_wall_conductance_W_K(rig.hose_inner_diameter_m, rig.hose_outer_diameter_m, L, k)
    assert series == pytest.approx(whole, rel=1e-12)


def test_the_hose_mean_is_the_rubbers_heat(rig):
    # hose_mean_K (the report's end_hose_C, the trace CSV's hose_C): the temperature whose rise
    # times the hose's whole capacity is the heat the two rings hold.
    T = STATES_K
    C = heat_capacities_J_K(rig, T)
    held = C[:, HOSE] * (T[:, HOSE] - 293.15) + C[:, HOSE_COVER] * (T[:, HOSE_COVER] - 293.15)
    np.testing.assert_allclose((C[:, HOSE] + C[:, HOSE_COVER]) * (hose_mean_K(rig, T) - 293.15), held, rtol=1e-12)


def test_enthalpy_and_temperature_are_inverse(rig):
    H = node_enthalpy_J(rig, STATES_K)
    np.testing.assert_allclose(temperatures_from_enthalpy_K(rig, H), STATES_K, rtol=1e-12)


def test_painted_steel_box_overall_coefficient_in_still_air(rig):
    # Overall coefficient of a painted steel tank in still air, convection plus radiation:
    # 5.8-14 W/(m^2 K) (common practice, no source: the trade's handbooks give 5.8-11.6 for
    # dT >= 25 K, "2 BTU/hr/ft^2/degF" ~ 11 and "0.001 hp/ft^2/degF" ~ 14), here as the tank's
    # conductance to the air over its whole outside area (dry shell included, as the rule's area
    # is), at 20-60 K above ambient.
    area = float((rig.side_area_m2 + rig.top_area_m2 + rig.bottom_area_m2)[0])
    for rise in (20.0, 40.0, 60.0):
        T = np.array([rig.ambient_K + rise])
        U = float(wall_to_ambient_W_K(rig, T)[0]) / area
        assert 5.8 <= U <= 14.0, U


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
    rise_K = float(return_line_rise_K(rig, np.array([T_C + ZERO_CELSIUS_K]), inputs)[0])
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
    T = np.array([[350.0, 340.0, 345.0, 330.0, 325.0, 348.0]])
    assert float(wall_to_ambient_W_K(rig, T[:, WALL])[0]) == 0.0
    assert float(np.atleast_1d(hardware_to_ambient_W_K(rig, T[:, HARDWARE]))[0]) == 0.0
    assert float(np.atleast_1d(hose_to_ambient_W_K(rig, T[:, HOSE_COVER]))[0]) == 0.0
    for inputs in (flowing_inputs(rig), still_inputs()):
        _, _, _, g_amb, offset = node_equations(rig, T, inputs)
        assert np.all(g_amb == 0.0) and np.all(offset == 0.0)


def _face_W_m2K(rig, area_field, T_wall_K):
    """The outside coefficient (convection times the multiplier, plus radiation) of one face of the
    tank, W/(m^2 K), read off the production path: the wall's conductance to the air
    (ambient_conductances_W_K) with and without that face's area, less half the wall in series."""
    T = np.array([T_wall_K])
    area = float(np.atleast_1d(getattr(rig, area_field))[0])
    without = rig.with_changes(**{area_field: np.zeros(1)})
    G = float(ambient_conductances_W_K(rig, T, T)[0][0] - ambient_conductances_W_K(without, T, T)[0][0])
    half_wall = 0.5 * rig.wall_thickness_m / rig.wall_conductivity_W_mK
    return G / (area - G * half_wall)


def _outside_air_face_W_m2K(T_s, T_a, length_m, kind, emissivity):
    """The same face from outside sources: air from CoolProp at the film temperature (beta = 1/T),
    `ht`'s Churchill-Chu vertical plate or McAdams hot face down, and grey radiation with sigma
    from scipy.constants (CODATA)."""
    import ht
    from CoolProp.CoolProp import PropsSI
    from scipy.constants import Stefan_Boltzmann, g
    T_f = 0.5 * (T_s + T_a)
    k, mu, rho, pr = (PropsSI(key, "T", T_f, "P", 101325.0, "Air") for key in ("L", "V", "D", "Prandtl"))
    gr = g * (T_s - T_a) / T_f * length_m**3 / (mu / rho) ** 2
    Nu = ht.Nu_vertical_plate_Churchill(pr, gr) if kind == "vertical" else \
        ht.Nu_horizontal_plate_McAdams(pr, gr, buoyancy=False)
    return Nu * k / length_m + emissivity * Stefan_Boltzmann * (T_s**4 - T_a**4) / (T_s - T_a)


@pytest.mark.parametrize("rise_K", [10.0, 40.0])
def test_hot_bottom_face_against_ht_and_coolprop(rig, rise_K):
    # The open bottom of a hot tank is a hot face down: McAdams 0.27 Ra^1/4 on L = A/P (Incropera
    # eq. 9.32; ht.Nu_horizontal_plate_McAdams, buoyancy opposed), plus radiation, on the production
    # path; air from the package's table against CoolProp, within 1 %.
    T_a = float(rig.ambient_K)
    expected = _outside_air_face_W_m2K(T_a + rise_K, T_a, float(rig.top_length_m[0]), "bottom", rig.wall_emissivity)
    assert _face_W_m2K(rig, "bottom_area_m2", T_a + rise_K) == pytest.approx(expected, rel=0.01)


def test_wind_never_lowers_the_conductances_to_the_air(rig):
    # Production path: the wall's, the bodies' and the hoses' conductances to the air never fall as
    # the air speed rises (Churchill 1977, Nu^3 = Nu_F^3 + Nu_N^3, adds a forced part to the natural
    # one), and a fresh breeze at least doubles the wall's convection.
    T = np.array([340.0])
    previous = None
    for speed in (0.0, 0.5, 2.0, 8.0):
        G = np.array([float(g[0]) for g in ambient_conductances_W_K(rig.with_changes(air_speed_m_s=speed), T, T, T)])
        if previous is not None:
            assert np.all(G >= previous), (speed, G, previous)
        previous = G
    still = float(ambient_conductances_W_K(rig.with_changes(convection_multiplier=0.0), T, T, T)[0][0])
    calm = float(ambient_conductances_W_K(rig, T, T, T)[0][0]) - still            # convection only
    breeze = float(ambient_conductances_W_K(rig.with_changes(air_speed_m_s=8.0), T, T, T)[0][0]) - still
    assert breeze > 2.0 * calm


def test_natural_convection_on_the_tank_sides_against_ht_and_coolprop(rig):
    # The wetted sides of the base rig's 0.30 m high tank, 40 K above the room: Churchill-Chu
    # (ht.Nu_vertical_plate_Churchill) with CoolProp air plus radiation, on the production path,
    # within 1 %; the convective part alone is 4-6 W/(m^2 K) (Incropera, ch. 9 examples; common
    # practice, no source for the band).
    from scipy.constants import Stefan_Boltzmann
    T_a = float(rig.ambient_K)
    T_s = T_a + 40.0
    h = _face_W_m2K(rig, "wetted_side_area_m2", T_s)
    assert h == pytest.approx(_outside_air_face_W_m2K(T_s, T_a, float(rig.side_height_m[0]), "vertical",
                                                      rig.wall_emissivity), rel=0.01)
    radiation = rig.wall_emissivity * Stefan_Boltzmann * (T_s**4 - T_a**4) / 40.0
    assert 4.0 < h - radiation < 6.0


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


def _floor_heat_by_finite_differences_J_m2(k, alpha, dT, duration_s, depth_m=0.6, dx=0.002):
    """Heat per m^2 taken by a slab of concrete whose surface is held dT above its start for
    duration_s, by explicit finite differences (an independent reference for the semi-infinite solid;
    the slab is deep enough that its far face never warms)."""
    n = int(depth_m / dx)
    dt = 0.4 * dx * dx / alpha
    steps = int(np.ceil(duration_s / dt))
    dt = duration_s / steps
    T = np.zeros(n)
    T[0] = dT
    for _ in range(steps):
        T[1:-1] += alpha * dt / dx**2 * (T[2:] - 2 * T[1:-1] + T[:-2])
    return k / alpha * dx * (0.5 * T[0] + T[1:-1].sum())     # rho c x the heat content (trapezoid)


def test_floor_bottom_loses_into_a_semi_infinite_concrete_floor():
    # A tank standing on the floor: its bottom loses into the concrete (Incropera Table A.3, stone
    # mix: k = 1.4 W/(m K), alpha = 6.9e-7 m^2/s), a semi-infinite solid. The floor's coefficient is
    # its value at the end of the planned session (at least an hour), checked against finite
    # differences of the heat equation: the surface flux after an hour with the surface held 10 K up.
    raw = base_raw()
    open_rig = build_rig(load_scenario(raw))
    set_path(raw, "reservoir.bottom", "floor")
    scenario = load_scenario(raw)
    floor_rig = build_rig(scenario)
    assert float(floor_rig.bottom_area_m2[0]) == 0.0 and float(open_rig.floor_area_m2[0]) == 0.0
    assert sum(step.duration_s for step in scenario.steps) < 3600.0        # so the floor's hour holds
    # the flux at 1 h from the heat taken between 59 and 61 minutes (centred difference)
    alpha = 1.4 / (2300 * 880)
    flux = (_floor_heat_by_finite_differences_J_m2(1.4, alpha, 10.0, 3660.0)
            - _floor_heat_by_finite_differences_J_m2(1.4, alpha, 10.0, 3540.0)) / 120.0
    assert floor_rig.floor_h_W_m2K * 10.0 == pytest.approx(flux, rel=0.01)
    # ENGINEERING.md's figures: about 16 W/(m^2 K) after 1 h, 9 after 3 h
    from thermo_budget.physics.still_paths import floor_h_W_m2K
    assert float(floor_h_W_m2K(3600.0)) == pytest.approx(16.0, abs=0.5)
    assert float(floor_h_W_m2K(3 * 3600.0)) == pytest.approx(9.0, abs=0.5)
    # the floor takes more than the open bottom's still air on this rig (about 6 W/(m^2 K))
    T = np.array([340.0])
    assert float(wall_to_ambient_W_K(floor_rig, T)[0]) > float(wall_to_ambient_W_K(open_rig, T)[0])


def test_rig_geometry_of_a_box():
    rig = build_rig(load_scenario(base_raw()))
    # 0.35 x 0.25 x 0.30 m box, 15 L (numbers of the invented base rig)
    assert float(rig.side_area_m2[0]) == pytest.approx(2 * (0.35 + 0.25) * 0.30)
    assert float(rig.top_area_m2[0]) == pytest.approx(0.35 * 0.25)
    assert float(rig.fill_height_m[0]) == pytest.approx(0.015 / (0.35 * 0.25))
    assert float(rig.oil_mass_kg[0]) == pytest.approx(15.0 * 0.870)


def _steel_and_plastic_rigs():
    """The invented base rig with its 2 mm steel tank, and the same rig with a 6 mm polyethylene tank."""
    raw = base_raw()
    steel = build_rig(load_scenario(raw))
    set_path(raw, "reservoir.wall_material", "polyethylene")
    set_path(raw, "reservoir.wall_thickness", "6 mm")
    return steel, build_rig(load_scenario(raw))


def test_plastic_wall_conduction_matters():
    # A 6 mm polyethylene wall (k ~0.4 W/(m K)) must reject noticeably less than 2 mm steel.
    steel, plastic = _steel_and_plastic_rigs()
    T = np.array([350.0])
    g_steel, g_plastic = float(wall_to_ambient_W_K(steel, T)[0]), float(wall_to_ambient_W_K(plastic, T)[0])
    assert g_plastic < g_steel
    assert g_plastic > 0.7 * g_steel   # the air side still dominates (R''_wall ~0.015 vs 1/h ~0.08)


# --- The inside of the rig ---------------------------------------------------------------------

def _flow_state(rig, T_oil=330.0, rpm=3400.0):
    T = np.array([T_oil])
    Q = pump_flow_m3_s(rig.displacement_m3, rpm, rig.volumetric_efficiency)
    props = rig.oil.transport(T)
    return T, np.array([Q]), props[3] * Q, props[2], props


def test_metal_bodies_follow_the_oil_while_it_flows(rig):
    # Flowing: the bodies' conductance is an exchanger's, G = eps m_dot c_p <= m_dot c_p
    # (Incropera ch. 11), and large enough that 8 kg of steel follows the oil within a couple of
    # minutes (time constant C / G, engineering judgement of the issue: "a minute or two").
    T, Q, m_dot, cp, props = _flow_state(rig)
    bodies, hose = loop_conductances_W_K(rig, T, Q, m_dot, cp, props)
    assert float(bodies[0]) <= float((m_dot * cp)[0])
    assert 8.0 * 470.0 / float(bodies[0]) < 150.0
    # the hose's path is the weak one: through the rubber wall (k ~0.25 W/(m K))
    assert float(hose[0]) < 0.5 * float(bodies[0])
    # engine off: only conduction along the oil standing in the hoses, nearly nothing
    still = loop_conductances_W_K(rig, T, np.array([0.0]), np.array([0.0]), cp, props)
    assert max(float(np.atleast_1d(g)[0]) for g in still) < 0.01


def test_hardware_coupling_multiplier_scales_the_bodies_only(rig):
    T, Q, m_dot, cp, props = _flow_state(rig)
    doubled = rig.with_changes(hardware_coupling_multiplier=2.0)
    assert float(oil_to_hardware_W_K(doubled, T, Q, m_dot, cp, props)[0]) == pytest.approx(
        2.0 * float(oil_to_hardware_W_K(rig, T, Q, m_dot, cp, props)[0]))
    assert float(oil_to_hose_W_K(doubled, T, Q, m_dot, cp, props)[0]) == pytest.approx(
        float(oil_to_hose_W_K(rig, T, Q, m_dot, cp, props)[0]))


def test_given_internal_area_overrides_the_default_and_more_area_couples_more():
    raw = base_raw()
    default = build_rig(load_scenario(raw))
    set_path(raw, "hardware.internal_area", "0.2 m^2")
    larger = build_rig(load_scenario(raw))
    assert larger.internal_area_m2 == pytest.approx(0.2)
    T, Q, m_dot, cp, props = _flow_state(default)
    assert float(oil_to_hardware_W_K(larger, T, Q, m_dot, cp, props)[0]) > float(
        oil_to_hardware_W_K(default, T, Q, m_dot, cp, props)[0])


def test_default_body_area_is_three_cubes_and_body_area_overrides_it():
    raw = base_raw()
    side = (8.0 / 7850.0) ** (1 / 3)
    assert build_rig(load_scenario(raw)).body_area_m2 == pytest.approx(3 * 6 * side**2)
    set_path(raw, "hardware.body_area", "0.5 m^2")
    assert build_rig(load_scenario(raw)).body_area_m2 == pytest.approx(0.5)


def test_return_jet_stirs_the_tank(rig):
    # Stirred: the wall velocity lies between the through-flow velocity Q/A and the jet's exit
    # velocity, and the oil-side coefficients beat still oil's on the sides and on the bottom.
    _, Q, _, _, _ = _flow_state(rig)
    u = float(np.atleast_1d(stirring_velocity_m_s(rig, Q))[0])
    through = float(Q[0] / rig.tank_cross_section_m2[0])
    exit_ = float(Q[0] / (np.pi / 4 * rig.hose_inner_diameter_m**2))
    assert through < u < exit_
    assert u > 20 * through          # "far above the through-flow velocity"
    # the confined jet's circulation (momentum flux over the tank's section across the jet), far
    # below the free jet's centreline speed where it meets the far wall (Pope's B = 5.8; the former
    # estimate): U / u_c = sqrt(A_0 / A) x / (5.8 d) = 0.26 over the 0.35 m length, section 0.25 m x 0.17 m
    from thermo_budget.physics.correlations import jet_centreline_velocity_Pope
    far_wall = float(jet_centreline_velocity_Pope(exit_, rig.hose_inner_diameter_m, 0.35))
    assert 0.2 * far_wall < u < 0.3 * far_wall
    T_oil, T_wall = np.array([330.0]), np.array([325.0])
    for h in (h_oil_side_W_m2K, h_oil_bottom_W_m2K):
        assert float(h(rig, T_oil, T_wall, Q)[0]) > 2 * float(h(rig, T_oil, T_wall, 0.0)[0])


def test_oil_side_multiplier_scales_the_sides_and_the_bottom(rig):
    twice = rig.with_changes(oil_side_multiplier=2.0)
    T_oil, T_wall = np.array([330.0]), np.array([325.0])
    for h in (h_oil_side_W_m2K, h_oil_bottom_W_m2K):
        assert float(h(twice, T_oil, T_wall, 0.0)[0]) == pytest.approx(2 * float(h(rig, T_oil, T_wall, 0.0)[0]))


def test_wetted_bottom_under_warmer_oil_is_a_cooled_plate_facing_up(rig):
    # Still oil warmer than the bottom: 0.27 Ra^1/4 on L = A/P (McAdams; Incropera eq. 9.32, the
    # upper surface of a cold plate), checked against ht.Nu_horizontal_plate_McAdams (buoyancy
    # opposed); under cooler oil the unstable 0.54 Ra^1/4 / 0.15 Ra^1/3 applies and is larger.
    import ht
    T_oil, T_wall = np.array([330.0]), np.array([325.0])
    nu, k, _, _, pr = rig.oil.transport(np.array([327.5]))
    L = float(rig.top_length_m[0])
    Gr = 9.80665 * rig.oil.expansion_per_K * 5.0 * L**3 / float(nu[0]) ** 2
    expected = ht.Nu_horizontal_plate_McAdams(float(pr[0]), Gr, buoyancy=False) * float(k[0]) / L
    assert float(h_oil_bottom_W_m2K(rig, T_oil, T_wall, 0.0)[0]) == pytest.approx(expected, rel=1e-9)
    assert float(h_oil_bottom_W_m2K(rig, T_wall, T_oil, 0.0)[0]) > float(
        h_oil_bottom_W_m2K(rig, T_oil, T_wall, 0.0)[0])
    assert float(h_oil_bottom_W_m2K(rig, T_oil, T_wall, 0.0)[0]) < float(h_oil_side_W_m2K(rig, T_oil, T_wall, 0.0)[0])


def test_dry_shell_is_a_fin_steel_mostly_effective_plastic_hardly():
    # Fin efficiency of the dry shell above the oil line, tanh(mL)/mL with m = sqrt(h / (k t))
    # (Incropera eq. 3.89): 2 mm steel with h ~ 10 W/(m^2 K) has 1/m = 0.1 m, so a 0.2 m fin keeps
    # about half its effect; 6 mm polyethylene has 1/m ~ 0.015 m, so almost nothing above the oil
    # line works.
    steel, plastic = _steel_and_plastic_rigs()
    h = np.array([10.0])
    for rig, low, high in ((steel, 0.35, 0.7), (plastic, 0.0, 0.1)):
        full = (rig.dry_side_area_m2 + rig.top_area_m2) * h / (1 + h * 0.5 * rig.wall_thickness_m / rig.wall_conductivity_W_mK)
        eta = float(dry_shell_W_K(rig, h, h)[0] / full[0])
        assert low < eta < high, eta
    # so a plastic tank sheds less than the same tank at the wetted wall's temperature all over
    T = np.array([350.0])
    wetted_only = plastic.with_changes(dry_side_area_m2=np.zeros(1), top_area_m2=np.full(1, 1e-9))
    assert float(wall_to_ambient_W_K(plastic, T)[0]) < 1.1 * float(wall_to_ambient_W_K(wetted_only, T)[0])


def test_a_rig_s_designs_taken_keep_what_the_rig_worked_out_design_by_design():
    """take_designs carries the packed rows and the geometry constants of the designs it takes
    instead of working them out again: they must be the ones a rig built from those designs alone
    works out (pack, constant_parts), for a subset, a repeat and a single design."""
    import dataclasses
    from thermo_budget.inputs.uncertainty import factor_values, sample_rig, standard_normals
    from thermo_budget.physics.rig import constant_parts, pack, take_designs
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    rig = build_rig(scenario, oil_volume_m3=np.linspace(0.02, 0.2, 7), cooler_W_K=np.linspace(0.0, 5.0, 7))
    rig = sample_rig(rig, factor_values(scenario.uncertainty, standard_normals(scenario.uncertainty, 7)))
    for index in (np.array([3, 1, 1, 6]), np.array([2]), np.arange(7)[::-1]):
        taken = take_designs(rig, index)
        plain = rig.with_changes(**{f.name: getattr(rig, f.name)[index] for f in dataclasses.fields(rig)
                                    if isinstance(getattr(rig, f.name), np.ndarray) and getattr(rig, f.name).ndim == 1
                                    and getattr(rig, f.name).size > 1})
        assert np.array_equal(taken.params, pack(plain), equal_nan=True)
        assert taken.params.shape[0] == index.size
        for key, value in constant_parts(plain).items():
            assert np.array_equal(np.asarray(taken.constants[key]), np.asarray(value), equal_nan=True), key
    one = build_rig(scenario)                       # no design of its own: its one row is shared
    assert take_designs(one, np.zeros(4, int)).params.shape[0] == 1
