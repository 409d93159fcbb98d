"""The page's side of the units edge: widget values in the chosen unit system ("SI" or "US") to and
from the scenario's raw dict, and answers formatted for display.

Pure functions, no Streamlit, so they can be tested on their own. A raw dict is never changed in
place; every `with_...` function returns a new one. Values written back into the raw dict are
strings with their unit ("4.75 gal", "176 degF"), so a saved scenario says what the user typed.
"""
from __future__ import annotations

import copy
import math
import re
from dataclasses import dataclass

import numpy as np

from .errors import ScenarioError
from .materials import MATERIALS
from .oil import ISO_VG_GRADES
from .scenario import with_path
from .session import shaft_power_W
from .units import SI_UNIT, UNIT_LABEL, convert, parse_quantity

SYSTEMS = ("SI", "US")
SYSTEM_NAMES = {"SI": "Metric", "US": "US customary"}

# Display quantities: name -> (kind of thermo_budget.units.SI_UNIT, display unit per system,
# decimals shown per system).
QUANTITIES = {
    "oil_volume": ("volume", {"SI": "L", "US": "gal"}, {"SI": 1, "US": 2}),
    "dimension": ("length", {"SI": "m", "US": "in"}, {"SI": 3, "US": 1}),
    "thickness": ("length", {"SI": "mm", "US": "in"}, {"SI": 1, "US": 3}),
    "hose_length": ("length", {"SI": "m", "US": "ft"}, {"SI": 2, "US": 1}),
    "hose_diameter": ("length", {"SI": "mm", "US": "in"}, {"SI": 1, "US": 2}),
    "temperature": ("temperature", {"SI": "degC", "US": "degF"}, {"SI": 1, "US": 1}),
    "density": ("density", {"SI": "kg/m^3", "US": "lb/ft^3"}, {"SI": 0, "US": 1}),
    "viscosity": ("kinematic_viscosity", {"SI": "cSt", "US": "cSt"}, {"SI": 1, "US": 1}),
    "displacement": ("volume", {"SI": "cm^3", "US": "in^3"}, {"SI": 1, "US": 3}),
    "mass": ("mass", {"SI": "kg", "US": "lb"}, {"SI": 1, "US": 1}),
    "air_speed": ("speed", {"SI": "m/s", "US": "ft/s"}, {"SI": 1, "US": 1}),
    "conductance": ("conductance", {"SI": "W/K", "US": "BTU/hr/delta_degF"}, {"SI": 1, "US": 1}),
    "power": ("power", {"SI": "kW", "US": "hp"}, {"SI": 2, "US": 1}),
    "idle_power": ("power", {"SI": "W", "US": "hp"}, {"SI": 0, "US": 3}),
    "torque": ("torque", {"SI": "N*m", "US": "lbf*ft"}, {"SI": 1, "US": 1}),
    "pull_time": ("time", {"SI": "s", "US": "s"}, {"SI": 1, "US": 1}),
    "wait_time": ("time", {"SI": "min", "US": "min"}, {"SI": 2, "US": 2}),
}

def to_shown(value_si, quantity: str, system: str):
    """An SI value (K, m^3, W, ...; float or array) in the display unit of `quantity` in `system`."""
    kind, unit, _ = QUANTITIES[quantity]
    return convert(value_si, SI_UNIT[kind], unit[system])


def from_shown(value, quantity: str, system: str):
    """A value in the display unit of `quantity` in `system` (float or array), back in SI."""
    kind, unit, _ = QUANTITIES[quantity]
    return convert(value, unit[system], SI_UNIT[kind])


def unit_symbol(quantity: str, system: str) -> str:
    return UNIT_LABEL[QUANTITIES[quantity][1][system]]


def decimals(quantity: str, system: str) -> int:
    return QUANTITIES[quantity][2][system]


def quantity_text(value: float, quantity: str, system: str) -> str:
    """A display value as the unit string the scenario file takes, e.g. "4.75 gal"."""
    return f"{value:.6g} {QUANTITIES[quantity][1][system]}"


