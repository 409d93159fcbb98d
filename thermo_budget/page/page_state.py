"""The page's state and its cached calls into the package (Streamlit only; no physics here).

The page keeps a *draft* scenario (the raw dict its inputs show, possibly invalid while being
edited) and the last scenario that loaded. Every answer and chart is cached by the scenario's TOML
text, so a value seen before redraws with nothing to compute. `PagePlan` is what the sections of
the page are drawn from.
"""
from __future__ import annotations

import time
from dataclasses import dataclass

import streamlit as st

import thermo_budget as tb
from . import page_charts
from ..errors import ScenarioError
from ..planning.results import Report
from ..planning.answers import report, simulate
from ..inputs.scenario import Scenario, load_scenario, read_toml_text

try:  # the log-calibration feature is optional: the page hides its section without it
    from ..logs.calibrate import fit_log
except ImportError:
    fit_log = None


# ------------------------------------------------------------------ cached calls into the package

def scenario_of(toml_text: str) -> Scenario:
    return load_scenario(read_toml_text(toml_text))


@st.cache_data(max_entries=64, show_spinner=False)
def trace_for(toml_text: str):
    return simulate(scenario_of(toml_text))


@st.cache_data(max_entries=64, show_spinner=False)
def answers_for(toml_text: str) -> Report:
    return report(scenario_of(toml_text), trace_for(toml_text))


@st.cache_data(max_entries=page_charts.CHARTS_KEPT, show_spinner=f"Working out the design chart ({page_charts.DESIGN_VOLUMES} × "
                                                f"{page_charts.DESIGN_COOLERS} rigs) and a hotter day…")
def slow_charts(toml_text: str, system: str) -> page_charts.SlowCharts:
    """The design chart and the hot day (page_charts.slow_charts), kept by text and unit system."""
    return page_charts.slow_charts(toml_text, system, answers_for(toml_text))


@st.cache_data(max_entries=64, show_spinner=False)
def trace_spec(toml_text: str, system: str) -> dict:
    """The temperature chart with the band's envelope, as a Vega-Lite spec for the browser."""
    return page_charts.trace_chart_spec(toml_text, system, trace_for(toml_text), answers_for(toml_text).band.envelope)


def trace_png_later(toml_text: str, system: str):
    """The temperature chart's picture, drawn only when called (a download asks for it on a click)."""
    trace, envelope = trace_for(toml_text), answers_for(toml_text).band.envelope
    return lambda: page_charts.envelope_png(toml_text, system, trace, envelope)


@st.cache_resource(max_entries=8, show_spinner="Fitting the model to the log…")
def fit_for(toml_text: str, log_text: str, sensor: str):
    return fit_log(scenario_of(toml_text), log_text, sensor)


# ------------------------------------------------------------------ session state

def start():
    """Set up the session's state on its first run: the default scenario as the draft."""
    ss = st.session_state
    if "draft" not in ss:
        default = load_scenario(tb.DEFAULT_SCENARIO)
        ss.draft = default.raw            # what the inputs show (may be invalid while being edited)
        ss.good_toml = default.to_toml()  # the last scenario that loaded
        ss.gen = 0                        # bumps on upload so that every input starts afresh
        ss.system = default.units
        ss.upload_seen, ss.upload_error = None, None
        remember_name()


def _without_name(raw: dict) -> dict:
    return {k: v for k, v in raw.items() if k not in ("name", "units")}


def remember_name():
    """Note the rig the current name was given to (on load, upload and a rename)."""
    st.session_state.named_rig = _without_name(st.session_state.draft)


def name_is_stale() -> bool:
    """True once the rig has been changed since its name was given."""
    ss = st.session_state
    return ss.get("named_rig") is not None and _without_name(ss.draft) != ss.named_rig


def system() -> str:
    return st.session_state.system


def draft() -> dict:
    return st.session_state.draft


def set_draft(raw: dict):
    st.session_state.draft = raw


