"""How many samples the band needs: `python tools/band_convergence.py [SCENARIO]`.

Prints P10 / P50 / P90 of the pull count before the limit, of the session's peak, and of the smallest
oil volume, for growing sample counts of the same Sobol sequence, against a large reference (4,096
samples for the count and the peak, 256 for the volume). The table of sample counts in docs/method.md comes
from it; bands.N_SAMPLES and N_SIZING_SAMPLES are chosen by it.
"""
from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # the checkout's package, run as a script

import argparse

import numpy as np

from thermo_budget.planning.bands import order_statistic, sample_answers
from thermo_budget.planning.answers import report
from thermo_budget.inputs.scenario import DEFAULT_SCENARIO, load_scenario

COUNTS = (16, 32, 64, 128, 256, 4096)
SIZING_COUNTS = (16, 32, 64, 128, 256)


def _quantiles(values, whole: bool) -> str:
    if whole:
        q = [order_statistic(values, p) for p in (0.1, 0.5, 0.9)]
        return " / ".join("none" if not np.isfinite(v) else f"{v:.0f}" for v in q)
    return " / ".join(f"{v:.2f}" for v in np.quantile(values, [0.1, 0.5, 0.9]))


def main(argv=None):
    parser = argparse.ArgumentParser(prog="python tools/band_convergence.py")
    parser.add_argument("scenario", nargs="?", default=str(DEFAULT_SCENARIO))
    args = parser.parse_args(argv)
    scenario = load_scenario(args.scenario)
    point = report(scenario.changed(**{"uncertainty.enabled": False})).to_json()   # the point answers' keys
    print(f"{scenario.name}: point answers {point['runs_before_limit']} pulls before the limit, "
          f"peak {point['peak_C']} degC, smallest oil volume {point['min_oil_volume_L']} L")
    print("| samples | pulls before the limit | peak °C | sizing samples | smallest oil volume L |")
    print("|---|---|---|---|---|")
    for n in COUNTS:
        sizing = n if n in SIZING_COUNTS else 0
        answers = sample_answers(scenario, point if sizing else {**point, "min_oil_volume_L": None,
                                                                 "min_wait_s": None,
                                                                 "cooler_required_W_per_K": None}, n, max(sizing, 1))
        volume = _quantiles(answers["min_oil_volume_L"], False) if sizing and "min_oil_volume_L" in answers else ""
        print(f"| {n:,} | {_quantiles(answers['runs_before_limit'], True)} | {_quantiles(answers['peak_C'], False)} "
              f"| {sizing or ''} | {volume} |", flush=True)


if __name__ == "__main__":
    main()