def shown(value_si: float | None, quantity: str, system: str, digits: int | None = None) -> str:
    """An SI value formatted for the page with its unit symbol, e.g. "176.0 °F"."""
    if value_si is None:
        return "n/a"
    digits = decimals(quantity, system) if digits is None else digits
    return f"{to_shown(value_si, quantity, system):,.{digits}f} {unit_symbol(quantity, system)}"


def shown_celsius(value_C: float | None, system: str) -> str:
    """A report temperature (degC) formatted in the page's system."""
    return "n/a" if value_C is None else shown(value_C + 273.15, "temperature", system)


def shown_duration(seconds: float | None) -> str:
    """A duration as "45 s", "3 min 20 s" or "2 h 05 min"."""
    if seconds is None:
        return "n/a"
    seconds = float(seconds)
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 3600:
        minutes, rest = divmod(round(seconds), 60)
        return f"{minutes} min {rest:02d} s"
    hours, rest = divmod(round(seconds / 60), 60)
    return f"{hours} h {rest:02d} min"


# ---------------------------------------------------------------- raw dict access

def get_path(raw: dict, path: str, default=None):
    """raw["a"]["b"] for path "a.b", or default where a table or the key is missing."""
    table = raw
    for part in path.split("."):
        if not isinstance(table, dict) or part not in table:
            return default
        table = table[part]
    return table


@dataclass(frozen=True)
class Field:
    """One input that maps to one key of the scenario file.

    quantity : a QUANTITIES name, or None for a plain number (emissivity, efficiency, counts).
    bare_unit : the unit scenario.py gives a bare number at this key.
    """
    path: str
    label: str
    help: str
    quantity: str | None = None
    bare_unit: str = ""
    minimum: float | None = 0.0
    maximum: float | None = None
    integer: bool = False

    def label_in(self, system: str) -> str:
        return f"{self.label} ({unit_symbol(self.quantity, system)})" if self.quantity else self.label


FIELDS = {f.path: f for f in [
    Field("ambient", "Room temperature", "Air temperature around the rig during the session.",
          "temperature", "degC", minimum=None),
    Field("reservoir.oil_volume", "Oil in the tank", "Oil volume, as filled at room temperature (15 °C reference).",
          "oil_volume", "L"),
    Field("reservoir.length", "Tank length", "Outside length of the box tank.", "dimension", "m"),
    Field("reservoir.width", "Tank width", "Outside width of the box tank.", "dimension", "m"),
    Field("reservoir.diameter", "Tank diameter", "Outside diameter of the round tank or drum.", "dimension", "m"),
    Field("reservoir.height", "Tank height", "Outside height of the tank.", "dimension", "m"),
    Field("reservoir.wall_thickness", "Wall thickness", "Sheet or wall thickness of the tank.", "thickness", "mm"),
    Field("reservoir.emissivity", "Tank surface emissivity",
          "How well the outside radiates heat: about 0.9 painted or plastic, 0.1 bare shiny metal.",
          maximum=1.0),
    Field("fluid.viscosity_40C", "Viscosity at 40 °C", "From the oil's data sheet.", "viscosity", "cSt"),
    Field("fluid.viscosity_100C", "Viscosity at 100 °C", "From the oil's data sheet.", "viscosity", "cSt"),
    Field("fluid.viscosity_index", "Viscosity index",
          "From the data sheet; higher means the oil thins less as it heats (about 95-105 for plain mineral oil).",
          minimum=-100.0, maximum=400.0),
    Field("fluid.density_15C", "Oil density at 15 °C", "From the data sheet; mineral oils are near 870 kg/m³.",
          "density", "kg/m^3"),
    Field("fluid.max_temperature", "Hottest the oil may get",
          "Your limit for the bulk oil: seals, hoses and the oil's own rating decide it.", "temperature", "degC",
          minimum=None),
    Field("fluid.min_viscosity", "Thinnest oil the pump accepts",
          "The pump maker's minimum working viscosity; the oil thins as it heats.", "viscosity", "cSt"),
    Field("pump.displacement", "Pump displacement", "Volume the pump moves per shaft revolution.",
          "displacement", "cm^3"),
    Field("pump.volumetric_efficiency", "Pump volumetric efficiency",
          "Delivered flow over displacement x speed; 0.85-0.95 for a gear pump in good order.", maximum=1.0),
    Field("hardware.mass", "Metal in the loop", "Pump, valve block and fittings that warm with the oil.",
          "mass", "kg"),
    Field("hardware.hose_length", "Hose length", "Total length of hose the oil flows through.",
          "hose_length", "m"),
    Field("hardware.hose_outer_diameter", "Hose outside diameter", "Measured over the hose cover.",
          "hose_diameter", "mm"),
    Field("hardware.emissivity", "Hardware surface emissivity",
          "About 0.9-0.95 for rubber hose and painted or rusty iron.", maximum=1.0),
    Field("losses.air_speed", "Air speed across the rig", "0 for still air; a shop fan gives 1-3 m/s.",
          "air_speed", "m/s"),
    Field("cooler.specific_dissipation", "Cooler size",
          "Heat the cooler removes per degree between the oil going in and the air.", "conductance", "W/K"),
    Field("session.start_temperature", "Oil temperature at the start", "Usually room temperature for a cold rig.",
          "temperature", "degC", minimum=None),
    Field("session.repeat", "Pulls planned", "How many times the pull and its wait are repeated.",
          minimum=1, maximum=10000, integer=True),
]}


