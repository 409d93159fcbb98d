"""The band and the plan in words, in the scenario's units: for the command line's summary and the page."""
from __future__ import annotations

from typing import TYPE_CHECKING

from ..display import OIL_TO_PLAN_DIGITS
from ..units import ZERO_CELSIUS_K, rounded_up_text, to_display, unit_label

if TYPE_CHECKING:
    from .results import Report

# answer key -> (label, display kind, SI scale from the report's unit, digits)
_SIZES = {"min_wait_s": ("minimum wait", None, 1.0, 0),
          "cooler_required_W_per_K": ("cooler", "conductance", 1.0, 1),
          "min_oil_volume_L": ("smallest oil volume", "volume", 1e-3, OIL_TO_PLAN_DIGITS)}


def _value(value, kind, scale, digits, system, up: bool = False) -> str:
    """A size in the user's units; up=True: rounded up (a size to plan with, as the verdict's fixes)."""
    if value is None:
        return "none suffices"
    shown = value if kind is None else to_display(value * scale, kind, system)
    text = rounded_up_text(shown, digits) if up else f"{shown:.{digits}f}"
    return f"{text} s" if kind is None else f"{text} {unit_label(kind, system)}"


def _range(band, kind, scale, digits, system) -> str:
    if band is None or band["p10"] == band["p90"]:
        return ""
    low = _value(band["p10"], kind, scale, digits, system)
    high = "beyond reach" if band["p90"] is None else _value(band["p90"], kind, scale, digits, system)
    return f" (likely {low.split(' ')[0]}-{high})" if band["p10"] is not None else f" (likely up to {high})"


def pulls_phrase(result: Report) -> str:
    """'26 pulls before the limit (likely 21-34)' ('likely 21 or more' where more than a tenth of the
    samples never reach the limit), 'the cadence is sustainable in 58 % of cases' where it is by the
    model, or the planned session's count where the cadence is uncounted."""
    bands = result.band.bands or {}
    share = result.band.sustainable_share
    if result.sustainable and share is not None:
        band = bands.get("runs_before_limit") or {}
        text = f"the cadence is sustainable in {100 * share:.0f} % of cases"
        return text + (f"; the others cross after {band['p10']} pulls or more" if band.get("p10") is not None else "")
    key = "runs_before_limit" if result.runs_before_limit is not None else "pulls_under_limit"
    band = bands.get(key)
    text = f"{getattr(result, key)} pulls" + (" before the limit" if key == "runs_before_limit" else " of the planned session under the limit")
    if band and band["p10"] is not None and band["p90"] is not None and band["p10"] != band["p90"]:
        text += f" (likely {band['p10']}-{band['p90']})"
    elif band and band["p10"] is not None and band["p90"] is None:   # the upper tenth never reaches the limit
        text += f" (likely {band['p10']} or more)"
    return text


def plan_phrase(result: Report) -> str:
    """'plan 21 pulls to stay under 80.0 °C with 90 % confidence'."""
    plan = result.band.plan_at_confidence or {}
    key = ("runs_before_limit" if result.runs_before_limit is not None or plan.get("runs_before_limit") is not None
           else "pulls_under_limit")
    if plan.get(key) is None:
        return ""
    limit = f"{to_display(result.limit_C + ZERO_CELSIUS_K, 'temperature', result.units):.1f} " \
            f"{unit_label('temperature', result.units)}"
    return f"plan {plan[key]} pulls to stay under {limit} with {100 * result.band.confidence:.0f} % confidence"


def summary_lines(result: Report) -> list[str]:
    """The band lines of the readable summary (empty where the band is off)."""
    if not (result.band.uncertainty or {}).get("samples"):
        return []
    u, c = result.units, f"{100 * result.band.confidence:.0f} %"
    lines = [f"  band (P10-P90)   {pulls_phrase(result)}; {plan_phrase(result)}"]
    peak = result.band.bands["peak_C"]
    lines.append(f"  peak band        {_value(peak['p10'] + ZERO_CELSIUS_K, 'temperature', 1.0, 1, u)} to "
                 f"{_value(peak['p90'] + ZERO_CELSIUS_K, 'temperature', 1.0, 1, u)}")
    for key, (label, kind, scale, digits) in _SIZES.items():
        if getattr(result, key) is None:
            continue
        planned = result.band.plan_at_confidence.get(key)
        lines.append(f"  {label:<16} {_value(getattr(result, key), kind, scale, digits, u)}"
                     f"{_range(result.band.bands[key], kind, scale, digits, u)}; at {c} confidence "
                     f"{_value(planned, kind, scale, digits, u, up=True)}")
    if result.band.advice:
        lines.append(f"  what moves it    {result.band.advice}")
    return lines


def advice_sentence(ranking: list[dict], of_what: str = "the pull count") -> str:
    """What to measure first: the inputs that together explain at least 60 % of the spread."""
    if not ranking:
        return ""
    top, total = [], 0.0
    for row in ranking:
        top.append(row)
        total += row["share"]
        if total >= 0.6 or len(top) == 3:
            break
    from ..inputs.uncertainty import FACTOR_BY_KEY
    names = [FACTOR_BY_KEY[row["factor"]].label for row in top]
    what = names[0] if len(names) == 1 else ", the ".join(names[:-1]) + " and the " + names[-1]
    verb = "explains" if len(names) == 1 else "explain"
    measures = "; ".join(row["measure"] for row in top)
    return f"The {what} {verb} {100 * total:.0f} % of the spread in {of_what}: measure first {measures}."
