"""Air at atmospheric pressure: properties from CoolProp, tabulated once and interpolated.

CoolProp is slow (tens of microseconds a call), so it is called only when this module builds its
table; the ODE right-hand side and the sweeps use np.interp on the table.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np
from CoolProp.CoolProp import PropsSI

P_ATM_Pa = 101325.0
TABLE_STEP_K = 2.0
TABLE_T_K = np.arange(220.0, 602.0, TABLE_STEP_K)


@lru_cache(maxsize=1)
def air_table() -> dict[str, np.ndarray]:
    """Conductivity (W/m K), kinematic viscosity (m^2/s) and Prandtl number of air at 1 atm."""
    k = np.array([PropsSI("L", "T", T, "P", P_ATM_Pa, "Air") for T in TABLE_T_K])
    mu = np.array([PropsSI("V", "T", T, "P", P_ATM_Pa, "Air") for T in TABLE_T_K])
    rho = np.array([PropsSI("D", "T", T, "P", P_ATM_Pa, "Air") for T in TABLE_T_K])
    pr = np.array([PropsSI("Prandtl", "T", T, "P", P_ATM_Pa, "Air") for T in TABLE_T_K])
    return {"T_K": TABLE_T_K, "k_W_mK": k, "nu_m2_s": mu / rho, "Pr": pr}


def air_properties(T_film_K):
    """Air properties at the film temperature T_film_K (K), by linear interpolation in the table
    (held at the table's ends outside it).

    Returns (k W/(m K), nu m^2/s, Pr, beta 1/K); beta = 1/T for an ideal gas.
    """
    table = air_table()
    T = np.minimum(np.maximum(T_film_K, TABLE_T_K[0]), TABLE_T_K[-1])
    return (np.interp(T, TABLE_T_K, table["k_W_mK"]), np.interp(T, TABLE_T_K, table["nu_m2_s"]),
            np.interp(T, TABLE_T_K, table["Pr"]), 1.0 / T)
