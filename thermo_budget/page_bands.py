"""The page's band: how sure the answers are (the likely range and the plan at the chosen confidence),
what moves them most (a small chart), the band before and after a log fit, and the P10-P90 envelope
on the temperature chart. Every figure comes from the report's band keys (bands.py)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import streamlit as st
from matplotlib.figure import Figure

from . import page_format as pf
from . import page_state as state
from .band_text import plan_phrase, pulls_phrase
from .page_charts import png_bytes, trace_chart_figure
from .page_format import to_shown
from .page_state import PagePlan

ENVELOPE_COLOUR = "#b5461f"


def envelope_png(toml_text: str, system: str, trace, envelope: dict | None) -> bytes:
    """The temperature chart with the P10-P90 envelope of the bulk oil behind its line."""
    figure = trace_chart_figure(toml_text, system, trace)
    if envelope:
        ax = figure.axes[0]
        minutes = np.asarray(envelope["time_s"]) / 60.0
        low = to_shown(np.asarray(envelope["p10_C"]) + 273.15, "temperature", system)
        high = to_shown(np.asarray(envelope["p90_C"]) + 273.15, "temperature", system)
        ax.fill_between(minutes, low, high, color=ENVELOPE_COLOUR, alpha=0.18, lw=0, zorder=1,
                        label="bulk oil, likely range (P10-P90)")
        ax.legend(loc="lower right", fontsize=8, framealpha=0.9)
    return png_bytes(figure)


@st.cache_data(max_entries=32, show_spinner=False)
def ranking_png(rows: tuple, of_what: str = "the pull count") -> bytes:
    """A small horizontal bar chart: each uncertain input's share of the spread in the pull count."""
    figure = Figure(figsize=(4.6, 0.42 * len(rows) + 0.7))
    figure.subplots_adjust(left=0.42, right=0.97, bottom=0.2 if len(rows) > 3 else 0.3, top=0.97)
    ax = figure.add_subplot()
    labels = [label for label, _ in rows][::-1]
    shares = [100.0 * share for _, share in rows][::-1]
    ax.barh(labels, shares, color=ENVELOPE_COLOUR, alpha=0.8)
    for y, share in enumerate(shares):
        ax.annotate(f"{share:.0f} %", (share, y), xytext=(3, 0), textcoords="offset points", va="center", fontsize=8)
    ax.set_xlim(0, max(shares) * 1.25 + 1)
    ax.set_xlabel(f"share of the spread in {of_what} (%)", fontsize=8)
    ax.tick_params(labelsize=8)
    ax.grid(axis="x", alpha=0.3)
    return png_bytes(figure)


def _likely(band, quantity, system, scale=1.0) -> str:
    if band is None:
        return "n/a"
    if band["p10"] == band["p90"]:
        return "—"
    def one(v):
        if v is None:
            return "beyond reach"
        if quantity == "duration":
            return pf.shown_duration(v)
        if quantity == "temperature":
            return pf.shown_celsius(v, system)
        return pf.shown(v * scale, quantity, system)
    return f"{one(band['p10'])} to {one(band['p90'])}"


def _table(answers: dict, system: str) -> list[dict]:
    bands, plan = answers["bands"], answers["plan_at_confidence"]
    c = f"plan ({100 * answers['confidence']:.0f} %)"

    def row(what, key, quantity, scale=1.0):
        def one(v):
            if v is None:
                return "none suffices" if key in plan else "n/a"
            if quantity == "count":
                return f"{v}"
            if quantity == "duration":
                return pf.shown_duration(v)
            if quantity == "temperature":
                return pf.shown_celsius(v, system)
            return pf.shown(v * scale, quantity, system)
        return {"answer": what, "model": one(answers[key]) if answers[key] is not None else "n/a",
                "likely": (_likely(bands[key], quantity, system, scale) if quantity != "count" else
                                        ("n/a" if bands[key] is None else
                                         "—" if bands[key]["p10"] == bands[key]["p90"] else
                                         f"{bands[key]['p10']} to {bands[key]['p90'] or 'no limit'}")),
                c: one(plan[key]) if key in plan else ""}
    rows = [row("pulls before the limit", "runs_before_limit", "count"),
            row("of the planned pulls, under the limit", "pulls_under_limit", "count"),
            row("peak of the planned pulls", "peak_C", "temperature"),
            row("wait needed between pulls", "min_wait_s", "duration"),
            row("cooler for the planned pulls", "cooler_required_W_per_K", "conductance"),
            row("smallest oil volume", "min_oil_volume_L", "oil_volume", 1e-3)]
    return rows


def section(page: PagePlan):
    """How sure the answers are: what the range means and what to measure first (the pull count's band
    and plan where its card does not show them), then the table of every answer's band and plan, and
    the band before and after a log fit."""
    answers, system = page.answers, page.system
    if "bands" not in answers:
        return
    if not answers["uncertainty"].get("samples"):
        st.caption("The likely range is off for this scenario ([uncertainty] enabled = false, or every width 0).")
        return
    advice = f" {answers['band_advice']}" if answers["band_advice"] else ""
    if answers["runs_before_limit"] is not None:   # the pull-count card shows the band and the plan already
        st.markdown(f"**How sure:** the likely range beside a figure is where 8 in 10 of the rigs the uncertainty "
                    f"model allows fall; the plan keeps the session under the limit in "
                    f"{100 * answers['confidence']:.0f} % of them.{advice}")
    else:
        plan = plan_phrase(answers)
        st.markdown(f"**How sure:** {pulls_phrase(answers)}" + (f"; {plan}." if plan else ".") + advice)
    with st.expander("The likely range of every answer, the plan at your confidence, and what moves them",
                     expanded=False):
        left, right = st.columns([3, 2])
        left.dataframe(pd.DataFrame(_table(answers, system)), hide_index=True, width="stretch")
        left.caption(f"Likely: from P10 to P90, i.e. 8 in 10 of the rigs the uncertainty model allows fall in the range "
                     f"({answers['uncertainty']['samples']} quasi-random samples). The plan keeps the session "
                     f"under the limit in {100 * answers['confidence']:.0f} % of them. The model's own figure "
                     f"is the one above the range.")
        ranking = answers["band_ranking"]
        if ranking:
            right.image(ranking_png(tuple((row["what"], row["share"]) for row in ranking), ranking[0]["of"]),
                        width="stretch")
            right.caption(f"Each input's share of the spread in {ranking[0]['of']} (the linear fit behind the "
                          f"shares explains {100 * ranking[0]['r2']:.0f} % of it).")
        if page.calibrated:
            before = state.answers_for(st.session_state.good_toml)
            st.markdown(f"**Before the log:** {pulls_phrase(before)}.  **After it:** {pulls_phrase(answers)}.")
        st.caption("The range covers the uncertain inputs listed in the README (convection, the tank's "
                   "stirring, the pump body's coupling, ambient, absorbed power, heat capacity, emissivity). "
                   "It does not cover a wrong model of the rig or a sensor in the wrong place.")
