"""Oil properties against ISO 3448, ASTM D2270, ASTM D341 and Cragoe (NBS Misc. Publ. 97)."""
import numpy as np
import pytest
from chemicals.viscosity import viscosity_index as chemicals_viscosity_index

from thermo_budget.errors import ScenarioError
from thermo_budget.physics.oil import (T40_K, T100_K, Oil, cragoe_conductivity_W_mK, cragoe_specific_heat_J_kgK,
                               iso_vg_nu40_cSt, nu100_from_viscosity_index_cSt, viscosity_index_d2270,
                               walther_coefficients, walther_temperature_K, walther_viscosity_cSt)
from thermo_budget.units import ZERO_CELSIUS_K

# Exact unit factors (International Table Btu, international inch, foot and pound).
BTU_J = 1055.05585262
LB_KG = 0.45359237
INCH_M = 0.0254
FOOT_M = 0.3048
RANKINE_K = 5.0 / 9.0
BTU_PER_LB_F = BTU_J / (LB_KG * RANKINE_K)                                   # = 4186.8 J/(kg K)
BTU_IN_PER_H_FT2_F = BTU_J * INCH_M / (3600.0 * FOOT_M**2 * RANKINE_K)       # W/(m K)


def kelvin_from_F(t_F):
    return (t_F - 32.0) * RANKINE_K + ZERO_CELSIUS_K


# --- ISO 3448 -----------------------------------------------------------------------------------

@pytest.mark.parametrize("grade", [10, 22, 32, 46, 68, 100, 150, 220])
def test_iso_vg_is_the_grade_mid_point(grade):
    # ISO 3448: the grade number is the mid-point kinematic viscosity at 40 degC in cSt.
    assert iso_vg_nu40_cSt(grade) == pytest.approx(grade)


def test_iso_vg_rejects_a_non_grade():
    with pytest.raises(ScenarioError, match="fluid.iso_vg"):
        iso_vg_nu40_cSt(47)


# --- ASTM D2270 ---------------------------------------------------------------------------------

def test_d2270_example_vi_below_100():
    # ASTM D2270 worked example (recalled from memory): nu40 = 73.30, nu100 = 8.86 cSt -> VI 92,
    # 92.4 unrounded. Cross-checked with chemicals.viscosity.viscosity_index (takes m^2/s).
    vi = viscosity_index_d2270(73.30, 8.86)
    assert round(vi) == 92                                   # ASTM D2270 example (from memory)
    assert vi == pytest.approx(92.4, abs=0.05)               # ASTM D2270 example (from memory)
    assert vi == pytest.approx(chemicals_viscosity_index(73.30e-6, 8.86e-6), abs=0.05)  # chemicals


def test_d2270_example_vi_above_100():
    # ASTM D2270 worked example (recalled from memory): nu40 = 22.83, nu100 = 5.05 cSt -> VI 156.
    vi = viscosity_index_d2270(22.83, 5.05)
    assert round(vi) == 156                                  # ASTM D2270 example (from memory)
    assert vi == pytest.approx(chemicals_viscosity_index(22.83e-6, 5.05e-6), abs=0.05)  # chemicals


@pytest.mark.parametrize("nu40, nu100", [(46.0, 6.8), (32.0, 5.4), (68.0, 8.7), (100.0, 11.0),
                                         (220.0, 19.0), (15.0, 3.8), (460.0, 30.0), (1500.0, 80.0)])
def test_d2270_agrees_with_chemicals_over_grades(nu40, nu100):
    # chemicals.viscosity.viscosity_index implements ASTM D2270 independently of our code.
    assert viscosity_index_d2270(nu40, nu100) == pytest.approx(
        chemicals_viscosity_index(nu40 * 1e-6, nu100 * 1e-6), abs=0.1)


@pytest.mark.parametrize("nu40, vi", [(46.0, 100.0), (32.0, 95.0), (68.0, 150.0), (22.0, 40.0),
                                      (100.0, 120.0), (73.30, 92.4296)])
def test_nu100_from_viscosity_index_round_trips(nu40, vi):
    nu100 = nu100_from_viscosity_index_cSt(nu40, vi)
    assert 2.0 <= nu100 < nu40
    assert viscosity_index_d2270(nu40, nu100) == pytest.approx(vi, abs=1e-6)


def test_nu100_from_viscosity_index_reproduces_the_d2270_example():
    # ASTM D2270 example (from memory): nu40 = 73.30 cSt with VI 92.43 must give nu100 = 8.86 cSt.
    assert nu100_from_viscosity_index_cSt(73.30, 92.4296) == pytest.approx(8.86, abs=0.005)


