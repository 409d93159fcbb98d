"""The page's sections below the headline: title, errors, safety, the charts, the schedule, the
files and the further figures (Streamlit only; every figure comes from the package's report)."""
from __future__ import annotations

import html
from dataclasses import dataclass, field

import streamlit as st

from . import page_charts
from . import page_inputs as pi
from . import page_state as state
from .page_state import PagePlan
from ..units import ZERO_CELSIUS_K, to_display, unit_label


@dataclass
class Slots:
    """Places kept on the page for what is drawn last: the design chart and its download, and
    sections that ask to be drawn after it (`later`, functions of no argument, in order)."""
    design_chart: object
    design_download: object
    later: list = field(default_factory=list)


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
    for warning in page.scenario.warnings:     # accepted, but looks like a unit slip
        st.warning(warning)


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
            "- **Hoses and fittings** must be rated for the pressure and for the oil temperature; check the "
            "temperature rating against the return-line figure in the \"Hottest oil\" card (give the rating as "
            "the return-line limit in the scenario file), and the pressure rating against the pump figure under "
            "\"More figures\".\n"
            "- **Stay well below the oil's flash point**, and keep ignition sources away from hot oil mist.\n"
            "- These answers come from a model. They do not replace local codes, the makers' instructions or "
            "the judgement of a licensed professional; follow those first.")


def charts(page: PagePlan) -> Slots:
    """The temperature chart, with a place beside it for the design chart (drawn last)."""
    left, right = st.columns(2)
    with left:
        st.markdown("**Temperatures through the planned session**")
        st.vega_lite_chart(state.trace_spec(page.toml_text, page.system), width="stretch")
    right.markdown("**Design chart: more oil or a cooler?**")
    return Slots(design_chart=right, design_download=None)


TABLE_CSS = """
<style>
.tb-table { overflow-x: auto; max-width: 100%; }
.tb-table table { border-collapse: collapse; font-size: 0.82rem; width: 100%; }
.tb-table th, .tb-table td { border-bottom: 1px solid rgba(49, 51, 63, 0.15); padding: 0.2rem 0.35rem;
                             text-align: right; }
.tb-table th { font-weight: 600; vertical-align: bottom; line-height: 1.2; }
.tb-table.tb-words-first th:first-child, .tb-table.tb-words-first td:first-child { text-align: left; }
</style>
"""


def html_table(header, rows, name: str, words_first: bool = False) -> str:
    """A plain HTML table (cells escaped) that wraps its text to the page's width, with TABLE_CSS;
    name: its own class; words_first: the first column is words, set flush left."""
    e = html.escape
    classes = f"tb-table {name}" + (" tb-words-first" if words_first else "")
    return (TABLE_CSS + f"<div class='{classes}'><table><thead><tr>" + "".join(f"<th>{e(h)}</th>" for h in header)
            + "</tr></thead><tbody>" + "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>"
                                             for row in rows) + "</tbody></table></div>")


def schedule_rows(answers: dict, system: str) -> tuple[list[str], list[list[str]]]:
    """The schedule's header and rows as the page shows them, in `system`'s units."""
    temp_unit = unit_label("temperature", system)
    header = ["pull", "starts at (min)", f"oil at start ({temp_unit})", f"bulk peak ({temp_unit})",
              f"return-line peak ({temp_unit})", "wait before (s)", "of it, extra (s)"]
    rows = [[str(row.index), f"{row.start_s / 60.0:.1f}",
             f"{to_display(row.start_C + ZERO_CELSIUS_K, 'temperature', system):.1f}",
             f"{to_display(row.peak_C + ZERO_CELSIUS_K, 'temperature', system):.1f}",
             f"{to_display(row.peak_return_C + ZERO_CELSIUS_K, 'temperature', system):.1f}" if row.peak_return_C is not None else "",
             f"{row.wait_before_s:.0f}", f"{row.extra_wait_s:.0f}"]
            for row in answers.schedule]
    return header, rows


def schedule(page: PagePlan):
    st.markdown("**Ready-to-pull schedule**")
    st.caption("Each planned pull, started after its planned wait, lengthened where needed so that the pull "
               "ends with both the bulk and the return-line oil under their limits.")
    header, rows = schedule_rows(page.answers, page.system)
    st.markdown(html_table(header, rows, "tb-schedule"), unsafe_allow_html=True)


def files(page: PagePlan, slots: Slots):
    system = page.system
    st.markdown("**Files**")
    d1, d2 = st.columns(2)      # two a row: each label reads whole at 1024 px with the sidebar open
    d3, d4 = st.columns(2)
    d1.download_button("Scenario (.toml)", page.scenario.changed(units=system).to_toml(), file_name="scenario.toml",
                       mime="application/toml", help="Open it again here or run it from the command line.")
    d2.download_button("Trace (.csv)", pi.trace_csv_shown(state.trace_for(page.toml_text), system),
                       file_name="trace.csv", mime="text/csv", help="Temperatures against time, in the units shown.")
    d3.download_button("Temperature chart (.png)", state.trace_png_later(page.toml_text, system),
                       file_name="trace.png", mime="image/png")
    slots.design_download = d4