def field_value(raw: dict, field: Field, system: str):
    """The value at a field's key, in the display unit of `system`; None where missing or unreadable."""
    value = get_path(raw, field.path)
    if value is None:
        return None
    if field.quantity is None:
        return value if isinstance(value, (int, float)) and not isinstance(value, bool) else None
    try:
        si = parse_quantity(value, field.path, QUANTITIES[field.quantity][0], field.bare_unit)
    except ScenarioError:
        return None
    return to_shown(si, field.quantity, system)


def with_field(raw: dict, field: Field, value, system: str) -> dict:
    """raw with a field set from a display value (a unit string for quantities, a number otherwise)."""
    if field.quantity is None:
        return with_path(raw, field.path, int(value) if field.integer else float(value))
    return with_path(raw, field.path, quantity_text(float(value), field.quantity, system))


# ---------------------------------------------------------------- inputs that change the file's shape

SHAPES = {"box": "Box (length x width)", "cylinder": "Round (drum or cylinder)"}
BOTTOMS = {"open": "On a stand, open underneath", "floor": "Standing on the floor"}
WALL_MATERIALS = tuple(MATERIALS)
MATERIAL_NAMES = {"steel": "Steel", "stainless": "Stainless steel", "aluminium": "Aluminium",
                  "cast_iron": "Cast iron", "polyethylene": "Polyethylene (plastic)"}
FANS = {"with_flow": "Runs only while the oil flows", "always": "Runs all the time"}
ENGINE_IN_WAIT = {"off": "Engine off (no oil flow)", "idle": "Engine idling (oil flowing)"}
GRADES = ISO_VG_GRADES
OTHER_GRADE = "other"


def with_shape(raw: dict, shape: str) -> dict:
    """Switch the tank between box and round, keeping its footprint area and height."""
    old = get_path(raw, "reservoir.shape")
    if shape == old:
        return raw
    new = with_path(raw, "reservoir.shape", shape)
    if shape == "cylinder":
        L = _si(get_path(raw, "reservoir.length"), "length", "m")
        W = _si(get_path(raw, "reservoir.width"), "length", "m")
        diameter = math.sqrt(4.0 * L * W / math.pi) if L and W else 0.3
        new = with_path(new, "reservoir.diameter", f"{diameter:.4g} m")
        for key in ("reservoir.length", "reservoir.width"):
            new = with_path(new, key, None)
    else:
        D = _si(get_path(raw, "reservoir.diameter"), "length", "m")
        side = math.sqrt(math.pi / 4.0) * D if D else 0.3
        new = with_path(new, "reservoir.length", f"{side:.4g} m")
        new = with_path(new, "reservoir.width", f"{side:.4g} m")
        new = with_path(new, "reservoir.diameter", None)
    return new


def grade_of(raw: dict):
    """The ISO VG grade of the fluid, or OTHER_GRADE where it is given as a viscosity at 40 degC."""
    grade = get_path(raw, "fluid.iso_vg")
    return grade if grade is not None else OTHER_GRADE


