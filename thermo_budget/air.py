"""Air at atmospheric pressure: properties tabulated from CoolProp and interpolated.

The table (`data/air_1atm.csv`, 220-600 K every 2 K) is written from CoolProp by
`python -m thermo_budget.make_air_table` and shipped with the package, so a run never loads
CoolProp (seconds of start-up); tests/test_air.py regenerates it and checks it against CoolProp.
The network reads it in compiled code (air_at); numpy callers use air_properties.
"""
from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import numpy as np

from .compiled import kernel

P_ATM_Pa = 101325.0
TABLE_STEP_K = 2.0
TABLE_FIRST_K = 220.0
TABLE_T_K = np.arange(TABLE_FIRST_K, 602.0, TABLE_STEP_K)
TABLE_PATH = Path(__file__).resolve().parent / "data" / "air_1atm.csv"
TABLE_COLUMNS = ("T_K", "k_W_mK", "nu_m2_s", "Pr")


@lru_cache(maxsize=1)
def air_table() -> dict[str, np.ndarray]:
    """Conductivity (W/m K), kinematic viscosity (m^2/s) and Prandtl number of air at 1 atm."""
    rows = np.loadtxt(TABLE_PATH, delimiter=",", comments="#", skiprows=2)
    return {name: rows[:, i] for i, name in enumerate(TABLE_COLUMNS)}


def air_properties(T_film_K):
    """Air properties at the film temperature T_film_K (K, a float or an array), by linear
    interpolation in the table (held at the table's ends outside it; air_at).

    Returns (k W/(m K), nu m^2/s, Pr, beta 1/K); beta = 1/T for an ideal gas.
    """
    T = np.asarray(T_film_K, dtype=float)
    out = _air_many(np.ascontiguousarray(T.ravel()), air_columns())
    return tuple(row.reshape(T.shape) for row in out)


@kernel
def air_at(T_film_K, columns):
    """(k W/(m K), nu m^2/s, Pr, beta 1/K) of air at T_film_K from the table's columns (air_columns),
    linear between its rows, held at its ends; a NaN film temperature reads the first row (the NaN
    stays in the temperature difference downstream)."""
    T = T_film_K
    if not T >= TABLE_FIRST_K:
        T = TABLE_FIRST_K
    last = TABLE_FIRST_K + TABLE_STEP_K * (columns.shape[1] - 1)
    if T > last:
        T = last
    x = (T - TABLE_FIRST_K) / TABLE_STEP_K
    i = min(int(x), columns.shape[1] - 2)
    f = x - i
    k = columns[0, i] + f * (columns[0, i + 1] - columns[0, i])
    nu = columns[1, i] + f * (columns[1, i + 1] - columns[1, i])
    pr = columns[2, i] + f * (columns[2, i + 1] - columns[2, i])
    return k, nu, pr, 1.0 / T


@kernel
def _air_many(T_K, columns):
    out = np.empty((4, T_K.size))
    for j in range(T_K.size):
        out[0, j], out[1, j], out[2, j], out[3, j] = air_at(T_K[j], columns)
    return out


@lru_cache(maxsize=1)
def air_columns() -> np.ndarray:
    """(3, rows) k, nu and Pr of the table, the compiled network's argument (air_at)."""
    table = air_table()
    return np.ascontiguousarray(np.stack([table["k_W_mK"], table["nu_m2_s"], table["Pr"]]))
