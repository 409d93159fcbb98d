"""The page: plan a test day in the browser.  Run with `streamlit run app.py`.

Thin on purpose: it reads the inputs, asks `thermo_budget` for the answers and draws them. All the
physics and every number lives in the package; the unit edge lives in thermo_budget.page_inputs.
"""
from __future__ import annotations

import time
import zlib

import pandas as pd
import streamlit as st

import thermo_budget as tb
from thermo_budget import ScenarioError, load_scenario
from thermo_budget import page_charts
from thermo_budget import page_inputs as pi
from thermo_budget.planning import MAX_PULLS
from thermo_budget.report import report, simulate
from thermo_budget.scenario import read_toml_text
from thermo_budget.units import to_display, unit_label

try:  # the log-calibration feature is optional: the page hides its section without it
    from thermo_budget.calibrate import fit_log
    from thermo_budget.fit_plot import plot_fit
except ImportError:
    fit_log = plot_fit = None

st.set_page_config(page_title="Brake oil heat budget", page_icon="🛢️", layout="wide")
ss = st.session_state


# ------------------------------------------------------------------ cached calls into the package

def _scenario(toml_text: str):
    return load_scenario(read_toml_text(toml_text))


@st.cache_data(max_entries=64, show_spinner=False)
def trace_for(toml_text: str):
    return simulate(_scenario(toml_text))


@st.cache_data(max_entries=64, show_spinner=False)
def answers_for(toml_text: str) -> dict:
    return report(_scenario(toml_text), trace_for(toml_text))


@st.cache_resource(show_spinner=False)
def _design_charts() -> dict:
    """Design-chart PNGs by (scenario TOML, unit system), shared by every session, oldest first.
    Held by hand rather than by st.cache_data so that a cached chart shows no spinner."""
    return {}


@st.cache_data(max_entries=32, show_spinner=False)
def design_sweep_for(toml_text: str):
    return page_charts.design_sweep(toml_text, answers_for(toml_text))


def design_chart(toml_text: str, system: str, keep: int = 32) -> bytes:
    charts, key = _design_charts(), (toml_text, system)
    if key not in charts:
        with st.spinner(f"Working out the design chart ({page_charts.DESIGN_VOLUMES} × "
                        f"{page_charts.DESIGN_COOLERS} rigs)…"):
            png = page_charts.design_chart_png(toml_text, system, result=design_sweep_for(toml_text))
        while len(charts) >= keep:
            charts.pop(next(iter(charts)))
        charts[key] = png
    return charts[key]


@st.cache_data(max_entries=64, show_spinner=False)
def trace_png(toml_text: str, system: str) -> bytes:
    return page_charts.trace_chart_png(toml_text, system, trace_for(toml_text))


@st.cache_resource(max_entries=8, show_spinner="Fitting the model to the log…")
def fit_for(toml_text: str, log_text: str, sensor: str):
    return fit_log(_scenario(toml_text), log_text, sensor)


# ------------------------------------------------------------------ page state

if "draft" not in ss:
    default = load_scenario(tb.DEFAULT_SCENARIO)
    ss.draft = default.raw            # what the inputs show (may be invalid while being edited)
    ss.good_toml = default.to_toml()  # the last scenario that loaded
    ss.gen = 0                        # bumps on upload so that every input starts afresh
    ss.system = default.units
    ss.upload_seen, ss.upload_error = None, None


def _key(name: str) -> str:
    return f"in:{name}:{ss.system}:{ss.gen}"


def _edit(change, *args):
    """on_change callback: apply change(draft, *args) to the draft scenario."""
    ss.draft = change(ss.draft, *args)


def _from_widget(change, key, *args):
    """on_change callback: apply change(draft, widget value, *args)."""
    ss.draft = change(ss.draft, ss[key], *args)