def with_grade(raw: dict, grade, nu40_cSt: float) -> dict:
    """Set the fluid by ISO VG grade, or (grade OTHER_GRADE) by its viscosity at 40 degC."""
    if grade == OTHER_GRADE:
        new = with_path(raw, "fluid.iso_vg", None)
        return with_path(new, "fluid.viscosity_40C", f"{nu40_cSt:.4g} cSt")
    new = with_path(raw, "fluid.viscosity_40C", None)
    return with_path(new, "fluid.iso_vg", int(grade))


def thinning_given_as(raw: dict) -> str:
    """How the fluid's thinning with heat is given: "vi" (viscosity index) or "nu100" (at 100 degC)."""
    return "nu100" if get_path(raw, "fluid.viscosity_100C") is not None else "vi"


def with_thinning(raw: dict, given_as: str, viscosity_index: float, nu100_cSt: float) -> dict:
    if given_as == "nu100":
        new = with_path(raw, "fluid.viscosity_index", None)
        return with_path(new, "fluid.viscosity_100C", f"{nu100_cSt:.4g} cSt")
    new = with_path(raw, "fluid.viscosity_100C", None)
    return with_path(new, "fluid.viscosity_index", round(float(viscosity_index), 1))


def with_cooler(raw: dict, fitted: bool, size_W_K: float = 0.0, fan: str = "with_flow") -> dict:
    """Fit (or remove) the optional oil cooler, sized in W/K of ETD."""
    if not fitted:
        return with_path(raw, "cooler", None)
    return with_path(raw, "cooler", {"specific_dissipation": f"{size_W_K:.6g} W/K", "fan": fan})


# ---------------------------------------------------------------- the session: the pulls and the waits

@dataclass(frozen=True)
class SessionView:
    """The planned cycle as the page edits it, in SI. The page's values apply to every pull and
    every wait of the cycle; the waits of one cycle add up to wait_s and keep their proportions.

    curve_rpm, curve_values : engine curve (rev/min; W or N*m as curve_is_torque says), empty for a
    constant-power pull.
    """
    pulls_per_cycle: int
    waits_per_cycle: int
    pull_s: float | None
    power_W: float | None
    rpm: float | None
    curve_rpm: tuple
    curve_values: tuple
    curve_is_torque: bool
    rpm_start: float | None
    rpm_end: float | None
    wait_s: float
    engine: str
    idle_power_W: float
    idle_rpm: float

    @property
    def uses_curve(self) -> bool:
        return bool(self.curve_rpm)


DEFAULT_IDLE_RPM = 1000.0   # a starting value for the idle speed input only (common practice, no source)


def _steps(raw):
    steps = get_path(raw, "session.steps", [])
    return [s for s in steps if isinstance(s, dict)] if isinstance(steps, list) else []


def _si(value, kind, bare):
    try:
        return parse_quantity(value, "", kind, bare)
    except ScenarioError:
        return None


def session_view(raw: dict) -> SessionView:
    steps = _steps(raw)
    pulls = [s for s in steps if s.get("kind") == "pull"]
    waits = [s for s in steps if s.get("kind") == "wait"]
    pull = pulls[0] if pulls else {}
    torque = "curve_torque" in pull
    curve_rpm = tuple(pull.get("curve_rpm", ()) or ())
    curve_raw = pull.get("curve_torque" if torque else "curve_power", ()) or ()
    curve_values = tuple(_si(v, "torque" if torque else "power", "N*m" if torque else "W") for v in curve_raw)
    idle = next((w for w in waits if w.get("engine") == "idle"), {})
    wait_s = sum(_si(w.get("duration"), "time", "s") or 0.0 for w in waits)
    return SessionView(
        pulls_per_cycle=len(pulls), waits_per_cycle=len(waits),
        pull_s=_si(pull.get("duration"), "time", "s"),
        power_W=_si(pull.get("power"), "power", "W") if "power" in pull else None,
        rpm=pull.get("rpm"), curve_rpm=curve_rpm, curve_values=curve_values, curve_is_torque=torque,
        rpm_start=pull.get("rpm_start"), rpm_end=pull.get("rpm_end"), wait_s=wait_s,
        engine=waits[0].get("engine", "off") if waits else "off",
        idle_power_W=_si(idle.get("power", 0.0), "power", "W") or 0.0,
        idle_rpm=float(idle.get("rpm", DEFAULT_IDLE_RPM)))


