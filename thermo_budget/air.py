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
    """Air properties at the film temperature T_film_K (K), by linear interpolation in the table.

    Returns (k W/(m K), nu m^2/s, Pr, beta 1/K); beta = 1/T for an ideal gas.
    """
    columns = _stacked_table()
    T = np.clip(np.asarray(T_film_K, dtype=float), TABLE_T_K[0], TABLE_T_K[-1])
    position = (T - TABLE_T_K[0]) / TABLE_STEP_K          # the grid is uniform
    index = np.minimum(position.astype(int), TABLE_T_K.size - 2)
    weight = (position - index)[..., None]
    values = columns[index] * (1.0 - weight) + columns[index + 1] * weight
    return values[..., 0], values[..., 1], values[..., 2], 1.0 / T


@lru_cache(maxsize=1)
def _stacked_table() -> np.ndarray:
    table = air_table()
    return np.stack([table["k_W_mK"], table["nu_m2_s"], table["Pr"]], axis=-1)
