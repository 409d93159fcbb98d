"""The page's live section: follow a logger's file in a folder named at start-up and show when the
next pull may start. One call from app.py: `page_live.section(page)`.

The folder is named by `streamlit run app.py -- --log-dir FOLDER` or the environment variable
THERMO_BUDGET_LOG_DIR; with neither, there is no live section. A path typed in the browser is read
only when it resolves (symbolic links followed) to a file inside that folder: no "..", no absolute
path elsewhere, no link that leads out.
"""
from __future__ import annotations

import os
import sys
from pathlib import Path

import pandas as pd
import streamlit as st

from ..errors import ScenarioError
from ..logs.live_state import ready_text
from ..logs.live_watch import LiveWatch
from ..physics.network import NODE_NAMES
from ..inputs.scenario import load_scenario, read_toml_text
from ..units import to_display, unit_label

LOG_DIR_ENV = "THERMO_BUDGET_LOG_DIR"
LOG_DIR_OPTION = "--log-dir"
REFRESH_S = 3.0
MAX_NAME_CHARS = 255      # of a typed log-file name


def log_folder(argv=None, environ=None) -> Path | None:
    """The folder named at start-up: `--log-dir FOLDER` after `--` on the command line, else the
    environment variable; None when neither names an existing folder."""
    argv = sys.argv[1:] if argv is None else argv
    environ = os.environ if environ is None else environ
    named = None
    for i, arg in enumerate(argv):
        if arg == LOG_DIR_OPTION and i + 1 < len(argv):
            named = argv[i + 1]
        elif arg.startswith(LOG_DIR_OPTION + "="):
            named = arg.split("=", 1)[1]
    named = named or environ.get(LOG_DIR_ENV)
    if not named:
        return None
    folder = Path(named).expanduser().resolve()
    return folder if folder.is_dir() else None


def resolve_log_path(folder: Path, typed: str) -> Path:
    """The file a typed name means, if it lies inside `folder`; else ScenarioError.

    Refused: an empty name, any ".." part, an absolute path outside the folder, and a name that
    resolves (through symbolic links) to a place outside it. A file that does not exist yet is
    allowed (the logger may not have started)."""
    name = (typed or "").strip()
    if not name:
        raise ScenarioError("log file", typed, f"the name of a log file in {folder}")
    if not name.isprintable() or len(name) > MAX_NAME_CHARS:
        raise ScenarioError("log file", typed, f"a file name of at most {MAX_NAME_CHARS} printable characters "
                                               "(no NUL byte, line break or other control character)")
    given = Path(name)
    if ".." in given.parts:
        raise ScenarioError("log file", typed, f"a file inside {folder}, without '..'")
    try:
        root = Path(folder).resolve()
        resolved = (given if given.is_absolute() else root / given).resolve()
        if not resolved.is_relative_to(root) or resolved == root:
            raise ScenarioError("log file", typed, f"a file inside {folder} (links that lead out are not followed)")
        if resolved.exists() and not resolved.is_file():
            raise ScenarioError("log file", typed, "a file, not a folder")
    except (OSError, ValueError, RuntimeError) as error:     # a name the system refuses, a loop of links
        if isinstance(error, ScenarioError):
            raise
        raise ScenarioError("log file", typed, f"a file name the system accepts ({error})") from None
    return resolved


def section(page, folder: Path | None = None):
    """The live section for the page's scenario (the calibrated one where the user chose it), if a
    log folder was named at start-up."""
    live_section(page.toml_text, page.system, folder)


