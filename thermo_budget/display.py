"""Display formatting for the page, the command line and the charts: SI values shown in the chosen
unit system ("SI" or "US") with their unit symbols, temperatures and temperature differences,
durations, and report notes restated in the user's units.

Pure functions of units.py, no Streamlit and no model: any layer that shows a number may use them.
"""
from __future__ import annotations

import math
import re

from .units import SI_UNIT, UNIT_LABEL, ZERO_CELSIUS_K, convert, round_up, to_display, unit_label

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
    "altitude": ("length", {"SI": "m", "US": "ft"}, {"SI": 0, "US": 0}),
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


# An oil volume to plan with (the verdict's fix, the plan at the confidence: its line and card) is
# shown to two decimals in either unit system, rounded up: the same figure everywhere it appears.
OIL_TO_PLAN_DIGITS = 2


def decimals(quantity: str, system: str) -> int:
    return QUANTITIES[quantity][2][system]


def quantity_text(value: float, quantity: str, system: str) -> str:
    """A display value as the unit string the scenario file takes, e.g. "4.75 gal"."""
    return f"{value:.6g} {QUANTITIES[quantity][1][system]}"


def shown(value_si: float | None, quantity: str, system: str, digits: int | None = None, up: bool = False) -> str:
    """An SI value formatted for the page with its unit symbol, e.g. "176.0 °F". up=True: rounded up,
    for a size to plan with (a size rounded down might no longer suffice)."""
    if value_si is None:
        return "n/a"
    digits = decimals(quantity, system) if digits is None else digits
    value = to_shown(value_si, quantity, system)
    if up:
        value = round_up(value, digits)
    return f"{value:,.{digits}f} {unit_symbol(quantity, system)}"


def shown_celsius(value_C: float | None, system: str) -> str:
    """A report temperature (degC) formatted in the page's system."""
    return "n/a" if value_C is None else shown(value_C + ZERO_CELSIUS_K, "temperature", system)


def shown_duration(seconds: float | None, round_up: bool = False) -> str:
    """A duration as "45 s", "3 min 20 s" or "2 h 05 min". round_up: to the next second (and, past an
    hour, the next minute), for a wait, which a figure rounded down might leave too short."""
    if seconds is None:
        return "n/a"
    seconds = math.ceil(float(seconds) - 1e-9) if round_up else round(float(seconds))
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 3600:
        minutes, rest = divmod(int(seconds), 60)
        return f"{minutes} min {rest:02d} s"
    hours, rest = divmod(math.ceil(seconds / 60) if round_up else round(seconds / 60), 60)
    return f"{hours} h {rest:02d} min"


_NUMBER_UNIT = re.compile(r"(-?\d+(?:\.\d+)?) (degC|W/K|L)\b")


def note_in(note: str, system: str) -> str:
    """A report note with its "80.0 degC", "12 W/K" and "40 L" figures restated in `system`."""
    def restate(match):
        value, unit = float(match.group(1)), match.group(2)
        if unit == "degC":
            return shown(value + ZERO_CELSIUS_K, "temperature", system)
        if unit == "W/K":
            return shown(value, "conductance", system)
        return shown(value / 1000.0, "oil_volume", system)
    return _NUMBER_UNIT.sub(restate, note)


def format_temperature(T_K: float, system: str) -> str:
    """A temperature in the display unit of "SI" or "US", e.g. '47.3 °C'."""
    return f"{to_display(T_K, 'temperature', system):.1f} {unit_label('temperature', system)}"


def format_difference(dT_K: float, system: str) -> str:
    """A temperature difference: '0.31 K', or '0.56 °F (0.31 K)' in US units."""
    if system == "SI":
        return f"{dT_K:.2f} K"
    return f"{to_display(dT_K, 'temperature_difference', system):.2f} {unit_label('temperature_difference', system)} ({dT_K:.2f} K)"