def _with_steps(raw, steps):
    return with_path(raw, "session.steps", steps)


def with_pull(raw: dict, system: str, pull_s: float | None = None, power: float | None = None,
              rpm: float | None = None) -> dict:
    """Set the duration (s), constant power (display unit) or speed (rev/min) of every pull."""
    steps = copy.deepcopy(_steps(raw))
    for step in steps:
        if step.get("kind") != "pull":
            continue
        if pull_s is not None:
            step["duration"] = f"{pull_s:.6g} s"
        if power is not None:
            step["power"] = quantity_text(power, "power", system)
        if rpm is not None:
            step["rpm"] = float(rpm)
    return _with_steps(raw, steps)


def with_curve(raw: dict, system: str, curve_rpm, curve_values, is_torque: bool,
               rpm_start: float, rpm_end: float) -> dict:
    """Make every pull follow an engine curve: speeds (rev/min) and power or torque (display unit),
    swept from rpm_start to rpm_end over the pull."""
    quantity = "torque" if is_torque else "power"
    steps = copy.deepcopy(_steps(raw))
    for step in steps:
        if step.get("kind") != "pull":
            continue
        for key in ("power", "rpm", "curve_power", "curve_torque"):
            step.pop(key, None)
        step["curve_rpm"] = [float(r) for r in curve_rpm]
        step["curve_torque" if is_torque else "curve_power"] = [quantity_text(float(v), quantity, system)
                                                                for v in curve_values]
        step["rpm_start"], step["rpm_end"] = float(rpm_start), float(rpm_end)
    return _with_steps(raw, steps)


def with_constant_power(raw: dict, power_W: float, rpm: float) -> dict:
    """Make every pull a constant-power pull (W at rev/min), dropping any engine curve."""
    steps = copy.deepcopy(_steps(raw))
    for step in steps:
        if step.get("kind") != "pull":
            continue
        for key in ("curve_rpm", "curve_power", "curve_torque", "rpm_start", "rpm_end"):
            step.pop(key, None)
        step["power"], step["rpm"] = f"{power_W:.6g} W", float(rpm)
    return _with_steps(raw, steps)


def curve_from_constant(power_W: float, rpm: float):
    """A flat starting curve for the curve editor: the constant power from 0.75 to 1.25 x rpm."""
    speeds = (round(0.75 * rpm), round(rpm), round(1.25 * rpm))
    return speeds, (power_W,) * 3, speeds[0], speeds[-1]


def with_wait(raw: dict, system: str, wait_min: float | None = None, engine: str | None = None,
              idle_power: float | None = None, idle_rpm: float | None = None) -> dict:
    """Set the waits of every cycle: their total (minutes; 0 means back-to-back pulls), the engine
    during them ("off" or "idle"), and the idling load (display unit) and speed (rev/min)."""
    view = session_view(raw)
    steps = copy.deepcopy(_steps(raw))
    if wait_min is not None:
        total_s = float(wait_min) * 60.0
        if total_s <= 0.0:
            steps = [s for s in steps if s.get("kind") != "wait"]
        elif view.waits_per_cycle == 0 or view.wait_s <= 0.0:
            steps = [s for s in steps if s.get("kind") != "wait"]
            steps.append({"kind": "wait", "duration": f"{total_s:.6g} s", "engine": view.engine})
            if view.engine == "idle":
                steps[-1].update(power=f"{view.idle_power_W:.6g} W", rpm=view.idle_rpm)
        else:
            scale = total_s / view.wait_s
            for step in steps:
                if step.get("kind") == "wait":
                    own = _si(step.get("duration"), "time", "s") or 0.0
                    step["duration"] = f"{own * scale:.6g} s"
    for step in steps:
        if step.get("kind") != "wait":
            continue
        if engine is not None:
            step["engine"] = engine
        if step.get("engine") == "idle":
            step.setdefault("power", f"{view.idle_power_W:.6g} W")
            step.setdefault("rpm", view.idle_rpm)
            if idle_power is not None:
                step["power"] = quantity_text(idle_power, "idle_power", system)
            if idle_rpm is not None:
                step["rpm"] = float(idle_rpm)
        else:
            step.pop("power", None)
            step.pop("rpm", None)
    return _with_steps(raw, steps)


