"""The report's words: its cautions, in plain words, from its numbers (answers.report puts them in the
report; the page and the command line show them as they are)."""
from __future__ import annotations

from typing import TYPE_CHECKING

from .units import to_display, unit_label

if TYPE_CHECKING:
    from .scenario import Scenario

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
