"""The page's sections below the headline: title, errors, safety, the charts, the schedule, the
files and the further figures (Streamlit only; every figure comes from the package's report)."""
from __future__ import annotations

from dataclasses import dataclass

import pandas as pd
import streamlit as st

from . import page_inputs as pi
from . import page_state as state
from .page_state import PagePlan
from .units import to_display, unit_label


@dataclass
class Slots:
    """Places kept on the page for what is drawn last (the design chart and its download)."""
    design_chart: object
    design_download: object


def title():
    st.title("Brake oil heat budget")
    st.caption("How hot the oil of an uncooled hydraulic engine brake gets over the pulls you plan, "
               "and what to change when it gets too hot.")


def errors(page: PagePlan):
    if page.upload_error:
        st.error(page.upload_error + " The page keeps the scenario it had.")
    if page.draft_error:
        st.error(f"That input was not applied: {page.draft_error}. The answers below are for the last inputs "
                 "that worked.")


def safety(page: PagePlan):
    with st.expander("⚠️ Safety before you run the rig", expanded=True):
        st.markdown(
            "- **Hot oil burns.** Oil near the limit scalds skin in a second; hoses, tank and pump get as hot. "
            "Let the rig cool before you touch it, and wear gloves and eye protection.\n"
            "- **High-pressure fluid injection.** A pinhole leak can push oil through skin. Never feel for leaks "
            "by hand; an injection wound needs a surgeon at once, even when it looks small.\n"
            "- **Fit a relief valve** set below the rating of the weakest part of the loop, so that a closed "
            "valve or blocked line cannot burst anything.\n"
            "- **Guard rotating parts**: the shaft, couplings and the pump drive, before anyone starts the engine.\n"
            "- **Hoses and fittings** must be rated for the pressure and for the oil temperature; check both "
            "against the hot figures on this page.\n"
            "- **Stay well below the oil's flash point**, and keep ignition sources away from hot oil mist.\n"
            "- These answers come from a model. They do not replace local codes, the makers' instructions or "
            "the judgement of a licensed professional; follow those first.")


def charts(page: PagePlan) -> Slots:
    """The temperature chart, with a place beside it for the design chart (drawn last)."""
    left, right = st.columns(2)
    with left:
        st.markdown("**Temperatures through the planned session**")
        st.image(state.trace_png(page.toml_text, page.system), width="stretch")
    right.markdown("**Design chart: more oil or a cooler?**")
    return Slots(design_chart=right, design_download=None)


def schedule(page: PagePlan):
    system = page.system
    st.markdown("**Ready-to-pull schedule**")
    temp_unit = unit_label("temperature", system)
    table = pd.DataFrame([{
        "pull": row["index"],
        "starts at (min)": round(row["start_s"] / 60.0, 2),
        f"oil at start ({temp_unit})": round(to_display(row["start_C"] + 273.15, "temperature", system), 1),
        f"peak ({temp_unit})": round(to_display(row["peak_C"] + 273.15, "temperature", system), 1),
        "wait before (s)": round(row["wait_before_s"], 1),
        "of it, extra (s)": round(row["extra_wait_s"], 1),
    } for row in page.answers["schedule"]])
    st.caption("Each planned pull, started after its planned wait, lengthened where needed so that the pull "
               "ends at or under the limit.")
    st.dataframe(table, hide_index=True, width="stretch")


def files(page: PagePlan, slots: Slots):
    system = page.system
    st.markdown("**Files**")
    d1, d2, d3, d4 = st.columns(4)
    d1.download_button("Scenario (.toml)", page.scenario.changed(units=system).to_toml(), file_name="scenario.toml",
                       mime="application/toml", help="Open it again here or run it from the command line.")
    d2.download_button("Trace (.csv)", pi.trace_csv_shown(state.trace_for(page.toml_text), system),
                       file_name="trace.csv", mime="text/csv", help="Temperatures against time, in the units shown.")
    d3.download_button("Temperature chart (.png)", state.trace_png(page.toml_text, system), file_name="trace.png",
                       mime="image/png")
    slots.design_download = d4


def more_figures(page: PagePlan):
    answers, system = page.answers, page.system
    with st.expander("More figures"):
        pump = answers["pump"]
        st.markdown(
            f"- Pump at the hardest pull: {pi.shown(pump['flow_L_min'] / 60000.0 * 1000.0, 'oil_volume', system)}"
            f"/min at {to_display(pump['pressure_bar'] * 1e5, 'pressure', system):,.0f} {unit_label('pressure', system)}, "
            f"absorbing {pi.shown(answers['peak_pull_power_W'], 'power', system)}\n"
            f"- Hottest return-line oil: {pi.shown_celsius(answers['peak_return_C'], system)}\n"
            f"- Heat the rig sheds on its own with the oil at the limit: "
            f"{pi.shown(answers['passive_rejection_at_limit_W'], 'power', system)}\n"
            f"- Oil: {answers['oil']['viscosity_40C_cSt']:.1f} cSt at 40 °C, {answers['oil']['viscosity_100C_cSt']:.2f} cSt "
            f"at 100 °C, viscosity index {answers['oil']['viscosity_index']:.0f}\n"
            f"- Answers worked out in {page.elapsed_s:.2f} s (instant when the inputs were seen before)")


def design_chart(page: PagePlan, slots: Slots):
    """The slowest part of the page (a sweep over 100 rigs), drawn into its place once everything
    else is up; until then the page keeps showing the previous chart."""
    with slots.design_chart:
        image = state.design_chart(page.toml_text, page.system)
        st.image(image, width="stretch")
    slots.design_download.download_button("Design chart (.png)", image, file_name="design_chart.png",
                                          mime="image/png")