# ---------------------------------------------------------------- outputs the page offers

def trace_csv_shown(trace, system: str) -> str:
    """The trace (design 0) as CSV in the page's units: time in s, temperatures and power in the
    display units of `system`; the column names carry the units."""
    from .report import trace_rows
    rows = trace_rows(trace)
    t_unit = QUANTITIES["temperature"][1][system].replace("deg", "")
    p_unit = QUANTITIES["power"][1][system]
    header = ["time_s"] + [f"{name}_{t_unit}" for name in ("oil", "return", "wall", "hardware")] + [f"power_{p_unit}"]
    columns = [rows[:, 0], *(to_shown(rows[:, i] + 273.15, "temperature", system) for i in range(1, 5)),
               to_shown(rows[:, 5], "power", system)]
    lines = [",".join(header)]
    lines += [",".join([f"{row[0]:.3f}", *(f"{v:.6g}" for v in row[1:])]) for row in np.column_stack(columns)]
    return "\n".join(lines) + "\n"


# Step of the +/- buttons of each input, by display quantity and system.
STEPS = {"oil_volume": {"SI": 1.0, "US": 0.25}, "dimension": {"SI": 0.01, "US": 0.5},
         "thickness": {"SI": 0.5, "US": 0.01}, "hose_length": {"SI": 0.5, "US": 1.0},
         "hose_diameter": {"SI": 1.0, "US": 0.05}, "temperature": {"SI": 1.0, "US": 2.0},
         "density": {"SI": 5.0, "US": 0.5}, "viscosity": {"SI": 0.5, "US": 0.5},
         "displacement": {"SI": 1.0, "US": 0.05}, "mass": {"SI": 0.5, "US": 1.0},
         "air_speed": {"SI": 0.5, "US": 1.0}, "conductance": {"SI": 1.0, "US": 2.0},
         "power": {"SI": 0.5, "US": 1.0}, "idle_power": {"SI": 10.0, "US": 0.01},
         "torque": {"SI": 1.0, "US": 1.0}, "pull_time": {"SI": 1.0, "US": 1.0}, "wait_time": {"SI": 0.5, "US": 0.5}}
PLAIN_STEPS = {"reservoir.emissivity": 0.05, "hardware.emissivity": 0.05, "pump.volumetric_efficiency": 0.01,
               "fluid.viscosity_index": 1.0, "session.repeat": 1}


def step_of(field: Field, system: str):
    return STEPS[field.quantity][system] if field.quantity else PLAIN_STEPS.get(field.path, 0.01)


_NUMBER_UNIT = re.compile(r"(-?\d+(?:\.\d+)?) (degC|W/K|L)\b")


def note_in(note: str, system: str) -> str:
    """A report note with its "80.0 degC", "12 W/K" and "40 L" figures restated in `system`."""
    def restate(match):
        value, unit = float(match.group(1)), match.group(2)
        if unit == "degC":
            return shown(value + 273.15, "temperature", system)
        if unit == "W/K":
            return shown(value, "conductance", system)
        return shown(value / 1000.0, "oil_volume", system)
    return _NUMBER_UNIT.sub(restate, note)


def constant_from_curve(view: SessionView):
    """(power W, rpm) of a constant-power pull standing in for an engine-curve pull: the curve's
    highest power over its sweep (a torque curve converted by session.shaft_power_W)."""
    low, high = sorted((view.rpm_start or 0.0, view.rpm_end or 0.0))
    points = [(n, float(shaft_power_W(v, n)) if view.curve_is_torque else v)
              for n, v in zip(view.curve_rpm, view.curve_values) if low <= n <= high and v is not None]
    if not points:
        return 1000.0, 3000.0
    rpm, power = max(points, key=lambda p: p[1])
    return float(power), float(rpm)
