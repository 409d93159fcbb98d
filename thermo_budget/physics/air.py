"""Air properties: tabulated from CoolProp and interpolated.

The table (`data/air_1atm.csv`, 220-600 K every 2 K) is written from CoolProp by
`python tools/make_air_table.py` and shipped with the package, so a run never loads
CoolProp (seconds of start-up); tests/test_air.py regenerates it and checks it against CoolProp.
The network reads the columns in compiled code (air_at); numpy callers use air_properties.

Air at another pressure (a stand at altitude) or with water vapour: `air_columns` computes the same
table once per scenario from CoolProp's humid-air functions (HAPropsSI), at the scenario's
pressure and the humidity ratio of its ambient air at the given relative humidity; only then is
CoolProp imported. Standard air (101325 Pa, dry) is the shipped table.
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
TABLE_PATH = Path(__file__).resolve().parent.parent / "data" / "air_1atm.csv"
TABLE_COLUMNS = ("T_K", "k_W_mK", "nu_m2_s", "Pr")


@lru_cache(maxsize=1)
def air_table() -> dict[str, np.ndarray]:
    """Conductivity (W/m K), kinematic viscosity (m^2/s) and Prandtl number of air at 1 atm."""
    rows = np.loadtxt(TABLE_PATH, delimiter=",", comments="#", skiprows=2)
    return {name: rows[:, i] for i, name in enumerate(TABLE_COLUMNS)}


def air_properties(T_film_K, columns=None):
    """Air properties at the film temperature T_film_K (K, a float or an array), by linear
    interpolation in the table (held at the table's ends outside it; air_at). columns : the (3, rows)
    k, nu, Pr of another air on the same temperatures (air_columns), or None for standard air.

    Returns (k W/(m K), nu m^2/s, Pr, beta 1/K); beta = 1/T for an ideal gas.
    """
    T = np.asarray(T_film_K, dtype=float)
    out = _air_many(np.ascontiguousarray(T.ravel()), air_or_standard(columns))
    return tuple(row.reshape(T.shape) for row in out)


@kernel
def air_at(T_film_K, columns):
    """(k W/(m K), nu m^2/s, Pr, beta 1/K) of air at T_film_K from the table's columns
    (air_or_standard), linear between its rows, held at its ends; a NaN film temperature reads the
    first row (the NaN stays in the temperature difference downstream)."""
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
def standard_air_columns() -> np.ndarray:
    """(3, rows) k, nu and Pr of the shipped table (standard air), the compiled network's argument."""
    table = air_table()
    return np.ascontiguousarray(np.stack([table["k_W_mK"], table["nu_m2_s"], table["Pr"]]))


def air_or_standard(columns) -> np.ndarray:
    """The columns a rig's air reads (Rig.air_columns), the shipped table's where that is None."""
    return standard_air_columns() if columns is None else columns


def standard_pressure_Pa(altitude_m):
    """Pressure of the standard atmosphere at an altitude, Pa: p = p0 (1 - 2.25577e-5 h)^5.25588, h in
    m, to 11 km (ICAO Standard Atmosphere, ISO 2533:1975, troposphere).

    >>> round(standard_pressure_Pa(1600.0))
    83524
    """
    return P_ATM_Pa * (1.0 - 2.25577e-5 * altitude_m) ** 5.25588


def is_standard_air(pressure_Pa: float, relative_humidity: float) -> bool:
    """True where the shipped table holds: dry air at 101325 Pa."""
    return pressure_Pa == P_ATM_Pa and relative_humidity == 0.0


@lru_cache(maxsize=8)
def air_columns(pressure_Pa: float, relative_humidity: float, ambient_K: float):
    """(3, rows) k W/(m K), nu m^2/s and Pr of moist air on TABLE_T_K, or None for standard air.

    CoolProp's humid-air functions (HAPropsSI, after Herrmann, Kretzschmar and Gatley 2009, ASHRAE
    RP-1485): the humidity ratio W of the ambient air at relative_humidity (0 to 1) and ambient_K,
    held as the air warms in the film (heating does not change W); then at each temperature of the
    table k ("K"), the dynamic viscosity ("M"), the specific volume per kg of dry air ("Vha"; the
    density is (1 + W) / Vha) and the specific heat per kg of humid air ("cp_ha"); Pr = mu cp / k.
    Worked out once per scenario (build_rig), in about 0.3 s plus CoolProp's import.
    """
    if is_standard_air(pressure_Pa, relative_humidity):
        return None
    from CoolProp.HumidAirProp import HAPropsSI   # here: seconds of import, only for non-standard air
    W = HAPropsSI("W", "T", ambient_K, "P", pressure_Pa, "R", relative_humidity) if relative_humidity > 0 else 0.0
    columns = np.empty((3, TABLE_T_K.size))
    for i, T in enumerate(TABLE_T_K):
        T = float(T)
        k = HAPropsSI("K", "T", T, "P", pressure_Pa, "W", W)
        mu = HAPropsSI("M", "T", T, "P", pressure_Pa, "W", W)
        rho = (1.0 + W) / HAPropsSI("Vha", "T", T, "P", pressure_Pa, "W", W)
        cp = HAPropsSI("cp_ha", "T", T, "P", pressure_Pa, "W", W)
        columns[:, i] = k, mu / rho, mu * cp / k
    columns = np.ascontiguousarray(columns)
    return columns
