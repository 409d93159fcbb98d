"""The verdict in words, in the scenario's units: one sentence and the fixes, for the command line and
the page alike (both read the same `verdict.Verdict`, so the three outputs agree)."""
from __future__ import annotations

import math

from ..display import OIL_TO_PLAN_DIGITS, decimals, format_temperature, shown_duration
from ..units import ZERO_CELSIUS_K, rounded_up_text, to_display, unit_label
from ..planning.fixes import Fix
from ..planning.verdict import Verdict

LIMIT_WHY = {"max_temperature": "the hottest you allow the oil",
             "min_viscosity": "the pump's thinnest oil",
             "return_line": "the return line's limit, for its hoses and seals"}
WORDS = {True: "FITS", False: "DOES NOT FIT"}
FIXES_TITLE = "any one of these alone makes the day fit (smallest change first)"
NO_FIX = "no single change of the waits, oil, cooler or pulls makes the day fit"


def _difference(kelvin: float, system: str) -> str:
    return f"{to_display(kelvin, 'temperature_difference', system):.1f} {unit_label('temperature_difference', system)}"


def _size(value_si: float, kind: str, system: str, digits: int) -> str:
    return f"{rounded_up_text(to_display(value_si, kind, system), digits)} {unit_label(kind, system)}"


def confidence_text(v: Verdict, band_on: bool = True) -> str:
    return f"at {100 * v.confidence:.0f} % confidence" if band_on else "by the model's point answer (band off)"


def sentence(v: Verdict, pulls_planned: int, system: str, band_on: bool = True) -> str:
    """'fits: 20 of 20 pulls, peak 71 °C, 3.0 K under the limit of 74 °C (...), at 90 % confidence' or
    'does not fit: pull 15 of 20 crosses 74 °C (the pump's thinnest oil), at 90 % confidence'."""
    return f"{WORDS[v.fits].lower()}: {clause(v, pulls_planned, system, band_on)}"


def clause(v: Verdict, pulls_planned: int, system: str, band_on: bool = True) -> str:
    """The sentence after its first word ("fits" or "does not fit"), for the page's badge."""
    limit = format_temperature(ZERO_CELSIUS_K + v.limit_C, system)
    why = LIMIT_WHY.get(v.governing_limit, v.governing_limit)
    where = "return-line oil" if v.governing_limit == "return_line" else "peak"
    if v.fits:
        if v.peak_C is None:
            return f"{pulls_planned} of {pulls_planned} pulls, {confidence_text(v, band_on)}"
        return (f"{pulls_planned} of {pulls_planned} pulls, {where} {format_temperature(ZERO_CELSIUS_K + v.peak_C, system)}, "
                f"{_difference(v.limit_C - v.peak_C, system)} under the limit of {limit} ({why}), "
                f"{confidence_text(v, band_on)}")
    return (f"pull {v.first_pull_over_limit} of {pulls_planned} crosses {limit} ({why}), "
            f"{confidence_text(v, band_on)}")


def fix_text(fix: Fix, system: str) -> str:
    """One fix as an instruction, e.g. 'wait 6 min 27 s after every pull'."""
    if fix.kind == "wait":
        return f"wait {shown_duration(fix.value, round_up=True)} after every pull"
    if fix.kind == "oil_volume":
        tank = ("" if fix.tank_L is None else
                f", in a tank of the same shape of {_size(fix.tank_L / 1000.0, 'volume', system, decimals('oil_volume', system))}")
        return f"use {_size(fix.value / 1000.0, 'volume', system, OIL_TO_PLAN_DIGITS)} of oil{tank}"
    if fix.kind == "cooler":
        return f"fit an oil cooler of {_size(fix.value, 'conductance', system, 1)} of ETD (its total rating)"
    if fix.kind == "fewer_pulls":
        return f"stop after {fix.value:.0f} pulls"
    shorter = math.floor(fix.value * 10 + 1e-9) / 10       # rounded down: a longer pull might not fit
    return f"shorten the pulls to {shorter:.1f} s (the longest; every pull by the same fraction)"


def fix_lines(v: Verdict, system: str) -> list[str]:
    """The fixes, smallest change first, each alone enough."""
    return [fix_text(fix, system) for fix in v.fixes]


def summary_lines(result) -> list[str]:
    """The verdict's lines at the top of `run`'s text (result: a results.Report)."""
    v = result.verdict
    if v is None:
        return []
    band_on = bool((result.band.uncertainty or {}).get("samples"))
    lines = [f"  VERDICT          {sentence(v, result.pulls_planned, result.units, band_on)}"]
    if v.fixes:
        lines.append(f"  {FIXES_TITLE}:")
        lines += [f"    - {text}" for text in fix_lines(v, result.units)]
    elif not v.fits:
        lines.append(f"  {NO_FIX}")
    return lines
