"""The page's headline: the rig's name, the answer cards (how many pulls fit first and largest),
why the limit is where it is, the report's notes and its cautions.

The cards are plain HTML in a CSS grid that wraps: a card never cuts its text, it wraps it, and the
grid puts fewer cards on a row as the page narrows (one per row on a phone).
"""
from __future__ import annotations

import html

import streamlit as st

from . import page_inputs as pi
from .page_cards import Card, headline_cards
from . import page_state as state
from .page_state import PagePlan

CARD_CSS = """
<style>
.tb-cards { container-type: inline-size; }
.tb-grid { display: grid; gap: 0.6rem;
           grid-template-columns: repeat(auto-fill, minmax(max(min(100%, 10.5rem), calc(20% - 0.6rem)), 1fr)); }
@container (min-width: 34rem) { .tb-main { grid-column: span 2; } }
.tb-card { min-width: 0; border: 1px solid rgba(49, 51, 63, 0.2); border-radius: 0.5rem; padding: 0.55rem 0.7rem;
           overflow-wrap: anywhere; word-break: normal; }
.tb-main { background: rgba(28, 131, 225, 0.07); border-color: rgba(28, 131, 225, 0.45); }
.tb-label { font-size: 0.85rem; color: rgba(49, 51, 63, 0.75); line-height: 1.25; }
.tb-value { font-size: 1.55rem; font-weight: 600; line-height: 1.15; margin-top: 0.15rem; }
.tb-main .tb-value { font-size: 2.3rem; }
.tb-unit { font-size: 0.9rem; line-height: 1.25; }
.tb-small { font-size: 0.78rem; color: rgba(49, 51, 63, 0.75); line-height: 1.25; margin-top: 0.1rem; }
.tb-detail { font-size: 0.8rem; color: rgba(49, 51, 63, 0.75); line-height: 1.3; margin-top: 0.25rem; }
</style>
"""


def card_html(card: Card) -> str:
    e = html.escape
    parts = [f'<div class="tb-card{" tb-main" if card.main else ""}" data-key="{card.key}" title="{e(card.help)}">',
             f'<div class="tb-label">{e(card.label)}</div>', f'<div class="tb-value">{e(card.value)}</div>']
    if card.unit:
        parts.append(f'<div class="tb-unit">{e(card.unit)}</div>')
    if card.small:
        parts.append(f'<div class="tb-small">{e(card.small)}</div>')
    parts += [f'<div class="tb-detail">{e(line)}</div>' for line in card.details]
    return "".join(parts) + "</div>"


VERDICT_CSS = """
<style>
.tb-verdict { border: 2px solid; border-radius: 0.5rem; padding: 0.6rem 0.8rem; margin-bottom: 0.8rem;
              overflow-wrap: anywhere; line-height: 1.4; }
.tb-verdict.tb-fits { border-color: #1a7f37; background: rgba(26, 127, 55, 0.08); }
.tb-verdict.tb-fails { border-color: #b42318; background: rgba(180, 35, 24, 0.07); }
.tb-word { display: inline-block; font-weight: 700; color: #fff; border-radius: 0.3rem; padding: 0.05rem 0.45rem;
           margin-right: 0.4rem; letter-spacing: 0.03em; }
.tb-fits .tb-word { background: #1a7f37; }
.tb-fails .tb-word { background: #b42318; }
.tb-clause { font-size: 1.05rem; }
.tb-fixes-title { margin-top: 0.4rem; font-size: 0.9rem; }
.tb-fixes { margin: 0.2rem 0 0 1.2rem; padding: 0; font-size: 0.95rem; }
</style>
"""


def verdict_html(verdict, pulls_planned: int, system: str, band_on: bool) -> str:
    """The verdict as a coloured box with its word (never the colour alone) and the fixes."""
    from ..output.verdict_text import FIXES_TITLE, NO_FIX, WORDS, clause, fix_lines
    e = html.escape
    kind = "tb-fits" if verdict.fits else "tb-fails"
    parts = [VERDICT_CSS, f'<div class="tb-verdict {kind}" data-fits="{str(verdict.fits).lower()}">',
             f'<span class="tb-word">{WORDS[verdict.fits]}</span>',
             f'<span class="tb-clause">{e(clause(verdict, pulls_planned, system, band_on))}</span>']
    fixes = fix_lines(verdict, system)
    if fixes:
        parts.append(f'<div class="tb-fixes-title">{e(FIXES_TITLE[0].upper() + FIXES_TITLE[1:])}:</div>')
        parts.append('<ol class="tb-fixes">' + "".join(f"<li>{e(line)}</li>" for line in fixes) + "</ol>")
    elif not verdict.fits:
        parts.append(f'<div class="tb-fixes-title">{e(NO_FIX[0].upper() + NO_FIX[1:])}.</div>')
    return "".join(parts) + "</div>"


def cards_html(cards: list[Card]) -> str:
    return CARD_CSS + '<div class="tb-cards"><div class="tb-grid">' + "".join(map(card_html, cards)) + "</div></div>"


def section(page: PagePlan):
    answers, system, planned = page.answers, page.system, page.scenario
    name = planned.name or "This rig"
    st.subheader(name + ("  ·  calibrated from your log" if page.calibrated else ""))
    if state.name_is_stale():
        st.caption("✏️ The rig has changed since it was given this name: rename it under \"Rig name\" in the "
                   "sidebar, so the titles and the saved file say what it is now.")
    if answers.verdict is not None:
        from .page_cards import band_on
        st.markdown(verdict_html(answers.verdict, answers.pulls_planned, system, band_on(answers)),
                    unsafe_allow_html=True)
    for caution in answers.cautions:
        st.error("⚠️ " + pi.note_in(caution, system))
    view = pi.session_view(planned.raw)
    st.markdown(cards_html(headline_cards(answers, planned.reservoir.oil_volume_m3, view.wait_s, system,
                                                planned.reservoir.inner_volume_m3)),
                unsafe_allow_html=True)

    limit_text = pi.shown_celsius(answers.limit_C, system)
    if answers.limit_reason == "max_temperature":
        reason = (f"The bulk limit is {limit_text}: the hottest you allow the oil. The pump's thinnest oil "
                  f"({planned.min_viscosity_cSt:.1f} cSt) comes only at "
                  f"{pi.shown_celsius(answers.min_viscosity_temperature_C, system)}.")
    else:
        reason = (f"The bulk limit is {limit_text}: there this oil thins to {planned.min_viscosity_cSt:.1f} cSt, the "
                  f"least the pump accepts, before it reaches the {pi.shown_celsius(answers.max_temperature_C, system)} "
                  f"you allow.")
    if answers.return_line_limit_C is not None:
        reason += (f" The return line may reach {pi.shown_celsius(answers.return_line_limit_C, system)} "
                   "(its hoses and seals).")
    elif answers.peak_return_C is not None:
        reason += (" No return-line limit is set: check the hoses' and seals' rating against the return-line "
                   f"figure, {pi.shown_celsius(answers.peak_return_C, system)}.")
    st.markdown(reason)
    for note in answers.notes:
        st.caption("• " + pi.note_in(note, system))