def test_nu100_from_unreachable_viscosity_index_is_a_scenario_error():
    with pytest.raises(ScenarioError, match="fluid.viscosity_index"):
        nu100_from_viscosity_index_cSt(10.0, -400.0)


# --- ASTM D341 (Walther) ------------------------------------------------------------------------

def test_walther_line_reproduces_both_points():
    # ASTM D341: log log(nu + 0.7) is linear in log T, so the line passes through both points.
    A, B = walther_coefficients(T40_K, 46.0, T100_K, 6.8)
    assert walther_viscosity_cSt(T40_K, A, B) == pytest.approx(46.0, rel=1e-12)
    assert walther_viscosity_cSt(T100_K, A, B) == pytest.approx(6.8, rel=1e-12)


def test_walther_midpoint_is_on_the_straight_line_in_d341_coordinates():
    # ASTM D341 chart coordinates: Z = log10 log10(nu + 0.7) against log10 T is a straight line,
    # computed here independently of the code under test.
    nu1, nu2 = 46.0, 6.8
    A, B = walther_coefficients(T40_K, nu1, T100_K, nu2)
    z = lambda nu: np.log10(np.log10(nu + 0.7))
    x1, x2 = np.log10(T40_K), np.log10(T100_K)
    T_mid = 10 ** (0.5 * (x1 + x2))
    z_mid = 0.5 * (z(nu1) + z(nu2))
    nu_mid = 10 ** (10 ** z_mid) - 0.7
    assert walther_viscosity_cSt(T_mid, A, B) == pytest.approx(nu_mid, rel=1e-10)
    # sensible: between the two end points, and far below their arithmetic mean (log-log curve)
    assert nu2 < nu_mid < 0.5 * (nu1 + nu2)
    assert 13.0 < walther_viscosity_cSt(343.15, A, B) < 18.0  # ISO VG 46 at 70 degC ~15 cSt (common practice, no source; from memory of data sheets)


def test_walther_temperature_inverts_viscosity():
    A, B = walther_coefficients(T40_K, 68.0, T100_K, 8.7)
    for nu in (200.0, 68.0, 20.0, 10.0, 3.0):
        assert walther_viscosity_cSt(walther_temperature_K(nu, A, B), A, B) == pytest.approx(nu, rel=1e-10)


@pytest.mark.parametrize("grade, vi", [(32, 100), (46, 100), (68, 95), (46, 150)])
def test_a_20_K_rise_roughly_halves_viscosity(grade, vi):
    # "A 20 K rise roughly halves the viscosity" of a mineral hydraulic oil near 40-60 degC:
    # common practice, no source; checked as a wide band.
    oil = Oil(nu40_cSt=grade, nu100_cSt=nu100_from_viscosity_index_cSt(grade, vi), density_15C_kg_m3=870.0)
    ratio = oil.kinematic_viscosity_cSt(T40_K + 20.0) / oil.kinematic_viscosity_cSt(T40_K)
    assert 0.35 < ratio < 0.65


# --- Cragoe, NBS Misc. Publ. 97 ------------------------------------------------------------------

def cragoe_c_btu_lb_F(t_F, s):
    # Cragoe (1929), NBS Misc. Publ. 97: c = (0.388 + 0.00045 t) / sqrt(s) Btu/(lb °F), t in °F.
    return (0.388 + 0.00045 * t_F) / np.sqrt(s)


def cragoe_k_btu_in(t_F, s):
    # Cragoe (1929), NBS Misc. Publ. 97: k = 0.813/s (1 - 0.0003 (t - 32)) Btu in/(h ft^2 °F).
    return 0.813 / s * (1.0 - 0.0003 * (t_F - 32.0))


GRAVITIES = [0.80, 0.85, 0.876, 0.90, 0.95]
TEMPERATURES_F = [32.0, 100.0, 212.0, 300.0]


@pytest.mark.parametrize("s", GRAVITIES)
@pytest.mark.parametrize("t_F", TEMPERATURES_F)
def test_cragoe_specific_heat_against_the_published_formula(s, t_F):
    expected = cragoe_c_btu_lb_F(t_F, s) * BTU_PER_LB_F  # Cragoe, NBS Misc. Publ. 97, exact Btu factors
    assert cragoe_specific_heat_J_kgK(kelvin_from_F(t_F), s) == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("s", GRAVITIES)
@pytest.mark.parametrize("t_F", TEMPERATURES_F)
def test_cragoe_conductivity_against_the_published_formula(s, t_F):
    expected = cragoe_k_btu_in(t_F, s) * BTU_IN_PER_H_FT2_F  # Cragoe, NBS Misc. Publ. 97, exact factors
    assert cragoe_conductivity_W_mK(kelvin_from_F(t_F), s) == pytest.approx(expected, rel=1e-6)


