"""Write the air-property table the package ships (`thermo_budget/data/air_1atm.csv`) from CoolProp.

    python tools/make_air_table.py          # rewrite the table
    python tools/make_air_table.py --check  # exit 1 if the shipped table differs from CoolProp

CoolProp is the source; the package reads the table (air.py), so that a run does not spend seconds
loading CoolProp's fluid library for a table that never changes. tests/test_air.py regenerates it
and compares it with the shipped file.
"""
from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # the checkout's package, run as a script

import argparse
import sys

import numpy as np

from thermo_budget.physics.air import P_ATM_Pa, TABLE_COLUMNS, TABLE_PATH, TABLE_T_K


def coolprop_table(T_K=TABLE_T_K) -> np.ndarray:
    """Rows of (T K, k W/(m K), nu m^2/s, Pr) of air at 1 atm, straight from CoolProp."""
    from CoolProp.CoolProp import PropsSI
    rows = []
    for T in T_K:
        T = float(T)
        k = PropsSI("L", "T", T, "P", P_ATM_Pa, "Air")
        nu = PropsSI("V", "T", T, "P", P_ATM_Pa, "Air") / PropsSI("D", "T", T, "P", P_ATM_Pa, "Air")
        rows.append((T, k, nu, PropsSI("Prandtl", "T", T, "P", P_ATM_Pa, "Air")))
    return np.array(rows)


def table_text(rows: np.ndarray) -> str:
    """The CSV text of the table: a comment naming the source, a header, full-precision rows."""
    lines = ["# Air at 101325 Pa from CoolProp (PropsSI: L, V / D, Prandtl); written by "
             "python tools/make_air_table.py. Do not edit by hand.",
             ",".join(TABLE_COLUMNS)]
    lines += [",".join(f"{v:.17g}" for v in row) for row in rows]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python tools/make_air_table.py")
    parser.add_argument("--check", action="store_true", help="compare with the shipped table, write nothing")
    args = parser.parse_args(argv)
    text = table_text(coolprop_table())
    if args.check:
        same = TABLE_PATH.read_text(encoding="utf-8") == text
        print("the shipped air table equals CoolProp's" if same else "the shipped air table differs from CoolProp's")
        return 0 if same else 1
    TABLE_PATH.write_text(text, encoding="utf-8")
    print(f"wrote {TABLE_PATH}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
