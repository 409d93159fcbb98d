"""The page: plan a test day in the browser.  Run with `streamlit run app.py`.

Thin on purpose: one top-to-bottom flow where each section of the page is one call. The sections
live in thermo_budget/page_*.py; they ask the package for the answers and draw them. The state and
the cached calls are in page_state, the inputs in page_sidebar, the unit edge in page_inputs.
"""
import streamlit as st

from thermo_budget.page import page_bands, page_headline, page_live, page_log, page_sections, page_sidebar, page_state

st.set_page_config(page_title="Brake oil heat budget", page_icon="🛢️", layout="wide")
page_state.start()
page_sections.title()

# Inputs, in the sidebar. An upload is taken before any input is drawn.
page_sidebar.units_and_upload()
drawn_from = page_state.draft()
current, draft_error = page_state.load_draft()
page_sidebar.rig_inputs(current)

# The answers for the scenario the inputs describe, then the sections drawn from them.
page = page_state.plan(current, draft_error, drawn_from)
page_sections.errors(page)
page_live.section(page)                   # only when a log folder was named at start-up
page_headline.section(page)
page_bands.section(page)
page_sections.safety(page)
slots = page_sections.charts(page)
page_sections.schedule(page)
page_sections.hot_day(page, slots)        # worked out after the design chart, into this place
page_sections.files(page, slots)
page_sections.more_figures(page)
page_log.section(page)
page_sections.design_chart(page, slots)   # the slowest part, last, into its place; then the hot day