def number(box, path: str, label: str | None = None):
    """A number input bound to one key of the scenario file, in the page's unit system."""
    field = pi.FIELDS[path]
    value = pi.field_value(ss.draft, field, ss.system)
    value = 0.0 if value is None else value
    digits = pi.decimals(field.quantity, ss.system) if field.quantity else (0 if field.integer else 2)
    minimum = field.minimum
    key = _key(path)
    box.number_input(label or field.label_in(ss.system),
                     value=int(value) if field.integer else float(value),
                     min_value=(int(minimum) if field.integer else float(minimum)) if minimum is not None else None,
                     max_value=(int(field.maximum) if field.integer else float(field.maximum)) if field.maximum is not None else None,
                     step=pi.step_of(field, ss.system), format="%d" if field.integer else f"%.{digits}f",
                     help=field.help, key=key, on_change=_from_widget,
                     args=(lambda raw, v: pi.with_field(raw, field, v, ss.system), key))


def session_number(box, label, quantity, value_si, help_text, name, change):
    """A number input for the pull or the wait (applies to every pull or wait of the cycle)."""
    key = _key(name)
    shown = pi.to_shown(value_si, quantity, ss.system) if quantity else float(value_si)
    digits = pi.decimals(quantity, ss.system) if quantity else 0
    box.number_input(f"{label} ({pi.unit_symbol(quantity, ss.system)})" if quantity else label,
                     value=float(shown), min_value=0.0, step=pi.STEPS[quantity][ss.system] if quantity else 50.0,
                     format=f"%.{digits}f", help=help_text, key=key, on_change=_from_widget,
                     args=(change, key))


def choice(box, label, options: dict, current, help_text, name, change, radio=False):
    key = _key(name)
    keys = list(options)
    widget = box.radio if radio else box.selectbox
    widget(label, keys, index=keys.index(current) if current in keys else 0, format_func=options.get,
           help=help_text, key=key, on_change=_from_widget, args=(change, key))


# ------------------------------------------------------------------ uploads (before any input is drawn)

st.title("Brake oil heat budget")
st.caption("How hot the oil of an uncooled hydraulic engine brake gets over the pulls you plan, "
           "and what to change when it gets too hot.")

units_box = st.sidebar.container()
uploaded = st.sidebar.file_uploader("Open a scenario file (.toml)", type=["toml"], key="upload",
                                    help="A scenario saved from this page or written by hand. At most 1 MB.")
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
        ss.gen += 1
        ss.system = loaded.units
elif uploaded is None:
    ss.upload_seen, ss.upload_error = None, None

units_box.radio("Units", pi.SYSTEMS, format_func=pi.SYSTEM_NAMES.get, key="system", horizontal=True,
                help="Shows every input and answer in metric (°C, L, kW, bar) or US customary "
                     "(°F, gal, hp, psi, in³, BTU/hr/°F). The answers do not change.")
system = ss.system



def load_draft():
    """(the scenario the answers are for, the error or None). A draft that does not load is
    refused and the page keeps the last scenario that did."""
    try:
        scenario = load_scenario(ss.draft)
    except (ScenarioError, ValueError, TypeError, KeyError) as error:
        return _scenario(ss.good_toml), str(error)
    ss.good_toml = scenario.to_toml()
    return scenario, None


# The draft as last edited; the inputs below show it.
draft_at_start = ss.draft
current, draft_error = load_draft()

# ------------------------------------------------------------------ inputs, grouped as the rig is

sb = st.sidebar
res = sb.expander("Tank", expanded=True)
number(res, "reservoir.oil_volume")
choice(res, "Tank shape", pi.SHAPES, pi.get_path(ss.draft, "reservoir.shape"),
       "Box tanks use length and width, round ones a diameter.", "shape", pi.with_shape)
if pi.get_path(ss.draft, "reservoir.shape") == "cylinder":
    number(res, "reservoir.diameter")
else:
    number(res, "reservoir.length")
    number(res, "reservoir.width")