def live_section(toml_text: str, system: str, folder: Path | None = None):
    """The live section for a scenario's TOML text, in a unit system, if a log folder is named."""
    folder = log_folder() if folder is None else folder
    if folder is None:
        return
    st.subheader("At the rig: follow the logger live")
    st.caption("An aid for deciding when to pull, not an interlock: a relief valve and a temperature switch "
               "on the rig stay mandatory.")
    logs = sorted(folder.glob("*.csv"), key=lambda p: p.stat().st_mtime, reverse=True)
    left, right = st.columns([3, 1])
    typed = left.text_input(f"Log file in {folder}", value=logs[0].name if logs else "", key="live_log")
    sensor = right.radio("Sensor", ("bulk", "return"), horizontal=True, key="live_sensor",
                         help="where the logger's thermocouple sits: in the reservoir or in the return line")
    try:
        path = resolve_log_path(folder, typed)
    except ScenarioError as error:
        st.error(str(error))
        return
    _live_view(toml_text, system, str(path), sensor)


@st.fragment(run_every=REFRESH_S)
def _live_view(toml_text: str, system: str, path: str, sensor: str):
    state = st.session_state
    key = (toml_text, path, sensor)
    try:
        if state.get("live_key") != key:
            state.live_key, state.live_record = key, None
            state.live_watch = LiveWatch(load_scenario(read_toml_text(toml_text)), path, sensor)
        record = state.live_watch.update() or state.live_record
        state.live_record = record
    except ScenarioError as error:
        state.live_key = None
        st.error(str(error))
        return
    for message in state.live_watch.take_messages():
        st.toast(message)
    if record is None:
        st.info(f"Waiting for oil readings in {Path(path).name} …")
        return
    show_record(record, system, state.live_watch.limit_K)


def show_record(record, system: str, limit_K: float | None = None):
    """The ready time in words, large ("ready in 2 min 10 s", or over the limit "over the limit: cool
    for 9 min 40 s, then 1 more pull"), the pulls left, the nodes, the alarm and the measured
    against the forecast temperature, with the bulk limit (limit_K, where given) as a line, in the
    page's unit system. The measured readings come thinned from the watch (every one of the last
    minutes, one in every few seconds before), so a day-long log draws quickly."""
    def temperature(T_K):
        return f"{to_display(T_K, 'temperature', system):.1f} {unit_label('temperature', system)}"

    if record.alarm:
        st.error(record.alarm, icon="🔥")
    colour = "#b00020" if record.over_limit else "#1b7f3b" if record.forecast.wait_s == 0 else "#b35900"
    st.markdown(f"<div style='font-size:clamp(1.7rem,7vw,3.2rem);font-weight:700;color:{colour};line-height:1.1'>"
                f"{ready_text(record).capitalize()}</div>", unsafe_allow_html=True)
    left = record.forecast.pulls_left
    columns = st.columns(2 + len(NODE_NAMES))
    columns[0].metric("Pulls left", "all day" if left is None else str(left), help="at the planned cadence, from now")
    columns[1].metric("Oil, measured", "no reading" if record.oil_K is None else temperature(record.oil_K),
                      help="pulling" if record.in_pull else "waiting")
    for column, name, T, sd in zip(columns[2:], NODE_NAMES, record.estimate_K, record.estimate_sd_K):
        column.metric(f"{name.capitalize()}, estimated", temperature(T),
                      help=f"± {to_display(sd, 'temperature_difference', system):.1f} (one standard deviation)")
    unit = unit_label("temperature", system)
    measured = pd.Series(to_display(record.measured_oil_K, "temperature", system),
                         index=record.measured_time_s / 60.0, name=f"measured ({unit})")
    ahead = pd.Series(to_display(record.forecast.path_oil_K, "temperature", system),
                      index=record.forecast.path_time_s / 60.0, name=f"forecast ({unit})")
    frame = pd.concat([measured[~measured.index.duplicated()], ahead[~ahead.index.duplicated()]], axis=1).sort_index()
    frame = frame.interpolate(limit_area="inside") if len(frame) > 1 else frame
    if limit_K is not None:
        frame[f"limit ({unit})"] = float(to_display(limit_K, "temperature", system))
    st.line_chart(frame, x_label="log time (min)", y_label=f"oil ({unit})")
    st.caption(f"Log time {record.time_s / 60:.1f} min. The forecast runs the planned pulls from the estimated "
               "state, the next one at its ready time.")
