"""The planned session's steps in a scenario file: a pull at a fixed power, at the operating point
read on the rig (pressure with flow or rpm: P = dp Q), or along an engine curve; a wait with the
engine off or idling. Each step is read and checked by its key path, session.steps[i]."""
from __future__ import annotations

import re

from ..errors import ScenarioError
from .scenario_table import _Table
from ..engine.session import EngineCurve, Step, pump_flow_m3_s, shaft_power_W

# The least mean power a pull may absorb, W: far below any engine on a brake (a pull of less heats
# nothing the model could show, and its energy balance would be relative to almost no heat).
MIN_PULL_POWER_W = 1.0


# A pull given with pressure, flow and rpm: the flow read on the rig and the pump's own flow at that
# rpm (displacement x rpm x volumetric efficiency) may differ by this share before a warning names
# them (a flow meter and a pump's data agree to within about 10 %; common practice, no source).
FLOW_DISAGREEMENT = 0.15


OPERATING_POINT_HELP = ('pressure and flow as two keys, e.g. pressure = "150 bar" and flow = "20 L/min" (or pressure with '
                        'the pull\'s rpm, the flow then being the pump\'s displacement x rpm x its volumetric '
                        'efficiency), in place of power')


def _pull_power(t, raw, displacement_m3: float, volumetric_efficiency: float) -> tuple[float, float]:
    """(absorbed power W, rpm) of a constant pull: `power` with `rpm`, or the operating point a user
    reads off the rig, `pressure` across pump and valve with `flow` or with `rpm`: P = dp Q, where
    Q = D n eta_v when only rpm is given (n from Q the same way when only flow is given)."""
    given = [key for key in ("power", "pressure", "flow") if key in raw]
    if "power" in raw:
        value = raw["power"]
        if isinstance(value, str) and len(re.findall(r"\d+(?:\.\d*)?", value)) > 1 and re.search(r"[*x×]", value):
            raise ScenarioError(t.key("power"), value, f"one quantity; for a pressure times a flow write {OPERATING_POINT_HELP}")
        if len(given) > 1:
            raise ScenarioError(t.key(given[1]), raw[given[1]], "either power, or pressure with flow or rpm, not both")
        return (t.quantity("power", "power", "W", minimum=MIN_PULL_POWER_W),
                t.number("rpm", minimum=100.0, maximum=30000.0))
    if "pressure" not in raw:
        if "flow" in raw:
            raise ScenarioError(t.key("pressure"), None, f"a pressure beside the flow ({OPERATING_POINT_HELP})")
        t.get("power")    # missing: the usual message, with its "did you mean"
    pressure = t.quantity("pressure", "pressure", "bar", above=0.0)
    per_rev = displacement_m3 * volumetric_efficiency / 60.0          # m^3/s per rev/min
    if "flow" in raw:
        flow = t.quantity("flow", "flow", "L/min", above=0.0)
        rpm = (t.number("rpm", minimum=100.0, maximum=30000.0) if "rpm" in raw else flow / per_rev)
        if not 100.0 <= rpm <= 30000.0:
            raise ScenarioError(t.key("flow"), raw["flow"], f"a flow this pump gives between 100 and 30000 rpm "
                                f"(it would take {rpm:.0f} rpm); or give the pull's rpm as well")
    elif "rpm" in raw:
        rpm = t.number("rpm", minimum=100.0, maximum=30000.0)
        flow = float(pump_flow_m3_s(displacement_m3, rpm, volumetric_efficiency))
    else:
        raise ScenarioError(t.key("flow"), None, f"a flow or an rpm beside the pressure ({OPERATING_POINT_HELP})")
    if pressure * flow < MIN_PULL_POWER_W:
        raise ScenarioError(t.key("pressure"), raw["pressure"], f"a pressure and flow that absorb at least "
                            f"{MIN_PULL_POWER_W:g} W (this one: {pressure * flow:.3g} W)")
    return pressure * flow, rpm


