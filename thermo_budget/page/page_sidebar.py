"""The page's inputs, in the sidebar and grouped as the rig is: units and upload, tank, oil, pump
and loop hardware, the test session, the optional cooler. Each input edits the draft scenario
through a pure function of page_inputs (Streamlit only here; no physics)."""
from __future__ import annotations

import zlib

import pandas as pd
import streamlit as st

from . import page_inputs as pi
from . import page_state as state
from ..inputs.scenario import Scenario


# ------------------------------------------------------------------ widgets bound to the draft

def number(box, path: str, label: str | None = None, default: float = 0.0):
    """A number input bound to one key of the scenario file, in the page's unit system (default: the
    value shown where the file leaves the key out)."""
    system = state.system()
    field = pi.FIELDS[path]
    value = pi.field_value(state.draft(), field, system)
    value = default if value is None else value
    digits = pi.decimals(field.quantity, system) if field.quantity else (0 if field.integer else 2)
    as_type = int if field.integer else float
    widget_key = state.key(path)
    box.number_input(label or field.label_in(system), value=as_type(value),
                     min_value=as_type(field.minimum) if field.minimum is not None else None,
                     max_value=as_type(field.maximum) if field.maximum is not None else None,
                     step=pi.step_of(field, system), format="%d" if field.integer else f"%.{digits}f",
                     help=field.help, key=widget_key, on_change=state.from_widget,
                     args=(lambda raw, v: pi.with_field(raw, field, v, system), widget_key))


def optional_number(box, path: str):
    """A number input for an optional key: empty means the key is left out of the scenario."""
    system = state.system()
    field = pi.FIELDS[path]
    value = pi.field_value(state.draft(), field, system)
    widget_key = state.key(path)

    def change(raw, shown):
        return pi.with_path(raw, path, None) if shown is None else pi.with_field(raw, field, shown, system)

    box.number_input(field.label_in(system), value=None if value is None else float(value), placeholder="none",
                     step=pi.step_of(field, system), format=f"%.{pi.decimals(field.quantity, system)}f",
                     help=field.help, key=widget_key, on_change=state.from_widget, args=(change, widget_key))


def session_number(box, label, quantity, value_si, help_text, name, change, unit: str | None = None):
    """A number input for the pull or the wait (applies to every pull or wait of the cycle).
    quantity : a display quantity of display.py, or None for a plain number in `unit`."""
    system = state.system()
    widget_key = state.key(name)
    shown = pi.to_shown(value_si, quantity, system) if quantity else float(value_si)
    digits = pi.decimals(quantity, system) if quantity else 0
    symbol = pi.unit_symbol(quantity, system) if quantity else unit
    box.number_input(f"{label} ({symbol})" if symbol else label,
                     value=float(shown), min_value=0.0, step=pi.STEPS[quantity][system] if quantity else 50.0,
                     format=f"%.{digits}f", help=help_text, key=widget_key, on_change=state.from_widget,
                     args=(change, widget_key))


def choice(box, label, options: dict, current, help_text, name, change, radio=False):
    widget_key = state.key(name)
    keys = list(options)
    widget = box.radio if radio else box.selectbox
    widget(label, keys, index=keys.index(current) if current in keys else 0, format_func=options.get,
           help=help_text, key=widget_key, on_change=state.from_widget, args=(change, widget_key))


# ------------------------------------------------------------------ the groups of inputs

def units_and_upload():
    """The unit switch and the scenario upload, first in the sidebar (an upload must be taken
    before any input is drawn)."""
    units_box = st.sidebar.container()
    uploaded = st.sidebar.file_uploader("Open a scenario file (.toml)", type=["toml"], key="upload",
                                        help="A scenario saved from this page or written by hand. At most 1 MB.")
    state.take_upload(uploaded)
    units_box.radio("Units", pi.SYSTEMS, format_func=pi.SYSTEM_NAMES.get, key="system", horizontal=True,
                    help="Shows every input and answer in metric (°C, L, kW, bar) or US customary "
                         "(°F, gal, hp, psi, in³, BTU/hr/°F). The answers do not change.")


def tank():
    raw = state.draft()
    res = st.sidebar.expander("Tank", expanded=True)
    number(res, "reservoir.oil_volume")
    choice(res, "Tank shape", pi.SHAPES, pi.get_path(raw, "reservoir.shape"),
           "Box tanks use length and width, round ones a diameter.", "shape", pi.with_shape)
    if pi.get_path(raw, "reservoir.shape") == "cylinder":
        number(res, "reservoir.diameter")
    else:
        number(res, "reservoir.length")
        number(res, "reservoir.width")
    number(res, "reservoir.height")
    choice(res, "Tank material", pi.MATERIAL_NAMES, pi.get_path(raw, "reservoir.wall_material"),
           "What the tank is made of.", "wall_material", lambda r, v: pi.with_path(r, "reservoir.wall_material", v))
    number(res, "reservoir.wall_thickness")
    number(res, "reservoir.emissivity")
    choice(res, "Where the tank stands", pi.BOTTOMS, pi.get_path(raw, "reservoir.bottom"),
           "A tank on a stand also loses heat from its bottom; one on the floor does not.", "bottom",
           lambda r, v: pi.with_path(r, "reservoir.bottom", v), radio=True)