number(res, "reservoir.height")
choice(res, "Tank material", pi.MATERIAL_NAMES, pi.get_path(ss.draft, "reservoir.wall_material"),
       "What the tank is made of.", "wall_material", lambda raw, v: pi.with_path(raw, "reservoir.wall_material", v))
number(res, "reservoir.wall_thickness")
number(res, "reservoir.emissivity")
choice(res, "Where the tank stands", pi.BOTTOMS, pi.get_path(ss.draft, "reservoir.bottom"),
       "A tank on a stand also loses heat from its bottom; one on the floor does not.", "bottom",
       lambda raw, v: pi.with_path(raw, "reservoir.bottom", v), radio=True)

fluid = sb.expander("Oil")
choice(fluid, "Viscosity grade", {**{g: f"ISO VG {g}" for g in pi.GRADES}, pi.OTHER_GRADE: "Other: give the viscosity at 40 °C"},
       pi.grade_of(ss.draft), "The ISO VG number on the oil's label or data sheet.", "grade",
       lambda raw, v: pi.with_grade(raw, v, current.oil.nu40_cSt))
if pi.grade_of(ss.draft) == pi.OTHER_GRADE:
    number(fluid, "fluid.viscosity_40C")
choice(fluid, "How it thins with heat", {"vi": "Viscosity index", "nu100": "Viscosity at 100 °C"},
       pi.thinning_given_as(ss.draft), "Either figure from the data sheet.", "thinning",
       lambda raw, v: pi.with_thinning(raw, v, current.oil.viscosity_index, current.oil.nu100_cSt), radio=True)
number(fluid, "fluid.viscosity_100C" if pi.thinning_given_as(ss.draft) == "nu100" else "fluid.viscosity_index")
number(fluid, "fluid.density_15C")
number(fluid, "fluid.max_temperature")
number(fluid, "fluid.min_viscosity")

hw = sb.expander("Pump and loop hardware")
number(hw, "pump.displacement")
number(hw, "pump.volumetric_efficiency")
number(hw, "hardware.mass")
choice(hw, "Hardware material", pi.MATERIAL_NAMES, pi.get_path(ss.draft, "hardware.material"),
       "Most of the pump and valve metal.", "hw_material", lambda raw, v: pi.with_path(raw, "hardware.material", v))
number(hw, "hardware.hose_length")
number(hw, "hardware.hose_outer_diameter")
number(hw, "hardware.emissivity")

ses = sb.expander("Test session", expanded=True)
view = pi.session_view(ss.draft)
several = view.pulls_per_cycle > 1 or view.waits_per_cycle > 1
number(ses, "session.repeat", "Pulls planned" if view.pulls_per_cycle == 1 else "Cycles planned")
if several:
    ses.caption(f"This scenario's cycle has {view.pulls_per_cycle} pull(s) and {view.waits_per_cycle} wait(s). "
                "The values below apply to every pull; the waits keep their proportions.")
mode = "curve" if view.uses_curve else "constant"
def _switch_pull_mode(raw, new_mode):
    if new_mode == mode:
        return raw
    if new_mode == "curve":
        speeds, powers_W, start, end = pi.curve_from_constant(view.power_W or 0.0, view.rpm or 3000.0)
        return pi.with_curve(raw, system, speeds, [pi.to_shown(p, "power", system) for p in powers_W],
                             False, start, end)
    return pi.with_constant_power(raw, *pi.constant_from_curve(view))


choice(ses, "Load during a pull", {"constant": "Constant power", "curve": "Engine curve (power against speed)"},
       mode, "Constant power, or a sweep along the engine's curve from one speed to another.", "pull_mode",
       _switch_pull_mode, radio=True)
session_number(ses, "Pull length", "pull_time", view.pull_s or 0.0, "How long each pull lasts.", "pull_s",
               lambda raw, v: pi.with_pull(raw, system, pull_s=v))
