"""The page's headline as cards: each planning answer of report() with its label, its value, its
unit on a line of its own and a line of detail, in the page's unit system.

Pure functions, no Streamlit: the page converts units here and computes nothing else, so a test
can hold every card against report(). Where the report carries the uncertainty band (`bands`,
`confidence`, `plan_at_confidence`), the pull count shows it.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from .display import shown, shown_celsius, shown_duration
from .planning import MAX_PULLS
from .results import Report
from .units import ZERO_CELSIUS_K

LIMIT_NAMES = {"bulk": "the bulk oil's limit", "return_line": "the return line's limit (hoses and seals)"}


@dataclass(frozen=True)
class Card:
    """One headline card. value is the figure alone (or a short phrase), unit its symbol."""
    key: str
    label: str
    value: str
    unit: str = ""
    details: tuple = field(default_factory=tuple)
    main: bool = False
    help: str = ""


def _number(value_si: float, quantity: str, system: str, digits: int | None = None) -> tuple[str, str]:
    """(the figure, its unit symbol), e.g. ("18.0", "BTU/hr/°F")."""
    text = shown(value_si, quantity, system, digits)
    number, _, unit = text.partition(" ")
    return number, unit


def _temperature(celsius: float, system: str) -> tuple[str, str]:
    return _number(celsius + ZERO_CELSIUS_K, "temperature", system)


def _band_text(band) -> str | None:
    """"likely 22–31" from a band {"p10", "p50", "p90"} ("likely 22 or more" where its upper end is
    unbounded; None where there is none to show)."""
    if not isinstance(band, dict) or band.get("p10") is None:
        return None
    low, high = band["p10"], band["p90"]
    if high is None:
        return f"likely {low} or more"
    return None if low == high else f"likely {low}–{high}"   # a band of one value says nothing more


def _confidence_text(answers: Report) -> str:
    confidence = answers.band.confidence
    return f"{confidence * 100:.0f} %" if isinstance(confidence, (int, float)) else "the chosen"


def pulls_card(answers: Report, system: str) -> Card:
    runs = answers.runs_before_limit
    if answers.sustainable:
        value, unit = "All day", ""
    elif runs is None:
        value, unit = f"Over {MAX_PULLS:,}", "pulls"
    else:
        value, unit = f"{runs}", "pull" if runs == 1 else "pulls"
    bands = answers.band.bands or {}
    if not (answers.band.uncertainty or {}).get("samples", 1):
        bands = {}   # the band is off: it only repeats the model's figure
    details = []
    band = _band_text(bands.get("runs_before_limit"))
    if band and runs is not None:
        unit = f"{unit} ({band})"
    plan = answers.band.plan_at_confidence
    planned_count = plan.get("runs_before_limit") if isinstance(plan, dict) else plan
    if isinstance(planned_count, int) and runs is not None and bands:
        details.append(f"Plan {planned_count} pulls at {_confidence_text(answers)} confidence.")
    under = f"Planned: {answers.pulls_under_limit} of {answers.pulls_planned} pulls stay under"
    session_band = _band_text(bands.get("pulls_under_limit"))
    details.append(under + (f" ({session_band})." if session_band else "."))
    stopped = answers.runs_stopped_by
    if stopped in LIMIT_NAMES and runs is not None:
        limit_C = answers.limit_C if stopped == "bulk" else answers.return_line_limit_C
        details.append(f"The count stops at {LIMIT_NAMES[stopped]}, {shown_celsius(limit_C, system)}.")
    elif answers.sustainable:
        details.append("This cadence settles under the limit.")
    return Card("pulls", "Pulls before the limit", value, unit, tuple(details), main=True,
                help="Repeating your pull and wait from the starting temperature until a pull would take the "
                     "oil over a limit: the bulk oil's, or the return line's where you gave one.")


def hottest_card(answers: Report, system: str) -> Card:
    if answers.peak_C is None:   # past the range of the model's oil data: no figure that looks real
        return Card("hottest", "Hottest oil, planned session", "Beyond the model", "",
                    ("Far past the limit: see the caution above.",
                     f"Bulk limit: {shown_celsius(answers.limit_C, system)}."),
                    help="The bulk oil would pass the range where the model's oil data hold, so no peak is given.")
    value, unit = _temperature(answers.peak_C, system)
    details = [f"Return line: {shown_celsius(answers.peak_return_C, system)}"
               + (f" (limit {shown_celsius(answers.return_line_limit_C, system)})."
                  if answers.return_line_limit_C is not None else ".")]
    details.append(f"Bulk limit: {shown_celsius(answers.limit_C, system)}.")
    return Card("hottest", "Hottest oil, planned session", value, f"{unit} bulk", tuple(details),
                help="Highest temperature of the oil in the tank over the planned session, and of the oil "
                     "returning from the valve (bulk plus the valve's heat in the passing flow).")


def time_card(answers: Report, system: str) -> Card:
    ttl = answers.time_to_limit_s
    value = "Not reached" if ttl is None else shown_duration(ttl)
    details = ("In the planned session.",) if ttl is None else ("From the start of the first pull.",)
    return Card("time", "Time to the limit", value, "", details,
                help="In the planned session, from the start of the first pull.")


def wait_card(answers: Report, planned_wait_s: float, system: str) -> Card:
    wait = answers.min_wait_s
    value = "No wait is enough" if wait is None else ("None needed" if wait == 0 else shown_duration(wait))
    return Card("wait", "Wait between pulls", value, "", (f"You planned {shown_duration(planned_wait_s)}.",),
                help="Shortest wait after every pull that lets the whole planned session finish under the "
                     "limits, without a cooler.")


def cooler_card(answers: Report, system: str) -> Card:
    need = answers.cooler_required_W_per_K
    if not answers.cooler_needed:
        value, unit = "Not needed", ""
    elif need is None:
        value, unit = "None is enough", ""
    else:
        value, unit = _number(need, "conductance", system)
        unit = f"{unit} of ETD"
    sustained = answers.cooler_required_sustained_W_per_K
    all_day = ("no cooler is enough" if sustained is None else "none" if sustained == 0
               else shown(sustained, "conductance", system))
    return Card("cooler", "Cooler for the plan", value, unit, (f"To run all day: {all_day}.",),
                help="Smallest oil cooler for the planned session with your tank and waits, as heat removed "
                     "per degree of ETD (entering temperature difference: oil in minus air).")


def tank_card(answers: Report, oil_volume_m3: float, system: str) -> Card:
    smallest = answers.min_oil_volume_L
    if smallest is None:
        value, unit = "Not possible", ""
    else:
        value, unit = _number(smallest / 1000.0, "oil_volume", system)
        unit = f"{unit} of oil"
    return Card("tank", "Smallest tank", value, unit, (f"You have {shown(oil_volume_m3, 'oil_volume', system)}.",),
                help="Least oil that finishes the planned session without a cooler, in a tank of the same "
                     "shape scaled to fit.")


def ageing_card(answers: Report, system: str) -> Card:
    hours = answers.oil_ageing_equivalent_h
    reference = shown_celsius(answers.oil_ageing_reference_C, system)
    step = "10 K" if system == "SI" else "18 °F"
    details = [f"Oxidation doubling per {step}: a rule of thumb for comparing days."]
    if answers.peak_C is None or answers.peak_C > 100.0:
        details.append(f"Past {shown_celsius(100.0, system)} the rule understates the ageing.")
    return Card("ageing", "Oil ageing today", f"{hours:.2f}", f"h as at {reference}", tuple(details),
                help="Equivalent hours at 60 °C that age the oil as much as this session does, by the rule that "
                     "the oxidation rate doubles per 10 K. Common practice, no single source; a relative figure, "
                     "not a life prediction; roughly valid from 50 to 100 °C.")


def headroom_card(answers: Report, system: str) -> Card:
    value, unit = _number(answers.headroom_at_limit_L / 1000.0, "oil_volume", system)
    above = shown(answers.headroom_at_limit_m, "thickness", system)
    return Card("headroom", "Head room at the limit", value, f"{unit} free",
                (f"The hot oil stands {above} below the tank top.",),
                help="Air space left in the tank when the oil has expanded at the limit temperature "
                     "(oil volume at 15 °C and the expansion coefficient).")


def headline_cards(answers: Report, oil_volume_m3: float, planned_wait_s: float, system: str) -> list[Card]:
    """Every headline card, most important first."""
    return [pulls_card(answers, system), hottest_card(answers, system), time_card(answers, system),
            wait_card(answers, planned_wait_s, system), cooler_card(answers, system),
            tank_card(answers, oil_volume_m3, system), ageing_card(answers, system), headroom_card(answers, system)]

