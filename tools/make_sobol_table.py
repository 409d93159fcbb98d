"""Write the band's sample points the package ships (`thermo_budget/data/sobol_normals.npz`) from scipy.

    python tools/make_sobol_table.py          # rewrite the table
    python tools/make_sobol_table.py --check  # exit 1 if the shipped table differs from scipy

For each number of active uncertain factors d = 1..7, the first TABLE_POINTS points of the scrambled
Sobol sequence (`scipy.stats.qmc.Sobol(d, scramble=True, seed=SOBOL_SEED)`) through the normal
quantile function (`scipy.stats.norm.ppf`). uncertainty.standard_normals reads them, so that a run
does not spend about a second importing scipy.stats for points that never change; it asks scipy only
for more points than the table holds. tests/test_uncertainty.py regenerates the table and compares.
"""
from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # the checkout's package, run as a script

import argparse
import io
import sys

import numpy as np

from thermo_budget.inputs.uncertainty import FACTORS, SOBOL_SEED, SOBOL_TABLE_PATH, SOBOL_TABLE_POINTS, sobol_normals_from_scipy


def table_arrays() -> dict[str, np.ndarray]:
    """{"d1": (TABLE_POINTS, 1), ..., "d7": (TABLE_POINTS, 7)} standard normal points, from scipy."""
    return {f"d{d}": sobol_normals_from_scipy(d, SOBOL_TABLE_POINTS, SOBOL_SEED) for d in range(1, len(FACTORS) + 1)}


def table_bytes(arrays: dict[str, np.ndarray]) -> bytes:
    buffer = io.BytesIO()
    np.savez(buffer, **arrays)
    return buffer.getvalue()


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python tools/make_sobol_table.py")
    parser.add_argument("--check", action="store_true", help="compare the shipped table with scipy instead")
    args = parser.parse_args(argv)
    arrays = table_arrays()
    if args.check:
        with np.load(SOBOL_TABLE_PATH) as shipped:
            same = set(shipped.files) == set(arrays) and all(np.array_equal(shipped[k], v) for k, v in arrays.items())
        print("the shipped table matches scipy" if same else f"{SOBOL_TABLE_PATH} differs from scipy: rewrite it")
        return 0 if same else 1
    SOBOL_TABLE_PATH.write_bytes(table_bytes(arrays))
    print(f"wrote {SOBOL_TABLE_PATH} ({len(arrays)} arrays of {SOBOL_TABLE_POINTS} points)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
