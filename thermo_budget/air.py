"""Air at atmospheric pressure: properties tabulated from CoolProp and interpolated.

The table (`data/air_1atm.csv`, 220-600 K every 2 K) is written from CoolProp by
`python tools/make_air_table.py` and shipped with the package, so a run never loads
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
    columns = _stacked_columns()
    # fmin/fmax: a NaN film temperature reads the table's first row (the NaN stays in dT downstream)
    T = np.fmin(np.fmax(T_film_K, TABLE_T_K[0]), TABLE_T_K[-1])
    x = (T - TABLE_T_K[0]) / TABLE_STEP_K
    i = np.minimum(x.astype(int), TABLE_T_K.size - 2)     # the interval holding T (x >= 0)
    f = x - i
    low, high = columns[:, i], columns[:, i + 1]
    k, nu, pr = low + f * (high - low)
    return k, nu, pr, 1.0 / T


@lru_cache(maxsize=1)
def _stacked_columns() -> np.ndarray:
    """(3, rows) k, nu and Pr of the table, for one gather per lookup."""
    table = air_table()
    return np.stack([table["k_W_mK"], table["nu_m2_s"], table["Pr"]])