def oil(current: Scenario):
    raw = state.draft()
    fluid = st.sidebar.expander("Oil")
    choice(fluid, "Viscosity grade",
           {**{g: f"ISO VG {g}" for g in pi.GRADES}, pi.OTHER_GRADE: "Other: give the viscosity at 40 °C"},
           pi.grade_of(raw), "The ISO VG number on the oil's label or data sheet.", "grade",
           lambda r, v: pi.with_grade(r, v, current.oil.nu40_cSt))
    if pi.grade_of(raw) == pi.OTHER_GRADE:
        number(fluid, "fluid.viscosity_40C")
    choice(fluid, "How it thins with heat", {"vi": "Viscosity index", "nu100": "Viscosity at 100 °C"},
           pi.thinning_given_as(raw), "Either figure from the data sheet.", "thinning",
           lambda r, v: pi.with_thinning(r, v, current.oil.viscosity_index, current.oil.nu100_cSt), radio=True)
    number(fluid, "fluid.viscosity_100C" if pi.thinning_given_as(raw) == "nu100" else "fluid.viscosity_index")
    number(fluid, "fluid.density_15C")
    number(fluid, "fluid.max_temperature")
    number(fluid, "fluid.min_viscosity")
    optional_number(fluid, "fluid.flash_point")


def hardware():
    hw = st.sidebar.expander("Pump and loop hardware")
    number(hw, "pump.displacement")
    number(hw, "pump.volumetric_efficiency")
    number(hw, "hardware.mass")
    choice(hw, "Hardware material", pi.MATERIAL_NAMES, pi.get_path(state.draft(), "hardware.material"),
           "Most of the pump and valve metal.", "hw_material", lambda r, v: pi.with_path(r, "hardware.material", v))
    choice(hw, "Pump and valve mounting", pi.MOUNTINGS, pi.get_path(state.draft(), "hardware.mounting", "apart"),
           "Bolted to the tank, the pump's metal passes heat to the tank through the flange when the engine is "
           "off; apart, only through the standing oil in the hoses.", "mounting",
           lambda r, v: pi.with_path(r, "hardware.mounting", v))
    number(hw, "hardware.hose_length")
    number(hw, "hardware.hose_outer_diameter")
    number(hw, "hardware.emissivity")
    optional_number(hw, "hardware.return_line_max_temperature")


def _curve_editor(ses, view: pi.SessionView, system: str):
    """The engine curve as an editable table, and the sweep's speeds."""
    value_q = "torque" if view.curve_is_torque else "power"
    column = f"{value_q} ({pi.unit_symbol(value_q, system)})"
    table = pd.DataFrame({"speed (rpm)": [float(r) for r in view.curve_rpm],
                          column: [pi.to_shown(v, value_q, system) for v in view.curve_values]})
    edited = ses.data_editor(table, num_rows="dynamic", hide_index=True,
                             key=state.key(f"curve:{zlib.crc32((str(view.curve_rpm) + str(view.curve_values)).encode())}"))
    ses.caption("The engine curve: absorbed power or torque at each speed, in increasing speed.")
    c1, c2 = ses.columns(2)
    rpm_start = c1.number_input("Sweep from (rpm)", value=float(view.rpm_start or 0.0), min_value=0.0, step=100.0,
                                format="%.0f", key=state.key("rpm_start"), help="Engine speed at the start of the pull.")
    rpm_end = c2.number_input("Sweep to (rpm)", value=float(view.rpm_end or 0.0), min_value=0.0, step=100.0,
                              format="%.0f", key=state.key("rpm_end"), help="Engine speed at the end of the pull.")
    rows = edited.dropna()
    new_curve = (tuple(rows.iloc[:, 0].astype(float)), tuple(rows.iloc[:, 1].astype(float)))
    old_curve = (tuple(table.iloc[:, 0]), tuple(table.iloc[:, 1]))
    if new_curve != old_curve or rpm_start != (view.rpm_start or 0.0) or rpm_end != (view.rpm_end or 0.0):
        state.set_draft(pi.with_curve(state.draft(), system, new_curve[0], new_curve[1], view.curve_is_torque,
                                      rpm_start, rpm_end))


