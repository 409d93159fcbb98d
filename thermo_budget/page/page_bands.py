"""The page's band: how sure the answers are (the likely range and the plan at the chosen confidence),
what moves them most (a small chart), the band before and after a log fit, and the P10-P90 envelope
on the temperature chart (drawn by page_charts.envelope_png). Every figure comes from the report's band keys (bands.py)."""
from __future__ import annotations

import html

import streamlit as st

from .. import display as pf
from . import page_state as state
from ..planning.band_text import plan_phrase, pulls_phrase
from .page_charts import ENVELOPE_COLOUR
from .page_sections import html_table
from .page_state import PagePlan
from ..planning.results import Report

RANKING_CSS = f"""<style>
.tb-ranking {{ margin: 0.2rem 0 0.4rem 0; font-size: 0.82rem; }}
.tb-rank {{ display: grid; grid-template-columns: minmax(6rem, 42%) 1fr; gap: 0.6rem; align-items: center;
           margin: 0.2rem 0; }}
.tb-rank-bar {{ display: flex; align-items: center; gap: 0.35rem; white-space: nowrap; }}
.tb-rank-bar > span {{ height: 0.85rem; background: {ENVELOPE_COLOUR}; opacity: 0.8; border-radius: 2px; }}
</style>"""


def ranking_html(rows, of_what: str = "the pull count") -> str:
    """A small horizontal bar chart, drawn by the browser: each uncertain input's share of the spread
    in the pull count (rows: (label, share as a fraction), largest first). The largest bar spans
    four fifths of its column; each bar carries its percentage."""
    top = max((share for _, share in rows), default=0.0) or 1.0
    bars = "".join(
        f'<div class="tb-rank"><span>{html.escape(label)}</span><span class="tb-rank-bar">'
        f'<span style="width:{80.0 * share / top:.1f}%"></span>{100.0 * share:.0f} %</span></div>'
        for label, share in rows)
    summary = "; ".join(f"{label} {100.0 * share:.0f} %" for label, share in rows)
    return (f'{RANKING_CSS}<div class="tb-ranking" role="img" aria-label="Share of the spread in '
            f'{html.escape(of_what)}: {html.escape(summary)}">{bars}</div>')


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


def _table(answers: Report, system: str) -> list[dict]:
    bands, plan = answers.band.bands, answers.band.plan_at_confidence
    c = f"plan ({100 * answers.band.confidence:.0f} %)"

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
        model = ("all day" if key == "runs_before_limit" and answers.sustainable
                 else one(getattr(answers, key)) if getattr(answers, key) is not None else "n/a")
        return {"answer": what, "model": model,
                "likely": (_likely(bands[key], quantity, system, scale) if quantity != "count" else
                                        ("n/a" if bands[key] is None else
                                         "—" if bands[key]["p10"] == bands[key]["p90"] else
                                         f"{bands[key]['p10'] or 'no limit'} to {bands[key]['p90'] or 'no limit'}")),
                c: one(plan[key]) if key in plan else ""}
    rows = [row("pulls in a row, cycle repeated", "runs_before_limit", "count"),
            row("pulls of the planned day under the limit", "pulls_under_limit", "count"),
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
    if not (answers.band.uncertainty or {}).get("samples"):
        st.caption("The likely range is off for this scenario ([uncertainty] enabled = false, or every width 0).")
        return
    advice = f" {answers.band.advice}" if answers.band.advice else ""
    if answers.runs_before_limit is not None:   # the pull-count card shows the plan and the median already
        st.markdown(f"**How sure:** each planning card shows the figure to plan on, which keeps the session under "
                    f"the limit in {100 * answers.band.confidence:.0f} % of the rigs the uncertainty model allows, "
                    f"with the median in small print; the table below gives the likely range, where 8 in 10 of "
                    f"them fall.{advice}")
    else:
        plan = plan_phrase(answers)
        st.markdown(f"**How sure:** {pulls_phrase(answers)}" + (f"; {plan}." if plan else ".") + advice)
    with st.expander("The likely range of every answer, the plan at your confidence, and what moves them",
                     expanded=False):
        left, right = st.columns([3, 2])
        rows = _table(answers, system)   # a wrapping table: every value stays readable at any width
        left.markdown(html_table(list(rows[0]), [list(row.values()) for row in rows], "tb-bands", words_first=True),
                      unsafe_allow_html=True)
        left.caption(f"Likely: from P10 to P90, i.e. 8 in 10 of the rigs the uncertainty model allows fall in the range "
                     f"({answers.band.uncertainty['samples']} quasi-random samples). The plan keeps the session "
                     f"under the limit in {100 * answers.band.confidence:.0f} % of them. The model's own figure "
                     f"is the one above the range.")
        ranking = answers.band.ranking
        if ranking:
            right.markdown(ranking_html([(row["what"], row["share"]) for row in ranking], ranking[0]["of"]),
                           unsafe_allow_html=True)
            right.caption(f"Each input's share of the spread in {ranking[0]['of']} (the linear fit behind the "
                          f"shares explains {100 * ranking[0]['r2']:.0f} % of it).")
        if page.calibrated:
            before = state.answers_for(st.session_state.good_toml)
            st.markdown(f"**Before the log:** {pulls_phrase(before)}.  **After it:** {pulls_phrase(answers)}.")
        st.caption("The range covers the uncertain inputs listed in docs/method.md (convection, the tank's "
                   "stirring, the pump body's coupling, ambient, absorbed power, heat capacity, the tank's and the "
                   "bodies' emissivity, the engine-off link, the floor, the dry shell). "
                   "It does not cover a wrong model of the rig or a sensor in the wrong place.")
