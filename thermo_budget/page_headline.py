"""The page's headline: how many pulls fit, and the other planning answers, first and largest."""
from __future__ import annotations

import streamlit as st

from . import page_inputs as pi
from .page_state import PagePlan
from .planning import MAX_PULLS


def section(page: PagePlan):
    answers, system, planned = page.answers, page.system, page.scenario
    view = pi.session_view(planned.raw)
    name = planned.name or "This rig"
    st.subheader(name + ("  ·  calibrated from your log" if page.calibrated else ""))
    limit_text = pi.shown_celsius(answers["limit_C"], system)
    runs = answers["runs_before_limit"]
    if answers["sustainable"]:
        pulls_value, pulls_text = "No limit", "This cadence can go on all day without reaching the limit."
    elif runs is None:
        pulls_value, pulls_text = "Very many", f"No pull within {MAX_PULLS:,} crosses the limit."
    else:
        pulls_value, pulls_text = f"{runs}", f"{runs} pulls before the oil reaches {limit_text}."

    cols = st.columns([1.3, 1, 1, 1, 1])
    cols[0].metric("Pulls before the limit", pulls_value,
                   help="Repeating your pull and wait from the starting temperature until a pull would "
                        "take the bulk oil over the limit.")
    cols[0].caption(f"Planned: {answers['pulls_under_limit']} of {answers['pulls_planned']} pulls stay under.")
    ttl = answers["time_to_limit_s"]
    cols[1].metric("Time to the limit", "Not reached" if ttl is None else pi.shown_duration(ttl),
                   help="In the planned session, from the start of the first pull.")
    cols[1].caption(f"Planned session peaks at {pi.shown_celsius(answers['peak_C'], system)}.")
    wait = answers["min_wait_s"]
    cols[2].metric("Wait needed between pulls", "No wait is enough" if wait is None else
                   ("Not needed" if wait == 0 else pi.shown_duration(wait)),
                   help="Shortest wait after every pull that lets the whole planned session finish under "
                        "the limit, without a cooler.")
    cols[2].caption(f"You planned {pi.shown_duration(view.wait_s)}.")
    need = answers["cooler_required_W_per_K"]
    cols[3].metric("Cooler", ("Not needed" if not answers["cooler_needed"] else
                              "None is enough" if need is None else pi.shown(need, "conductance", system)),
                   help="Smallest cooler (heat removed per degree of ETD) for the planned session with your "
                        "tank and waits.")
    sustained = answers["cooler_required_sustained_W_per_K"]
    cols[3].caption("To run all day: " + ("no cooler is enough" if sustained is None else
                                          "none" if sustained == 0 else pi.shown(sustained, "conductance", system)) + ".")
    smallest = answers["min_oil_volume_L"]
    cols[4].metric("Smallest tank", "Not possible" if smallest is None else pi.shown(smallest / 1000.0, "oil_volume", system),
                   help="Least oil that finishes the planned session without a cooler, in a tank of the same "
                        "shape scaled to fit.")
    cols[4].caption(f"You have {pi.shown(planned.reservoir.oil_volume_m3, 'oil_volume', system)}.")

    if answers["limit_reason"] == "max_temperature":
        reason = (f"The limit is {limit_text}: the hottest you allow the oil. The pump's thinnest oil "
                  f"({planned.min_viscosity_cSt:.1f} cSt) comes only at "
                  f"{pi.shown_celsius(answers['min_viscosity_temperature_C'], system)}.")
    else:
        reason = (f"The limit is {limit_text}: there this oil thins to {planned.min_viscosity_cSt:.1f} cSt, the "
                  f"least the pump accepts, before it reaches the {pi.shown_celsius(answers['max_temperature_C'], system)} "
                  f"you allow.")
    st.markdown(f"**{pulls_text}** {reason}")
    for note in answers["notes"]:
        st.caption("• " + pi.note_in(note, system))
