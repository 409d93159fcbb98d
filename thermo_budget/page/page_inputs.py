"""The page's inputs that change the scenario file's shape: tank shape, oil grade and thinning, the
optional cooler, and the planned session (the pulls, their engine curve and the waits), edited in
the chosen unit system ("SI" or "US").

Pure functions, no Streamlit, so they can be tested on their own. A raw dict is never changed in
place; every `with_...` function returns a new one. Values written back into the raw dict are
strings with their unit ("4.75 gal", "176 degF"), so a saved scenario says what the user typed.

The field table lives in page_fields.py and the display formatting in display.py; both are
re-exported here so that `page_inputs` stays the one name the page imports.
"""
from __future__ import annotations

import copy
import math
from dataclasses import dataclass

import numpy as np

from ..physics.oil import ISO_VG_GRADES
from .page_fields import (FIELDS, PLAIN_STEPS, STEPS, Field, si_or_none, field_value, get_path,  # noqa: F401
                          step_of, with_field)
from ..display import (QUANTITIES, SYSTEM_NAMES, SYSTEMS, decimals, from_shown, note_in,  # noqa: F401
                          quantity_text, shown, shown_celsius, shown_duration, to_shown,
                          unit_symbol)
from ..inputs.scenario import with_path
from ..engine.session import shaft_power_W
from ..units import ZERO_CELSIUS_K

# ---------------------------------------------------------------- inputs that change the file's shape

SHAPES = {"box": "Box (length x width)", "cylinder": "Round (drum or cylinder)"}
BOTTOMS = {"open": "On a stand, open underneath", "floor": "Standing on the floor"}
MATERIAL_NAMES = {"steel": "Steel", "stainless": "Stainless steel", "aluminium": "Aluminium",
                  "cast_iron": "Cast iron", "polyethylene": "Polyethylene (plastic)"}
FANS = {"with_flow": "Runs only while the oil flows", "always": "Runs all the time"}
MOUNTINGS = {"apart": "Apart from the tank (joined by hoses)", "on_tank": "Bolted to the tank"}
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
        L = si_or_none(get_path(raw, "reservoir.length"), "length", "m")
        W = si_or_none(get_path(raw, "reservoir.width"), "length", "m")
        diameter = math.sqrt(4.0 * L * W / math.pi) if L and W else 0.3
        new = with_path(new, "reservoir.diameter", f"{diameter:.4g} m")
        for key in ("reservoir.length", "reservoir.width"):
            new = with_path(new, key, None)
    else:
        D = si_or_none(get_path(raw, "reservoir.diameter"), "length", "m")
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


def session_view(raw: dict) -> SessionView:
    steps = _steps(raw)
    pulls = [s for s in steps if s.get("kind") == "pull"]
    waits = [s for s in steps if s.get("kind") == "wait"]
    pull = pulls[0] if pulls else {}
    torque = "curve_torque" in pull
    curve_rpm = tuple(pull.get("curve_rpm", ()) or ())
    curve_raw = pull.get("curve_torque" if torque else "curve_power", ()) or ()
    curve_values = tuple(si_or_none(v, "torque" if torque else "power", "N*m" if torque else "W") for v in curve_raw)
    idle = next((w for w in waits if w.get("engine") == "idle"), {})
    wait_s = sum(si_or_none(w.get("duration"), "time", "s") or 0.0 for w in waits)
    return SessionView(
        pulls_per_cycle=len(pulls), waits_per_cycle=len(waits),
        pull_s=si_or_none(pull.get("duration"), "time", "s"),
        power_W=si_or_none(pull.get("power"), "power", "W") if "power" in pull else None,
        rpm=pull.get("rpm"), curve_rpm=curve_rpm, curve_values=curve_values, curve_is_torque=torque,
        rpm_start=pull.get("rpm_start"), rpm_end=pull.get("rpm_end"), wait_s=wait_s,
        engine=waits[0].get("engine", "off") if waits else "off",
        idle_power_W=si_or_none(idle.get("power", 0.0), "power", "W") or 0.0,
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
        if power is not None:     # the power typed on the page replaces an operating point given in the file
            step.pop("pressure", None)
            step.pop("flow", None)
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
                    own = si_or_none(step.get("duration"), "time", "s") or 0.0
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


def trace_csv_shown(trace, system: str) -> str:
    """The trace (design 0) as CSV in the page's units: time in s, temperatures and power in the
    display units of `system`; the column names carry the units."""
    from ..planning.answers import trace_rows
    rows = trace_rows(trace)
    t_unit = QUANTITIES["temperature"][1][system].replace("deg", "")
    p_unit = QUANTITIES["power"][1][system]
    header = ["time_s"] + [f"{name}_{t_unit}" for name in ("oil", "return", "wall", "hardware")] + [f"power_{p_unit}"]
    columns = [rows[:, 0], *(to_shown(rows[:, i] + ZERO_CELSIUS_K, "temperature", system) for i in range(1, 5)),
               to_shown(rows[:, 5], "power", system)]
    lines = [",".join(header)]
    lines += [",".join([f"{row[0]:.3f}", *(f"{v:.6g}" for v in row[1:])]) for row in np.column_stack(columns)]
    return "\n".join(lines) + "\n"
