"""Air properties against Incropera Table A.4 and against CoolProp directly."""
import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI

from thermo_budget.physics.air import P_ATM_Pa, TABLE_T_K, air_properties, air_table

from conftest import load_tool


def coolprop_air(T_K):
    """(k W/(m K), nu m^2/s, Pr) of air at 1 atm straight from CoolProp."""
    k = PropsSI("L", "T", T_K, "P", P_ATM_Pa, "Air")
    nu = PropsSI("V", "T", T_K, "P", P_ATM_Pa, "Air") / PropsSI("D", "T", T_K, "P", P_ATM_Pa, "Air")
    return k, nu, PropsSI("Prandtl", "T", T_K, "P", P_ATM_Pa, "Air")


# Incropera, Fundamentals of Heat and Mass Transfer, 6th ed., Table A.4 (air at 1 atm).
# The 300 K row is as given in the brief; the 350 K row is recalled from memory.
INCROPERA_A4 = {
    300.0: {"k": 26.3e-3, "nu": 15.89e-6, "Pr": 0.707},
    350.0: {"k": 30.0e-3, "nu": 20.92e-6, "Pr": 0.700},
}


@pytest.mark.parametrize("T_K", sorted(INCROPERA_A4))
def test_air_against_incropera_table_A4(T_K):
    k, nu, pr, beta = air_properties(T_K)
    row = INCROPERA_A4[T_K]
    # Tolerances: the table rounds to 3-4 digits and its viscosity data are older than CoolProp's
    # (Lemmon-Jacobsen) fit; 2 % on k and nu, 1 % on Pr.
    assert float(k) == pytest.approx(row["k"], rel=0.02)     # Incropera Table A.4
    assert float(nu) == pytest.approx(row["nu"], rel=0.02)   # Incropera Table A.4
    assert float(pr) == pytest.approx(row["Pr"], rel=0.01)   # Incropera Table A.4
    assert float(beta) == pytest.approx(1.0 / T_K)           # ideal gas, beta = 1/T


def test_table_points_equal_coolprop():
    table = air_table()
    for i in (0, 40, 90, len(TABLE_T_K) - 1):
        k, nu, pr = coolprop_air(float(TABLE_T_K[i]))         # CoolProp, directly
        assert table["k_W_mK"][i] == pytest.approx(k, rel=1e-12)
        assert table["nu_m2_s"][i] == pytest.approx(nu, rel=1e-12)
        assert table["Pr"][i] == pytest.approx(pr, rel=1e-12)


@pytest.mark.parametrize("T_film_K", [293.15 + 0.37, 301.0, 323.7, 345.3, 371.9, 410.1])
def test_interpolation_error_between_table_points_against_coolprop(T_film_K):
    # Linear interpolation on a 2 K grid: the error is of order (dT^2/8) f''/f, well below 1e-4.
    k, nu, pr, _ = air_properties(T_film_K)
    k_ref, nu_ref, pr_ref = coolprop_air(T_film_K)            # CoolProp, directly
    assert float(k) == pytest.approx(k_ref, rel=1e-4)
    assert float(nu) == pytest.approx(nu_ref, rel=1e-4)
    assert float(pr) == pytest.approx(pr_ref, rel=1e-4)


def test_air_properties_are_vectorised_and_clipped():
    T = np.array([[290.0, 300.0], [350.0, 400.0]])
    k, nu, pr, beta = air_properties(T)
    assert k.shape == nu.shape == pr.shape == beta.shape == T.shape
    assert np.all(np.diff(k[0]) > 0) and np.all(np.diff(nu[1]) > 0)
    # outside the table the properties are held at the table's end values, not extrapolated
    k_hot, *_ = air_properties(2000.0)
    assert float(k_hot) == pytest.approx(air_table()["k_W_mK"][-1])


def test_the_shipped_table_is_what_coolprop_gives_today():
    # CoolProp stays the source: the table is regenerated here and compared with the shipped file
    coolprop_table = load_tool("make_air_table").coolprop_table
    rows = coolprop_table()
    table = air_table()
    np.testing.assert_array_equal(rows[:, 0], table["T_K"])
    for i, name in enumerate(("k_W_mK", "nu_m2_s", "Pr"), start=1):
        np.testing.assert_allclose(table[name], rows[:, i], rtol=1e-9)   # CoolProp, directly