if view.uses_curve:
    value_q = "torque" if view.curve_is_torque else "power"
    column = f"{value_q} ({pi.unit_symbol(value_q, system)})"
    table = pd.DataFrame({"speed (rpm)": [float(r) for r in view.curve_rpm],
                          column: [pi.to_shown(v, value_q, system) for v in view.curve_values]})
    edited = ses.data_editor(table, num_rows="dynamic", hide_index=True,
                             key=_key(f"curve:{zlib.crc32((str(view.curve_rpm) + str(view.curve_values)).encode())}"))
    ses.caption("The engine curve: absorbed power or torque at each speed, in increasing speed.")
    c1, c2 = ses.columns(2)
    rpm_start = c1.number_input("Sweep from (rpm)", value=float(view.rpm_start or 0.0), min_value=0.0, step=100.0,
                                format="%.0f", key=_key("rpm_start"), help="Engine speed at the start of the pull.")
    rpm_end = c2.number_input("Sweep to (rpm)", value=float(view.rpm_end or 0.0), min_value=0.0, step=100.0,
                              format="%.0f", key=_key("rpm_end"), help="Engine speed at the end of the pull.")
    rows = edited.dropna()
    new_curve = (tuple(rows.iloc[:, 0].astype(float)), tuple(rows.iloc[:, 1].astype(float)))
    old_curve = (tuple(table.iloc[:, 0]), tuple(table.iloc[:, 1]))
    if new_curve != old_curve or rpm_start != (view.rpm_start or 0.0) or rpm_end != (view.rpm_end or 0.0):
        ss.draft = pi.with_curve(ss.draft, system, new_curve[0], new_curve[1], view.curve_is_torque, rpm_start, rpm_end)
else:
    session_number(ses, "Pull power", "power", view.power_W or 0.0,
                   "Power the brake absorbs during a pull; all of it ends up as heat in the oil.", "power",
                   lambda raw, v: pi.with_pull(raw, system, power=v))
    session_number(ses, "Engine speed in a pull", None, view.rpm or 0.0,
                   "Sets the pump's flow and so the pressure across the loading valve.", "rpm",
                   lambda raw, v: pi.with_pull(raw, system, rpm=v))
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
        session_number(ses, "Idle speed", None, view.idle_rpm, "Engine speed while idling (rpm).", "idle_rpm",
                       lambda raw, v: pi.with_wait(raw, system, idle_rpm=v))
number(ses, "session.start_temperature")
number(ses, "ambient")
number(ses, "losses.air_speed")

cool = sb.expander("Oil cooler (optional)")
fitted = pi.get_path(ss.draft, "cooler") is not None
cooler_key = _key("cooler_on")
cool.toggle("Fit an oil cooler", value=fitted, key=cooler_key,
            help="An oil-to-air cooler in the return line, rated by heat removed per degree of ETD.",
            on_change=lambda: _edit(pi.with_cooler, ss[cooler_key], max(current.cooler_W_K, 10.0),
                                    current.cooler_fan))
if fitted:
    number(cool, "cooler.specific_dissipation")
    choice(cool, "Cooler fan", pi.FANS, pi.get_path(ss.draft, "cooler.fan", "with_flow"),
           "Whether the fan also runs while the engine is off.", "fan",
           lambda raw, v: pi.with_path(raw, "cooler.fan", v), radio=True)

# ------------------------------------------------------------------ the scenario the answers are for

if ss.draft is not draft_at_start:   # the curve editor changes the draft while the page is drawn
    current, draft_error = load_draft()

log_file = ss.get("log_upload")
fit, fit_error = None, None
if fit_log is not None and log_file is not None:
    try:
        fit = fit_for(ss.good_toml, log_file.getvalue().decode("utf-8", errors="replace"), ss.get("log_sensor", "bulk"))
    except (ScenarioError, ValueError) as error:
        fit_error = str(error)
calibrated = fit is not None and ss.get("use_calibrated", False)
planned = (current.changed(losses={**current.raw.get("losses", {}), **fit.calibrated_scenario.raw.get("losses", {})})
           if calibrated else current)
