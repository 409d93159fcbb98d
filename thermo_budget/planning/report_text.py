"""The report's words: its cautions, in plain words, from its numbers (answers.report puts them in the
report; the page and the command line show them as they are)."""
from __future__ import annotations

from typing import TYPE_CHECKING

from ..units import to_display, unit_label

if TYPE_CHECKING:
    from ..inputs.scenario import Scenario

# How the cooler's rating is read (network.cooler_W_K), in the words the report carries.
COOLER_RATING_MODEL = "constant specific dissipation (W/K of ETD) at any flow, capped at the oil's m_dot c_p"


def _flash_point_source(scenario: Scenario) -> str:
    return "given in the scenario" if scenario.flash_point_given else "assumed: no fluid.flash_point given"


def cautions(scenario: Scenario, result: dict) -> list[str]:
    """Plain-words warnings where the predicted oil is hotter than a rig should see."""
    found = []
    peak, peak_return, flash = result["peak_C"], result["peak_return_C"], result["flash_point_C"]
    where = _flash_point_source(scenario)
    if peak_return >= flash or peak >= flash:
        found.append(f"The oil passes its flash point: the return line peaks at {peak_return:.1f} degC against a "
                     f"flash point of {flash:.1f} degC ({where}). Oil mist can ignite. Do not run this session.")
    elif peak > 100.0:
        found.append(f"The bulk oil peaks at {peak:.1f} degC, above 100 degC: past what mineral hydraulic oil, "
                     "its seals and hoses are usually rated for, water in it boils and it ages fast. Check the "
                     "inputs; if they are right, do not run this session without a cooler or more oil.")
    elif peak_return >= flash - 30.0:
        found.append(f"The return-line oil peaks at {peak_return:.1f} degC, less than 30 K below the flash point "
                     f"({flash:.1f} degC, {where}).")
    if result["headroom_at_peak_L"] <= 0.0:
        found.append("The hot oil overfills the tank at the predicted peak.")
    return found


def beyond_range_caution(scenario: Scenario, ceiling_K: float, limit_K: float, past_flash_point: bool) -> str:
    """The caution that stands in place of the session's temperatures where the bulk oil passes
    ceiling_K, the top of the range of the model's oil data."""
    def temp(T_K):
        return f"{to_display(T_K, 'temperature', scenario.units):.0f} {unit_label('temperature', scenario.units)}"
    flash = (f" and past its flash point ({temp(scenario.flash_point_K)}, {_flash_point_source(scenario)}): oil mist "
             "can ignite" if past_flash_point else "")
    return (f"In the planned session the bulk oil would pass {temp(ceiling_K)}, beyond the range where the model's "
            f"oil data hold (Cragoe to 400 degF, ASTM D341 down to 2 cSt), so its peak and end temperatures "
            f"are not given. It is far past the fluid limit ({temp(limit_K)}){flash} long before that: do not "
            f"run this session.")


def _no_cooler_suffices(largest_W_K: float, sustained: bool) -> str:
    what = "sustain the cadence" if sustained else "finish the planned session"
    return (f"No cooler up to {largest_W_K:.0f} W/K can {what}: with the oil flow of this pump the cooler "
            "cannot take the heat out fast enough during a pull (its duty is capped at the oil's "
            "capacity rate m_dot c_p). Shorten the pulls or add oil.")


def _pull_not_scheduled(index: int, engine: str, ready_temperature: bool) -> str:
    why = (f"the oil does not cool to the ready temperature during the wait (engine {engine})" if ready_temperature
           else f"it would cross the limit even after a long wait (engine {engine})")
    return f"Pull {index} cannot be scheduled: {why}; the schedule stops before it."


_SIZE_NAMES = {"min_wait_s": "minimum wait", "cooler_required_W_per_K": "cooler", "min_oil_volume_L": "oil volume"}


def _sizes_from_fixes(confidence: float, keys: list, sizing_samples: int | None) -> str:
    names = [_SIZE_NAMES[key] for key in keys]
    what = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]
    verb = "is" if len(names) == 1 else "are"
    return (f"The {what} at {100 * confidence:.0f} % confidence {verb} the verdict's fix: re-run on every sample "
            "of the whole day and stepped up (x 1.08) where it fell short, so up to 8 % above the smallest that "
            f"suffices. The likely ranges come from the band's first {sizing_samples or 'few'} samples.")


# The planning answers' notes: what the searches found (planning.py, ready_schedule.py,
# answers.planning_answers give a code and its values), in words.
_NOTES = {
    "sustainable": lambda steady_peak_C, limit_C: (
        f"The cadence can go on all day: it settles to a periodic state peaking at {steady_peak_C:.1f} degC, "
        f"below the {limit_C:.1f} degC limit."),
    "uncounted": lambda max_pulls: (
        f"No pull crosses the limit within {max_pulls} pulls, but the cadence does not settle below it."),
    "no_cooler_needed": lambda: "No cooler is needed for the planned session.",
    "no_cooler_needed_all_day": lambda: "No cooler is needed for the cadence to go on all day.",
    "cooler_fitted": lambda cooler_W_K: (
        f"The cooler sizes are the total rating needed, in place of the scenario's {cooler_W_K:.1f} W/K cooler; "
        "the minimum wait and oil volume assume no cooler."),
    "no_wait_step": lambda: "The cycle has no wait step, so there is no wait to lengthen.",
    "no_wait_needed": lambda: "No wait is needed: even back-to-back pulls stay under the limit.",
    "no_wait_suffices": lambda: ("No wait is long enough without a cooler: the pulls of one cycle already cross the "
                                 "limit from a cooled-down start. Shorten the pulls, add oil or fit a cooler."),
    "no_cooler_suffices": _no_cooler_suffices,
    "no_oil_volume_suffices": lambda largest_L: (
        f"Even {largest_L:.0f} L of oil in a tank of the same shape would not finish the session."),
    "pull_not_scheduled": _pull_not_scheduled,
    "sizes_from_fixes": _sizes_from_fixes,
}


def note_words(code: str, values: dict) -> str:
    """One note of the planning answers in words, from its code and values (SI, degC)."""
    return _NOTES[code](**values)
