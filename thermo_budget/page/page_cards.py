"""The page's headline as cards: each planning answer of report() with its label, its value, its
unit on a line of its own and a line of detail, in the page's unit system.

Pure functions, no Streamlit: the page converts units here and computes nothing else, so a test
can hold every card against report(). Where the report carries the uncertainty band (`bands`,
`confidence`, `plan_at_confidence`), the pull count shows it.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from ..display import OIL_TO_PLAN_DIGITS, shown, shown_celsius, shown_duration
from ..planning.planning import MAX_PULLS
from ..planning.results import Report
from ..units import ZERO_CELSIUS_K

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
    small: str = ""     # small print under the value: the confidence and the median


def _number(value_si: float, quantity: str, system: str, digits: int | None = None, up: bool = False) -> tuple[str, str]:
    """(the figure, its unit symbol), e.g. ("18.0", "BTU/hr/°F"); up=True: rounded up (a size to plan with)."""
    text = shown(value_si, quantity, system, digits, up=up)
    number, _, unit = text.partition(" ")
    return number, unit


def _temperature(celsius: float, system: str) -> tuple[str, str]:
    return _number(celsius + ZERO_CELSIUS_K, "temperature", system)


def _confidence_text(answers: Report) -> str:
    confidence = answers.band.confidence
    return f"{confidence * 100:.0f} %" if isinstance(confidence, (int, float)) else "the chosen"


def band_on(answers: Report) -> bool:
    """The report carries a band of its own (the uncertainty model has samples)."""
    return bool((answers.band.uncertainty or {}).get("samples")) and isinstance(answers.band.plan_at_confidence, dict)


def at_confidence(answers: Report, key: str):
    """(the answer at the chosen confidence, its median or None): the plan and the band's P50 where
    the band is on, the point answer alone where it is off."""
    if not band_on(answers):
        return getattr(answers, key), None
    band = (answers.band.bands or {}).get(key) or {}
    return answers.band.plan_at_confidence.get(key), band.get("p50")


def _small(answers: Report, median: str | None) -> str:
    """'at 90 % confidence · median 40 pulls' (empty where the band is off)."""
    if not band_on(answers):
        return ""
    return f"at {_confidence_text(answers)} confidence" + ("" if median is None else f" · median {median}")


def pulls_card(answers: Report, system: str) -> Card:
    """Pulls in a row when the cycle repeats from the start, at the chosen confidence."""
    runs, median = at_confidence(answers, "runs_before_limit")
    band = (answers.band.bands or {}).get("runs_before_limit")
    if band_on(answers) and isinstance(band, dict) and median is None:
        median = "all day"     # at least half the samples never cross
    if answers.runs_before_limit is None and not band_on(answers):
        runs = None
    if runs is None and (answers.sustainable or band_on(answers)):
        value, unit = "All day", ""
    elif runs is None:
        value, unit = f"Over {MAX_PULLS:,}", "pulls"
    else:
        value, unit = f"{runs}", "pull" if runs == 1 else "pulls"
    details = []
    share = answers.band.sustainable_share
    if band_on(answers) and isinstance(share, (int, float)):
        details.append(f"Sustainable in {100 * share:.0f} % of cases.")
    stopped = answers.runs_stopped_by
    if stopped in LIMIT_NAMES and answers.runs_before_limit is not None:
        limit_C = answers.limit_C if stopped == "bulk" else answers.return_line_limit_C
        details.append(f"The count stops at {LIMIT_NAMES[stopped]}, {shown_celsius(limit_C, system)}.")
    elif answers.sustainable:
        details.append("By the model this cadence settles under the limit.")
    return Card("pulls", "Pulls in a row, cycle repeated", value, unit, tuple(details), main=True,
                small=_small(answers, None if median is None else f"{median}"),
                help="Repeating your pull and wait from the starting temperature until a pull would take the "
                     "oil over a limit: the bulk oil's, or the return line's where you gave one.")


def day_card(answers: Report, system: str) -> Card:
    """Pulls of the planned day that finish under the limits, at the chosen confidence."""
    done, median = at_confidence(answers, "pulls_under_limit")
    planned = answers.pulls_planned
    return Card("day", "Planned day: pulls that fit", f"{done} of {planned}", "pulls", (), main=True,
                small=_small(answers, None if median is None else f"{median} of {planned}"),
                help="Pulls of the session you planned that finish with neither oil over its limit.")


def hottest_card(answers: Report, system: str, verdict=None) -> Card:
    if answers.peak_C is None:   # past the range of the model's oil data: no figure that looks real
        return Card("hottest", "Hottest oil, planned session", "Beyond the model", "",
                    ("Far past the limit: see the caution above.",
                     f"Bulk limit: {shown_celsius(answers.limit_C, system)}."),
                    help="The bulk oil would pass the range where the model's oil data hold, so no peak is given.")
    value, unit = _temperature(answers.peak_C, system)
    small = ""
    band = (answers.band.bands or {}).get("peak_C") or {}
    if verdict is not None and band_on(answers) and verdict.peak_C is not None:
        median = shown_celsius(band["p50"], system) if band.get("p50") is not None else None
        if verdict.governing_limit == "return_line":
            small = (f"median{'' if median is None else ' ' + median} · return line "
                     f"{shown_celsius(verdict.peak_C, system)} at {_confidence_text(answers)}")
            if median is not None:
                value, unit = _temperature(band["p50"], system)
        else:
            value, unit = _temperature(verdict.peak_C, system)
            small = _small(answers, median)
    details = [f"Return line: {shown_celsius(answers.peak_return_C, system)}"
               + (f" (limit {shown_celsius(answers.return_line_limit_C, system)})."
                  if answers.return_line_limit_C is not None else ".")]
    details.append(f"Bulk limit: {shown_celsius(answers.limit_C, system)}.")
    return Card("hottest", "Hottest oil, planned session", value, f"{unit} bulk", tuple(details), small=small,
                help="Highest temperature of the oil in the tank over the planned session, and of the oil "
                     "returning from the valve (bulk plus the valve's heat in the passing flow).")


def time_card(answers: Report, system: str) -> Card:
    """The time to the limit in the planned session: the time that the chosen fraction of the samples
    reach no sooner (the median in small print), or the point answer where the band is off."""
    ttl, median = at_confidence(answers, "time_to_limit_s")
    value = "Not reached" if ttl is None else shown_duration(ttl)
    details = ("In the planned session.",) if ttl is None else ("From the start of the first pull.",)
    small = _small(answers, "not reached" if median is None else shown_duration(median))
    return Card("time", "Time to the limit", value, "", details, small=small,
                help="In the planned session, from the start of the first pull.")


def wait_card(answers: Report, planned_wait_s: float, system: str) -> Card:
    wait, median = at_confidence(answers, "min_wait_s")
    value = "No wait is enough" if wait is None else ("None needed" if wait == 0 else shown_duration(wait, round_up=True))
    return Card("wait", "Wait between pulls", value, "", (f"You planned {shown_duration(planned_wait_s)}.",),
                small=_small(answers, None if median is None else shown_duration(median)),
                help="Shortest wait after every pull that lets the whole planned session finish under the "
                     "limits, without a cooler.")


def cooler_card(answers: Report, system: str) -> Card:
    need, median = at_confidence(answers, "cooler_required_W_per_K")
    if not answers.cooler_needed and not need:
        value, unit = "Not needed", ""
    elif need is None:
        value, unit = "None is enough", ""
    else:
        value, unit = _number(need, "conductance", system, up=True)
        unit = f"{unit} of ETD"
    sustained = answers.cooler_required_sustained_W_per_K
    all_day = ("no cooler is enough" if sustained is None else "none" if sustained == 0
               else shown(sustained, "conductance", system))
    return Card("cooler", "Cooler for the plan", value, unit, (f"To run all day: {all_day}.",),
                small=_small(answers, None if median is None else shown(median, "conductance", system)),
                help="Smallest oil cooler for the planned session with your tank and waits, as heat removed "
                     "per degree of ETD (entering temperature difference: oil in minus air).")


def tank_card(answers: Report, oil_volume_m3: float, tank_m3: float, system: str) -> Card:
    """The least oil for the planned day without a cooler, at the chosen confidence, and the tank of the
    rig's shape scaled to hold it (tank and head room both scale with the oil: same shape, same fill)."""
    smallest, median = at_confidence(answers, "min_oil_volume_L")
    details = []
    if smallest is None:
        value, unit = "Not possible", ""
    else:
        value, unit = _number(smallest / 1000.0, "oil_volume", system, OIL_TO_PLAN_DIGITS, up=True)
        unit = f"{unit} of oil"
        scale = smallest / 1000.0 / oil_volume_m3
        details.append(f"In a tank of {shown(tank_m3 * scale, 'oil_volume', system, up=True)} (your tank's shape, scaled)"
                       + (f", {shown(answers.headroom_at_limit_L / 1000.0 * scale, 'oil_volume', system)} "
                          "free at the limit." if answers.headroom_at_limit_L is not None else "."))
    details.append(f"You have {shown(oil_volume_m3, 'oil_volume', system)} of oil.")
    return Card("tank", "Smallest oil volume", value, unit, tuple(details),
                small=_small(answers, None if median is None else shown(median / 1000.0, "oil_volume", system)),
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


def headline_cards(answers: Report, oil_volume_m3: float, planned_wait_s: float, system: str,
                   tank_m3: float | None = None) -> list[Card]:
    """Every headline card, most important first. tank_m3 : the tank's inside volume (m^3)."""
    verdict = answers.verdict
    tank = oil_volume_m3 if tank_m3 is None else tank_m3
    return [day_card(answers, system), pulls_card(answers, system), hottest_card(answers, system, verdict),
            time_card(answers, system), wait_card(answers, planned_wait_s, system), cooler_card(answers, system),
            tank_card(answers, oil_volume_m3, tank, system), ageing_card(answers, system), headroom_card(answers, system)]

