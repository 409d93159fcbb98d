"""The band and the plan in words, in the scenario's units: for the command line's summary and the page."""
from __future__ import annotations

from .units import to_display, unit_label

# answer key -> (label, display kind, SI scale from the report's unit, digits)
_SIZES = {"min_wait_s": ("minimum wait", None, 1.0, 0),
          "cooler_required_W_per_K": ("cooler", "conductance", 1.0, 1),
          "min_oil_volume_L": ("smallest oil volume", "volume", 1e-3, 2)}


def _value(value, kind, scale, digits, system) -> str:
    if value is None:
        return "none suffices"
    if kind is None:
        return f"{value:.{digits}f} s"
    return f"{to_display(value * scale, kind, system):.{digits}f} {unit_label(kind, system)}"


def _range(band, kind, scale, digits, system) -> str:
    if band is None or band["p10"] == band["p90"]:
        return ""
    low = _value(band["p10"], kind, scale, digits, system)
    high = "beyond reach" if band["p90"] is None else _value(band["p90"], kind, scale, digits, system)
    return f" (likely {low.split(' ')[0]}-{high})" if band["p10"] is not None else f" (likely up to {high})"


def pulls_phrase(result: dict) -> str:
    """'26 pulls before the limit (likely 21-34)', or the planned session's count where the cadence is
    sustainable or uncounted."""
    bands = result.get("bands") or {}
    share = result.get("sustainable_share")
    if result.get("sustainable") and share is not None:
        band = bands.get("runs_before_limit") or {}
        text = f"the cadence is sustainable in {100 * share:.0f} % of cases"
        return text + (f"; the others cross after {band['p10']} pulls or more" if band.get("p10") is not None else "")
    key = "runs_before_limit" if result.get("runs_before_limit") is not None else "pulls_under_limit"
    band = bands.get(key)
    text = f"{result[key]} pulls" + (" before the limit" if key == "runs_before_limit" else " of the planned session under the limit")
    if band and band["p10"] is not None and band["p90"] is not None and band["p10"] != band["p90"]:
        text += f" (likely {band['p10']}-{band['p90']})"
    return text


def plan_phrase(result: dict) -> str:
    """'plan 21 pulls to stay under 80.0 °C with 90 % confidence'."""
    plan = result.get("plan_at_confidence") or {}
    key = ("runs_before_limit" if result.get("runs_before_limit") is not None or plan.get("runs_before_limit") is not None
           else "pulls_under_limit")
    if plan.get(key) is None:
        return ""
    limit = f"{to_display(result['limit_C'] + 273.15, 'temperature', result['units']):.1f} " \
            f"{unit_label('temperature', result['units'])}"
    return f"plan {plan[key]} pulls to stay under {limit} with {100 * result['confidence']:.0f} % confidence"


def summary_lines(result: dict) -> list[str]:
    """The band lines of the readable summary (empty where the band is off)."""
    if "bands" not in result or not result.get("uncertainty", {}).get("samples"):
        return []
    u, c = result["units"], f"{100 * result['confidence']:.0f} %"
    lines = [f"  band (P10-P90)   {pulls_phrase(result)}; {plan_phrase(result)}"]
    peak = result["bands"]["peak_C"]
    lines.append(f"  peak band        {_value(peak['p10'] + 273.15, 'temperature', 1.0, 1, u)} to "
                 f"{_value(peak['p90'] + 273.15, 'temperature', 1.0, 1, u)}")
    for key, (label, kind, scale, digits) in _SIZES.items():
        if result.get(key) is None:
            continue
        planned = result["plan_at_confidence"].get(key)
        lines.append(f"  {label:<16} {_value(result[key], kind, scale, digits, u)}"
                     f"{_range(result['bands'][key], kind, scale, digits, u)}; at {c} confidence "
                     f"{_value(planned, kind, scale, digits, u)}")
    if result.get("band_advice"):
        lines.append(f"  what moves it    {result['band_advice']}")
    return lines