def parse_step(raw, path: str, displacement_m3: float, system: str = "SI", volumetric_efficiency: float = 1.0) -> Step:
    t = _Table(raw, path, system=system)
    kind = t.choice("kind", ("pull", "wait"))
    duration = t.quantity("duration", "time", "s", above=0.0)
    if kind == "pull":
        if "curve_rpm" in raw:
            speeds = _number_list(t, "curve_rpm", minimum=0.0)
            if "curve_torque" in raw:
                torque = _quantity_list(t, "curve_torque", "torque", "N*m", len(speeds))
                power = [float(shaft_power_W(tau, n)) for tau, n in zip(torque, speeds)]
            else:
                power = _quantity_list(t, "curve_power", "power", "W", len(speeds))
            if any(b <= a for a, b in zip(speeds, speeds[1:])):
                raise ScenarioError(t.key("curve_rpm"), raw["curve_rpm"], "speeds in increasing order")
            rpm_start = t.number("rpm_start", minimum=100.0, maximum=30000.0)
            rpm_end = t.number("rpm_end", minimum=100.0, maximum=30000.0)
            for key, value in (("rpm_start", rpm_start), ("rpm_end", rpm_end)):
                if not speeds[0] <= value <= speeds[-1]:
                    raise ScenarioError(t.key(key), value, f"a speed within the curve, {speeds[0]:g} to {speeds[-1]:g} rpm")
            step = Step(kind="pull", duration_s=duration, engine="on",
                        curve=EngineCurve(rpm=tuple(speeds), power_W=tuple(power)),
                        rpm_start=rpm_start, rpm_end=rpm_end)
            if not step.mean_power_W(0.0, 1.0) >= MIN_PULL_POWER_W:
                curve_key = "curve_torque" if "curve_torque" in raw else "curve_power"
                raise ScenarioError(t.key(curve_key), raw[curve_key],
                                    f"a curve that absorbs at least {MIN_PULL_POWER_W:g} W on average between "
                                    "rpm_start and rpm_end")
        else:
            power, rpm = _pull_power(t, raw, displacement_m3, volumetric_efficiency)
            step = Step(kind="pull", duration_s=duration, engine="on", power_W=power, rpm=rpm)
    else:
        engine = t.choice("engine", ("off", "idle"))
        if engine == "idle":
            step = Step(kind="wait", duration_s=duration, engine="idle",
                        power_W=t.quantity("power", "power", "W", minimum=0.0), rpm=t.number("rpm", minimum=100.0, maximum=30000.0))
        else:
            step = Step(kind="wait", duration_s=duration, engine="off")
    t.finish()
    return step


MAX_CURVE_POINTS = 100


def _number_list(t: _Table, name: str, minimum=None) -> list:
    values = t.get(name)
    if not isinstance(values, list) or len(values) < 2:
        raise ScenarioError(t.key(name), values, "a list of at least two numbers")
    if len(values) > MAX_CURVE_POINTS:
        raise ScenarioError(t.key(name), f"{len(values)} entries", f"a list of at most {MAX_CURVE_POINTS} numbers")
    return [float(t.plain_number(f"{t.key(name)}[{i}]", v, minimum=minimum)) for i, v in enumerate(values)]


def _quantity_list(t: _Table, name: str, kind: str, unit: str, length: int) -> list:
    values = t.get(name)
    if not isinstance(values, list) or len(values) != length:
        raise ScenarioError(t.key(name), values, f"a list of {length} values, one per curve_rpm entry")
    return [t.convert(f"{t.key(name)}[{i}]", v, kind, unit, minimum=0.0) for i, v in enumerate(values)]


def operating_point_warnings(raw_steps: list, displacement_m3: float, volumetric_efficiency: float,
                             system: str) -> tuple[str, ...]:
    """Warnings for pulls given with pressure, flow and rpm whose flow and the pump's flow at that rpm
    differ by more than FLOW_DISAGREEMENT: accepted (the power is pressure x the flow given; the oil's
    circulation is the pump's flow at the rpm), but named, since one of displacement, volumetric
    efficiency, rpm or flow is likely mistyped. raw_steps : the session's steps as read (checked)."""
    messages = []
    for i, raw in enumerate(raw_steps):
        if not (isinstance(raw, dict) and all(key in raw for key in ("pressure", "flow", "rpm"))):
            continue
        t = _Table(raw, f"session.steps[{i}]", system=system)
        given = t.quantity("flow", "flow", "L/min", above=0.0)
        rpm = t.number("rpm", minimum=100.0, maximum=30000.0)
        pumped = float(pump_flow_m3_s(displacement_m3, rpm, volumetric_efficiency))
        if abs(given - pumped) > FLOW_DISAGREEMENT * pumped:
            unit, per_m3_s = ("gal/min", 60.0 / 3.785411784e-3) if system == "US" else ("L/min", 60000.0)
            messages.append(f"session.steps[{i}]: flow {given * per_m3_s:.3g} {unit} and rpm {rpm:g} disagree: this "
                            f"pump gives {pumped * per_m3_s:.3g} {unit} at {rpm:g} rpm (pump.displacement x rpm x "
                            f"pump.volumetric_efficiency). The pull's power is the pressure times the flow given; "
                            f"the oil's circulation is the pump's flow. Check which one is mistyped")
    return tuple(messages)