# --- air at the stand's altitude and humidity (CoolProp's humid-air functions) -------------------

def _humid_air_direct(T_K, P_Pa, W):
    """(k, nu, Pr) of humid air straight from CoolProp's HAPropsSI (density (1 + W) / Vha)."""
    from CoolProp.HumidAirProp import HAPropsSI
    k = HAPropsSI("K", "T", T_K, "P", P_Pa, "W", W)
    mu = HAPropsSI("M", "T", T_K, "P", P_Pa, "W", W)
    rho = (1.0 + W) / HAPropsSI("Vha", "T", T_K, "P", P_Pa, "W", W)
    return k, mu / rho, mu * HAPropsSI("cp_ha", "T", T_K, "P", P_Pa, "W", W) / k


def test_air_side_at_1600_m_and_40_percent_humidity_against_coolprop():
    # A stand at 1,600 m with the air at 40 % relative humidity: the scenario's air properties (one
    # table per scenario) against CoolProp directly, between the table's points; then the tank side's
    # natural-convection coefficient against Churchill and Chu as the ht package writes it
    # (ht.conv_free_immersed.Nu_vertical_plate_Churchill) on CoolProp's properties.
    from CoolProp.HumidAirProp import HAPropsSI
    from ht.conv_free_immersed import Nu_vertical_plate_Churchill
    from thermo_budget.physics.network import air_side_h_W_m2K
    from thermo_budget.inputs.rig_build import build_rig
    from thermo_budget.inputs.scenario import load_scenario
    from conftest import base_raw
    raw = base_raw()
    raw.update(altitude="1600 m", relative_humidity="40 %")
    scenario = load_scenario(raw)
    # ICAO standard atmosphere (ISO 2533): 83.5 kPa at 1,600 m
    assert scenario.ambient_pressure_Pa == pytest.approx(83523.5, abs=1.0)
    rig = build_rig(scenario)
    P = scenario.ambient_pressure_Pa
    W = HAPropsSI("W", "T", scenario.ambient_K, "P", P, "R", 0.4)
    for T in (301.3, 317.9, 345.1):
        k, nu, pr, beta = air_properties(T, rig.air_columns)
        k_c, nu_c, pr_c = _humid_air_direct(T, P, W)
        assert float(k) == pytest.approx(k_c, rel=2e-4)
        assert float(nu) == pytest.approx(nu_c, rel=2e-4)
        assert float(pr) == pytest.approx(pr_c, rel=2e-4)
    # about 17 % less dense than at sea level (ENGINEERING.md: about 11 % per 1,000 m)
    rho_here = (1.0 + W) / HAPropsSI("Vha", "T", 293.15, "P", P, "W", W)
    assert 1.0 - rho_here / PropsSI("D", "T", 293.15, "P", P_ATM_Pa, "Air") == pytest.approx(0.17, abs=0.015)
    # the side wall's coefficient on the production path (the tank's sides, 40 K above the air)
    T_s, T_a = scenario.ambient_K + 40.0, scenario.ambient_K
    L = float(np.atleast_1d(rig.constants["vertical_lengths_m"][0])[0])
    film = 0.5 * (T_s + T_a)
    k_c, nu_c, pr_c = _humid_air_direct(film, P, W)
    Gr = 9.80665 * (1.0 / film) * 40.0 * L**3 / nu_c**2
    h_reference = Nu_vertical_plate_Churchill(pr_c, Gr) * k_c / L
    h_model = float(air_side_h_W_m2K(rig, np.full((3, 1), T_s)).side[0])
    assert h_model == pytest.approx(h_reference, rel=1e-3)
    # and weaker than at sea level in dry air, by roughly rho^(2/3) in this range (about 12 %)
    sea = build_rig(load_scenario(base_raw()).changed(ambient=f"{T_a - 273.15!r} degC"))
    h_sea = float(air_side_h_W_m2K(sea, np.full((3, 1), T_s)).side[0])
    assert 0.80 < h_model / h_sea < 0.93


def test_standard_air_uses_the_shipped_table():
    from thermo_budget.inputs.rig_build import build_rig
    from thermo_budget.inputs.scenario import load_scenario
    from conftest import base_raw
    assert build_rig(load_scenario(base_raw())).air_columns is None