toml_text = planned.to_toml()

if ss.upload_error:
    st.error(ss.upload_error + " The page keeps the scenario it had.")
if draft_error:
    st.error(f"That input was not applied: {draft_error}. The answers below are for the last inputs that worked.")

started = time.perf_counter()
answers = answers_for(toml_text)
elapsed = time.perf_counter() - started

# ------------------------------------------------------------------ headline answers

name = planned.name or "This rig"
st.subheader(name + ("  ·  calibrated from your log" if calibrated else ""))
limit_text = pi.shown_celsius(answers["limit_C"], system)
runs = answers["runs_before_limit"]
if answers["sustainable"]:
    pulls_value, pulls_text = "No limit", "This cadence can go on all day without reaching the limit."
elif runs is None:
    pulls_value, pulls_text = "Very many", f"No pull within {MAX_PULLS:,} crosses the limit."
else:
    pulls_value, pulls_text = f"{runs}", f"{runs} pulls before the oil reaches {limit_text}."

cols = st.columns([1.3, 1, 1, 1, 1])
cols[0].metric("Pulls before the limit", pulls_value,
               help="Repeating your pull and wait from the starting temperature until a pull would "
                    "take the bulk oil over the limit.")
cols[0].caption(f"Planned: {answers['pulls_under_limit']} of {answers['pulls_planned']} pulls stay under.")
ttl = answers["time_to_limit_s"]
cols[1].metric("Time to the limit", "Not reached" if ttl is None else pi.shown_duration(ttl),
               help="In the planned session, from the start of the first pull.")
cols[1].caption(f"Planned session peaks at {pi.shown_celsius(answers['peak_C'], system)}.")
wait = answers["min_wait_s"]
cols[2].metric("Wait needed between pulls", "No wait is enough" if wait is None else
               ("Not needed" if wait == 0 else pi.shown_duration(wait)),
               help="Shortest wait after every pull that lets the whole planned session finish under "
                    "the limit, without a cooler.")
cols[2].caption(f"You planned {pi.shown_duration(view.wait_s)}.")
need = answers["cooler_required_W_per_K"]
cols[3].metric("Cooler", ("Not needed" if not answers["cooler_needed"] else
                          "None is enough" if need is None else pi.shown(need, "conductance", system)),
               help="Smallest cooler (heat removed per degree of ETD) for the planned session with your "
                    "tank and waits.")
sustained = answers["cooler_required_sustained_W_per_K"]
cols[3].caption("To run all day: " + ("no cooler is enough" if sustained is None else
                                      "none" if sustained == 0 else pi.shown(sustained, "conductance", system)) + ".")
smallest = answers["min_oil_volume_L"]
cols[4].metric("Smallest tank", "Not possible" if smallest is None else pi.shown(smallest / 1000.0, "oil_volume", system),
               help="Least oil that finishes the planned session without a cooler, in a tank of the same "
                    "shape scaled to fit.")
cols[4].caption(f"You have {pi.shown(planned.reservoir.oil_volume_m3, 'oil_volume', system)}.")

if answers["limit_reason"] == "max_temperature":
    reason = (f"The limit is {limit_text}: the hottest you allow the oil. The pump's thinnest oil "
              f"({planned.min_viscosity_cSt:.1f} cSt) comes only at "
              f"{pi.shown_celsius(answers['min_viscosity_temperature_C'], system)}.")
else:
    reason = (f"The limit is {limit_text}: there this oil thins to {planned.min_viscosity_cSt:.1f} cSt, the "
              f"least the pump accepts, before it reaches the {pi.shown_celsius(answers['max_temperature_C'], system)} "
              f"you allow.")
st.markdown(f"**{pulls_text}** {reason}")
for note in answers["notes"]:
    st.caption("• " + pi.note_in(note, system))

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

# ------------------------------------------------------------------ charts, schedule, files