def session(current: Scenario):
    system = state.system()
    ses = st.sidebar.expander("Test session", expanded=True)
    view = pi.session_view(state.draft())
    # a pull the file gives as pressure with flow or rpm: shown (and kept, once edited) as power at its rpm
    given = next((step for step in current.cycle if step.is_pull and step.curve is None), None)
    power_W = view.power_W if view.power_W is not None or given is None else given.power_W
    rpm = view.rpm if view.rpm is not None or given is None else given.rpm
    several = view.pulls_per_cycle > 1 or view.waits_per_cycle > 1
    number(ses, "session.repeat", "Pulls planned" if view.pulls_per_cycle == 1 else "Cycles planned")
    if several:
        ses.caption(f"This scenario's cycle has {view.pulls_per_cycle} pull(s) and {view.waits_per_cycle} wait(s). "
                    "The values below apply to every pull; the waits keep their proportions.")
    mode = "curve" if view.uses_curve else "constant"

    def switch_pull_mode(raw, new_mode):
        if new_mode == mode:
            return raw
        if new_mode == "curve":
            speeds, powers_W, start, end = pi.curve_from_constant(view.power_W or 0.0, view.rpm or 3000.0)
            return pi.with_curve(raw, system, speeds, [pi.to_shown(p, "power", system) for p in powers_W],
                                 False, start, end)
        return pi.with_constant_power(raw, *pi.constant_from_curve(view))

    choice(ses, "Load during a pull", {"constant": "Constant power", "curve": "Engine curve (power against speed)"},
           mode, "Constant power, or a sweep along the engine's curve from one speed to another.", "pull_mode",
           switch_pull_mode, radio=True)
    session_number(ses, "Pull length", "pull_time", view.pull_s or 0.0, "How long each pull lasts.", "pull_s",
                   lambda raw, v: pi.with_pull(raw, system, pull_s=v))
    if view.uses_curve:
        _curve_editor(ses, view, system)
    else:
        session_number(ses, "Pull power", "power", power_W or 0.0,
                       "Power the brake absorbs during a pull; all of it ends up as heat in the oil.", "power",
                       lambda raw, v: pi.with_pull(raw, system, power=v, rpm=None if view.rpm is not None else rpm))
        session_number(ses, "Engine speed in a pull", None, rpm or 0.0,
                       "Sets the pump's flow and so the pressure across the loading valve.", "rpm",
                       lambda raw, v: pi.with_pull(raw, system, rpm=v), unit="rpm")
    session_number(ses, "Wait after each pull", "wait_time", view.wait_s, "Time between the end of one pull "
                   "and the start of the next; 0 for back-to-back pulls.", "wait",
                   lambda raw, v: pi.with_wait(raw, system, wait_min=v))
    if view.waits_per_cycle:
        choice(ses, "Engine during the wait", pi.ENGINE_IN_WAIT, view.engine,
               "Idling keeps oil flowing past the tank walls and adds a small load.", "engine",
               lambda raw, v: pi.with_wait(raw, system, engine=v), radio=True)
        if view.engine == "idle":
            session_number(ses, "Load while idling", "idle_power", view.idle_power_W,
                           "Heat the idling pump and valve still put into the oil.", "idle_power",
                           lambda raw, v: pi.with_wait(raw, system, idle_power=v))
            session_number(ses, "Idle speed", None, view.idle_rpm, "Engine speed while idling.", "idle_rpm",
                           lambda raw, v: pi.with_wait(raw, system, idle_rpm=v), unit="rpm")
    number(ses, "session.start_temperature")
    number(ses, "ambient")
    number(ses, "losses.air_speed")
    optional_number(ses, "altitude")
    number(ses, "relative_humidity")
    from ..inputs.uncertainty import DEFAULT_CONFIDENCE
    number(ses, "uncertainty.confidence", default=DEFAULT_CONFIDENCE)


def cooler(current: Scenario):
    cool = st.sidebar.expander("Oil cooler (optional)")
    fitted = pi.get_path(state.draft(), "cooler") is not None
    cooler_key = state.key("cooler_on")
    cool.toggle("Fit an oil cooler", value=fitted, key=cooler_key,
                help="An oil-to-air cooler in the return line, rated by heat removed per degree of ETD.",
                on_change=lambda: state.edit(pi.with_cooler, st.session_state[cooler_key],
                                             max(current.cooler_W_K, 10.0), current.cooler_fan))
    if fitted:
        number(cool, "cooler.specific_dissipation")
        choice(cool, "Cooler fan", pi.FANS, pi.get_path(state.draft(), "cooler.fan", "with_flow"),
               "Whether the fan also runs while the engine is off.", "fan",
               lambda raw, v: pi.with_path(raw, "cooler.fan", v), radio=True)


def name():
    """The rig's name: the headline, the chart titles and the saved file follow it."""
    widget_key = state.key("name")
    st.sidebar.text_input("Rig name", value=str(pi.get_path(state.draft(), "name", "") or ""), key=widget_key,
                          max_chars=120, help="Shown above the answers, on the charts and in the saved scenario. "
                          "Rename the rig when you change it.",
                          on_change=_rename, args=(widget_key,))


def _rename(widget_key: str):
    state.set_draft(pi.with_path(state.draft(), "name", st.session_state[widget_key].strip()))
    state.remember_name()


def rig_inputs(current: Scenario):
    """Every input of the rig and the session, in the sidebar."""
    name()
    tank()
    oil(current)
    hardware()
    session(current)
    cooler(current)
