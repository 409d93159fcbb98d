"""Air at atmospheric pressure: properties tabulated from CoolProp and interpolated.

The table (`data/air_1atm.csv`, 220-600 K every 2 K) is written from CoolProp by
`python -m thermo_budget.make_air_table` and shipped with the package, so a run never loads
CoolProp (seconds of start-up); tests/test_air.py regenerates it and checks it against CoolProp.
The ODE right-hand side and the sweeps use np.interp on the table.
"""
from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import numpy as np

P_ATM_Pa = 101325.0
TABLE_STEP_K = 2.0
TABLE_T_K = np.arange(220.0, 602.0, TABLE_STEP_K)
TABLE_PATH = Path(__file__).resolve().parent / "data" / "air_1atm.csv"
TABLE_COLUMNS = ("T_K", "k_W_mK", "nu_m2_s", "Pr")


@lru_cache(maxsize=1)
def air_table() -> dict[str, np.ndarray]:
    """Conductivity (W/m K), kinematic viscosity (m^2/s) and Prandtl number of air at 1 atm."""
    rows = np.loadtxt(TABLE_PATH, delimiter=",", comments="#", skiprows=2)
    return {name: rows[:, i] for i, name in enumerate(TABLE_COLUMNS)}


def air_properties(T_film_K):
    """Air properties at the film temperature T_film_K (K), by linear interpolation in the table
    (held at the table's ends outside it).

    Returns (k W/(m K), nu m^2/s, Pr, beta 1/K); beta = 1/T for an ideal gas.
    """
    table = air_table()
    T = np.minimum(np.maximum(T_film_K, TABLE_T_K[0]), TABLE_T_K[-1])
    return (np.interp(T, TABLE_T_K, table["k_W_mK"]), np.interp(T, TABLE_T_K, table["nu_m2_s"]),
            np.interp(T, TABLE_T_K, table["Pr"]), 1.0 / T)