def test_cragoe_table_spot_values():
    # Entries of the kind Cragoe tabulates, worked by hand from his formula (we hold no copy of the
    # printed tables, so these are not read from them): s = 0.876 (30 °API) at 100 °F,
    # c = 0.433 / 0.9359 = 0.4627 Btu/(lb °F); at 32 °F, k = 0.813 / 0.876 = 0.928 Btu in/(h ft^2 °F).
    assert cragoe_specific_heat_J_kgK(kelvin_from_F(100.0), 0.876) / BTU_PER_LB_F == pytest.approx(0.4627, abs=5e-4)
    assert cragoe_conductivity_W_mK(kelvin_from_F(32.0), 0.876) / BTU_IN_PER_H_FT2_F == pytest.approx(0.928, abs=1e-3)


def test_exact_unit_factors_in_the_code():
    # 1 Btu/(lb °F) = 4186.8 J/(kg K) exactly (IT Btu); 1 Btu in/(h ft^2 °F) = 0.1442279 W/(m K).
    assert BTU_PER_LB_F == pytest.approx(4186.8, rel=1e-12)
    assert BTU_IN_PER_H_FT2_F == pytest.approx(0.1442279, rel=1e-6)


def test_typical_hydraulic_oil_at_40C():
    # Typical mineral hydraulic oil at 40 degC: c_p ~1.9-2.1 kJ/(kg K) and k ~0.13 W/(m K)
    # (common practice, no source; from memory of oil makers' data sheets).
    oil = Oil(nu40_cSt=46.0, nu100_cSt=6.8, density_15C_kg_m3=870.0)
    assert 1900.0 <= oil.specific_heat(T40_K) <= 2100.0
    assert 0.12 <= oil.conductivity(T40_K) <= 0.14
    assert 0.86 < oil.specific_gravity_60F < 0.88


# --- The Oil object -----------------------------------------------------------------------------

def test_density_follows_the_expansion_coefficient():
    oil = Oil(nu40_cSt=46.0, nu100_cSt=6.8, density_15C_kg_m3=870.0, expansion_per_K=7e-4)
    assert oil.density_kg_m3(288.15) == pytest.approx(870.0)
    assert oil.density_kg_m3(288.15 + 50.0) == pytest.approx(870.0 / 1.035)


def test_enthalpy_is_the_integral_of_specific_heat():
    oil = Oil(nu40_cSt=46.0, nu100_cSt=6.8, density_15C_kg_m3=870.0)
    T = np.linspace(280.0, 400.0, 7)
    dT = 1e-3
    slope = (oil.specific_enthalpy_J_kg(T + dT) - oil.specific_enthalpy_J_kg(T - dT)) / (2 * dT)
    np.testing.assert_allclose(slope, oil.specific_heat(T), rtol=1e-7)
    assert oil.specific_enthalpy_J_kg(ZERO_CELSIUS_K) == pytest.approx(0.0, abs=1e-9)
    np.testing.assert_allclose(oil.temperature_from_enthalpy_K(oil.specific_enthalpy_J_kg(T)), T, rtol=1e-12)


def test_overridden_properties_are_used():
    oil = Oil(nu40_cSt=46.0, nu100_cSt=6.8, density_15C_kg_m3=870.0, specific_heat_J_kgK=2000.0,
              conductivity_W_mK=0.14)
    T = np.array([300.0, 350.0])
    np.testing.assert_allclose(oil.specific_heat(T), 2000.0)
    np.testing.assert_allclose(oil.conductivity(T), 0.14)
    np.testing.assert_allclose(oil.temperature_from_enthalpy_K(oil.specific_enthalpy_J_kg(T)), T)


def test_viscosity_index_of_the_oil_object():
    oil = Oil(nu40_cSt=46.0, nu100_cSt=nu100_from_viscosity_index_cSt(46.0, 100.0), density_15C_kg_m3=870.0)
    assert oil.viscosity_index == pytest.approx(100.0, abs=1e-6)
    assert oil.temperature_at_viscosity_K(46.0) == pytest.approx(T40_K, abs=1e-6)


def test_prandtl_number_of_oil_is_large():
    oil = Oil(nu40_cSt=46.0, nu100_cSt=6.8, density_15C_kg_m3=870.0)
    # Pr = nu rho c_p / k, recomputed here
    T = 330.0
    pr = oil.kinematic_viscosity_m2_s(T) * oil.density_kg_m3(T) * oil.specific_heat(T) / oil.conductivity(T)
    assert oil.transport(T)[4] == pytest.approx(pr)
    assert 100 < pr < 1000   # hydraulic oil at ~57 degC: Pr of a few hundred (common practice, no source)