def more_figures_lines(page: PagePlan) -> list[str]:
    """The further figures, each the report's own in the page's units."""
    answers, system = page.answers, page.system
    pump = answers.pump
    flow = to_display(pump.flow_L_min / 60000.0, "flow", system)
    pressure = to_display(pump.pressure_bar * 1e5, "pressure", system)
    flash = ("given in the scenario" if answers.flash_point_given else
             "assumed: a conservative figure for mineral hydraulic oil, from memory; give fluid.flash_point")
    return [
        f"Pump at the hardest pull: {flow:,.1f} {unit_label('flow', system)} at {pressure:,.0f} "
        f"{unit_label('pressure', system)}, {pump.rpm:,.0f} rpm, absorbing {pi.shown(answers.peak_pull_power_W, 'power', system)}",
        f"Hottest bulk oil: {pi.shown_celsius(answers.peak_C, system)}; hottest return-line oil: "
        f"{pi.shown_celsius(answers.peak_return_C, system)}"
        + (" (past the range of the model's oil data)" if answers.beyond_model_range else ""),
        f"Heat the rig sheds on its own with the oil at the limit: "
        f"{pi.shown(answers.passive_rejection_at_limit_W, 'power', system)}",
        f"Oil level at the limit: {pi.shown(answers.oil_level_at_limit_m, 'thickness', system)} in a "
        f"{pi.shown(answers.tank_height_m, 'thickness', system)} tall tank; "
        f"{pi.shown(answers.headroom_at_limit_L / 1000.0, 'oil_volume', system)} of head room "
        + (f"(the smallest tank keeps {pi.shown(answers.min_oil_volume_headroom_L / 1000.0, 'oil_volume', system)})"
           if answers.min_oil_volume_headroom_L is not None else ""),
        f"Oil ageing: {answers.oil_ageing_equivalent_h:.2f} h equivalent at "
        f"{pi.shown_celsius(answers.oil_ageing_reference_C, system)} ({answers.oil_ageing_rule.replace('degC', '°C')})",
        f"Flash point: {pi.shown_celsius(answers.flash_point_C, system)} ({flash})",
        f"Oil: {answers.oil.viscosity_40C_cSt:.1f} cSt at 40 °C, {answers.oil.viscosity_100C_cSt:.2f} cSt "
        f"at 100 °C, viscosity index {answers.oil.viscosity_index:.0f}",
        f"Answers worked out in {page.elapsed_s:.2f} s (instant when the inputs were seen before)"]


def more_figures(page: PagePlan):
    with st.expander("More figures"):
        st.markdown("\n".join("- " + line for line in more_figures_lines(page)))


def hot_day(page: PagePlan, slots: Slots):
    """Pulls and cooler across the day's possible air temperatures (one batched run, cached). Its
    place is kept here; it is worked out and drawn after the design chart."""
    place = st.container()
    slots.later.append(lambda: _draw_hot_day(page, place))


def _draw_hot_day(page: PagePlan, place):
    from ..planning.hot_day import AROUND_K, DEFAULT_RANGE_C
    with place, st.spinner("Working out a hotter day…"):
        charts = state.slow_charts(page.toml_text, page.system)
        hot = charts.hot
    system = page.system
    left, right = place.columns(2)
    left.markdown("**On a hotter (or colder) day**")
    low, high = DEFAULT_RANGE_C
    within = low <= page.scenario.ambient_K - ZERO_CELSIUS_K <= high
    span = (f"{pi.shown_celsius(low, system)} to {pi.shown_celsius(high, system)}" if within else
            f"your room ± {AROUND_K:.0f} K")
    left.caption(f"The same plan from {span}; the rig starts as much warmer as the air is. "
                 "Bars: pulls before the limit; line: the cooler the planned session needs.")
    sentences = []
    for ambient, pulls, all_day, cooler in zip(hot.ambients_K, hot.pulls, hot.all_day, hot.cooler_W_per_K):
        count = ("all day" if all_day else f"more than {hot.max_pulls} pulls" if pulls != pulls
                 else f"{int(pulls)} pulls")
        need = ("no cooler" if cooler == 0 else "no cooler can do it" if cooler != cooler
                else f"a {pi.shown(cooler, 'conductance', system)} cooler")
        today = " (about today)" if abs(ambient - page.scenario.ambient_K) < 1e-6 else ""
        sentences.append(f"on a {pi.shown(ambient, 'temperature', system, 0)} day{today}: {count}, {need}")
    if sentences:     # every bar of the chart, coldest first
        left.markdown("Across the chart's range:\n" + "\n".join(f"- {s}" for s in sentences))
    right.vega_lite_chart(charts.hot_spec, width="stretch")


def design_chart(page: PagePlan, slots: Slots):
    """The slowest part of the page (a sweep over 100 rigs), drawn into its place once everything
    else is up; until then the page keeps showing the previous chart. Then the sections that asked
    to come after it."""
    text, system = page.toml_text, page.system
    charts = state.slow_charts(text, system)
    with slots.design_chart:
        st.vega_lite_chart(charts.design_spec, width="stretch")
        planned = charts.sweep.pulls_planned
        st.caption(f"Each cell is one rig: its oil (tank scaled to fit) and its cooler, repeating your cycle from "
                   f"a cold start. The white line parts the rigs that fit your {planned} planned pulls from those "
                   "that do not; ∞: can go on all day; the red star: your rig now. ETD: entering temperature "
                   "difference (oil into the cooler minus air).")
    sweep = charts.sweep
    slots.design_download.download_button(
        "Design chart (.png)", lambda: page_charts.design_chart_png(text, system, result=sweep),
        file_name="design_chart.png", mime="image/png")
    for draw in slots.later:
        draw()
