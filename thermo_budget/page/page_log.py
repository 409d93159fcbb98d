"""The page's section that learns from a temperature log (Streamlit only; the fit is calibrate.py's)."""
from __future__ import annotations

import streamlit as st

from . import page_charts
from . import page_state as state
from .page_state import PagePlan
from ..units import to_display, unit_label

try:  # the log-calibration feature is optional: the page hides its section without it
    from ..output.fit_plot import plot_fit
except ImportError:
    plot_fit = None


PARAMETER_NAMES = {"convection_multiplier": "heat loss scale", "capacity_multiplier": "heat capacity scale",
                   "start_offset_K": "start temperature offset"}


def intervals_text(ci95: dict, system: str) -> str:
    """The fit's 95 % intervals in words, e.g. "heat loss scale 0.77 to 0.82; ..."."""
    parts = []
    for name, interval in ci95.items():
        label = PARAMETER_NAMES.get(name, name.replace("_", " "))
        if interval is None:
            parts.append(f"{label}: not determined by this log")
        elif name.endswith("_K"):
            unit = unit_label("temperature_difference", system)
            low, high = (to_display(v, "temperature_difference", system) for v in interval)
            parts.append(f"{label} {low:.2f} to {high:.2f} {unit}")
        else:
            parts.append(f"{label} {interval[0]:.3f} to {interval[1]:.3f}")
    return "; ".join(parts) + "."


def section(page: PagePlan):
    if state.fit_log is None or plot_fit is None:
        return
    system = page.system
    st.divider()
    st.header("Learn from a temperature log")
    st.caption("Upload the oil temperatures logged on this rig during a real session of the planned pulls. "
               "The model's heat loss and heat capacity are scaled to match the log.")
    st.file_uploader("Temperature log (.csv)", type=["csv", "txt"], key="log_upload",
                     help="Time and oil temperature columns, as logged.")
    st.radio("Where the sensor sits", ["bulk", "return"], key="log_sensor", horizontal=True,
             format_func={"bulk": "In the tank (bulk oil)", "return": "In the return line"}.get,
             help="The model compares the log with the oil at that point.")
    if page.fit_error:
        st.error(f"The log was not used: {page.fit_error}")
    fit = page.fit
    if fit is None:
        return
    result = fit.to_dict()
    f1, f2, f3 = st.columns(3)
    f1.metric("Heat loss scale", f"{result['convection_multiplier']:.2f}",
              help="Multiplies the model's convection from tank, hoses and hardware.")
    f2.metric("Heat capacity scale", f"{result['capacity_multiplier']:.2f}",
              help="Multiplies the heat the oil, tank and hardware store per degree.")
    rms = to_display(result["rms_K"], "temperature_difference", system)
    f3.metric("Fit error (rms)", f"{rms:.2f} {unit_label('temperature_difference', system)}",
              help=f"Over {result['n_points']} logged points.")
    st.caption("95 % confidence: " + intervals_text(result["ci95"], system))
    for warning in result.get("warnings", []):
        st.warning(warning)
    for note in result.get("notes", []):
        st.caption(note)
    st.image(page_charts.png_bytes(plot_fit(fit, system)), width="stretch")
    st.toggle("Use the calibrated model for the answers above", key="use_calibrated",
              help="Plans with the heat loss and capacity learned from the log.")