def key(name: str) -> str:
    """The widget key of an input: new per unit system and per upload, so inputs start afresh."""
    ss = st.session_state
    return f"in:{name}:{ss.system}:{ss.gen}"


def edit(change, *args):
    """on_change callback: apply change(draft, *args) to the draft scenario."""
    st.session_state.draft = change(st.session_state.draft, *args)


def from_widget(change, widget_key, *args):
    """on_change callback: apply change(draft, widget value, *args)."""
    ss = st.session_state
    ss.draft = change(ss.draft, ss[widget_key], *args)


def take_upload(uploaded):
    """Open an uploaded scenario file once: it becomes the draft, or its error is kept to show."""
    ss = st.session_state
    if uploaded is not None and uploaded.file_id != ss.upload_seen:
        ss.upload_seen = uploaded.file_id
        data = uploaded.getvalue()
        try:
            try:
                text = data.decode("utf-8")
            except UnicodeDecodeError:
                raise ScenarioError(uploaded.name, "binary data", "a UTF-8 text file in TOML") from None
            loaded = load_scenario(read_toml_text(text, uploaded.name))
        except ScenarioError as error:
            ss.upload_error = f"{uploaded.name} was not opened. {error}"
        else:
            ss.draft, ss.good_toml, ss.upload_error = loaded.raw, loaded.to_toml(), None
            remember_name()
            ss.gen += 1
            ss.system = loaded.units
    elif uploaded is None:
        ss.upload_seen, ss.upload_error = None, None
    else:   # the same file as before: its error was shown on the run it was opened, and is done
        ss.upload_error = None


def load_draft():
    """(the scenario the answers are for, the error or None). A draft that does not load is
    refused and the page keeps the last scenario that did."""
    ss = st.session_state
    try:
        scenario = load_scenario(ss.draft)
    except (ScenarioError, ValueError, TypeError, KeyError) as error:
        return scenario_of(ss.good_toml), str(error)
    ss.good_toml = scenario.to_toml()
    return scenario, None


# ------------------------------------------------------------------ what the sections are drawn from

@dataclass(frozen=True)
class PagePlan:
    """What every section of the page is drawn from.

    scenario : the scenario the answers are for (calibrated from the log where the user chose so)
    toml_text : its TOML text, the key of every cached answer and chart
    answers : report(scenario), the package's own figures
    system : "SI" or "US", the unit system shown
    """
    scenario: Scenario
    toml_text: str
    answers: Report
    system: str
    calibrated: bool
    fit: object | None
    fit_error: str | None
    draft_error: str | None
    upload_error: str | None
    elapsed_s: float


def plan(current: Scenario, draft_error: str | None, drawn_from: dict) -> PagePlan:
    """The answers for the scenario the inputs now describe (reloaded where an input drawn on this
    run changed the draft), calibrated from an uploaded log where the user chose so."""
    ss = st.session_state
    if ss.draft is not drawn_from:   # the curve editor changes the draft while the page is drawn
        current, draft_error = load_draft()
    log_file = ss.get("log_upload")
    fit, fit_error = None, None
    if fit_log is not None and log_file is not None:
        try:
            fit = fit_for(ss.good_toml, log_file.getvalue().decode("utf-8", errors="replace"),
                          ss.get("log_sensor", "bulk"))
        except (ScenarioError, ValueError) as error:
            fit_error = str(error)
    calibrated = fit is not None and ss.get("use_calibrated", False)
    planned = (current.changed(losses={**current.raw.get("losses", {}), **fit.calibrated_scenario.raw.get("losses", {})},
                               uncertainty={**current.raw.get("uncertainty", {}),
                                            **fit.calibrated_scenario.raw.get("uncertainty", {})})
               if calibrated else current)
    toml_text = planned.to_toml()
    started = time.perf_counter()
    answers = answers_for(toml_text)
    return PagePlan(planned, toml_text, answers, ss.system, calibrated, fit, fit_error, draft_error,
                    ss.upload_error, time.perf_counter() - started)