left, right = st.columns(2)
with left:
    st.markdown("**Temperatures through the planned session**")
    trace_image = trace_png(toml_text, system)
    st.image(trace_image, width="stretch")
right.markdown("**Design chart: more oil or a cooler?**")   # the chart itself comes last, below

st.markdown("**Ready-to-pull schedule**")
temp_unit = unit_label("temperature", system)
schedule = pd.DataFrame([{
    "pull": row["index"],
    "starts at (min)": round(row["start_s"] / 60.0, 2),
    f"oil at start ({temp_unit})": round(to_display(row["start_C"] + 273.15, "temperature", system), 1),
    f"peak ({temp_unit})": round(to_display(row["peak_C"] + 273.15, "temperature", system), 1),
    "wait before (s)": round(row["wait_before_s"], 1),
    "of it, extra (s)": round(row["extra_wait_s"], 1),
} for row in answers["schedule"]])
st.caption("Each planned pull, started after its planned wait, lengthened where needed so that the pull "
           "ends at or under the limit.")
st.dataframe(schedule, hide_index=True, width="stretch")

st.markdown("**Files**")
d1, d2, d3, d4 = st.columns(4)
d1.download_button("Scenario (.toml)", planned.changed(units=system).to_toml(), file_name="scenario.toml",
                   mime="application/toml", help="Open it again here or run it from the command line.")
d2.download_button("Trace (.csv)", pi.trace_csv_shown(trace_for(toml_text), system), file_name="trace.csv",
                   mime="text/csv", help="Temperatures against time, in the units shown.")
d3.download_button("Temperature chart (.png)", trace_image, file_name="trace.png", mime="image/png")

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
        f"- Answers worked out in {elapsed:.2f} s (instant when the inputs were seen before)")

# ------------------------------------------------------------------ learn from a temperature log

if fit_log is not None:
    st.divider()
    st.header("Learn from a temperature log")
    st.caption("Upload the oil temperatures logged on this rig during a real session of the planned pulls. "
               "The model's heat loss and heat capacity are scaled to match the log.")
    st.file_uploader("Temperature log (.csv)", type=["csv", "txt"], key="log_upload",
                     help="Time and oil temperature columns, as logged.")
    st.radio("Where the sensor sits", ["bulk", "return"], key="log_sensor", horizontal=True,
             format_func={"bulk": "In the tank (bulk oil)", "return": "In the return line"}.get,
             help="The model compares the log with the oil at that point.")
    if fit_error:
        st.error(f"The log was not used: {fit_error}")
    if fit is not None:
        result = fit.to_dict()
        f1, f2, f3 = st.columns(3)
        f1.metric("Heat loss scale", f"{result['convection_multiplier']:.2f}",
                  help="Multiplies the model's convection from tank, hoses and hardware.")
        f2.metric("Heat capacity scale", f"{result['capacity_multiplier']:.2f}",
                  help="Multiplies the heat the oil, tank and hardware store per degree.")
        rms = to_display(result["rms_K"], "temperature_difference", system)
        f3.metric("Fit error (rms)", f"{rms:.2f} {unit_label('temperature_difference', system)}",
                  help=f"Over {result['n_points']} logged points.")
        st.caption(f"95 % confidence: {result['ci95']}")
        for warning in result.get("warnings", []):
            st.warning(warning)
        for note in result.get("notes", []):
            st.caption(note)
        st.image(page_charts.png_bytes(plot_fit(fit, system)), width="stretch")
        st.toggle("Use the calibrated model for the answers above", key="use_calibrated",
                  help="Plans with the heat loss and capacity learned from the log.")

# ------------------------------------------------------------------ the design chart, last

# The slowest part of the page (a sweep over 100 rigs) is drawn into its place once everything else
# is up; until then the page keeps showing the previous chart.
with right:
    design_image = design_chart(toml_text, system)
    st.image(design_image, width="stretch")
d4.download_button("Design chart (.png)", design_image, file_name="design_chart.png", mime="image/png")
