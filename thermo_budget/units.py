"""Units at the edges: parse quantity strings with pint, convert SI results for display.

Inside the package every number is SI (K for temperatures, W, J, m, m^3, s, kg).
"""
from __future__ import annotations

import math
import re
from functools import lru_cache

import numpy as np
import pint

from .errors import ScenarioError

UREG = pint.UnitRegistry()

_NUMBER_THEN_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")

_DEGREE_IN_RATE = re.compile(r"(?<!delta_)deg([CF])\b")

# The SI unit each kind of quantity is converted to.
SI_UNIT = {
    "temperature": "K",
    "length": "m",
    "area": "m^2",
    "volume": "m^3",
    "mass": "kg",
    "time": "s",
    "power": "W",
    "torque": "N*m",
    "density": "kg/m^3",
    "kinematic_viscosity": "m^2/s",
    "conductance": "W/K",
    "speed": "m/s",
    "per_kelvin": "1/K",
    "specific_heat": "J/(kg*K)",
    "thermal_conductivity": "W/(m*K)",
    "temperature_difference": "K",
}


def parse_quantity(value, key: str, kind: str, bare_unit: str) -> float:
    """Return ``value`` in the SI unit of ``kind``.

    value : str such as "19 L" or "77 degF", or a bare number meaning ``bare_unit``.
    key : the scenario key path, for the error message.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise ScenarioError(key, value, f"a number or a string with units such as '1 {bare_unit}'")
    if isinstance(value, (int, float)):
        magnitude, unit_text = float(value), bare_unit
    else:
        match = _NUMBER_THEN_UNIT.match(value)
        if not match:
            raise ScenarioError(key, value, f"a number followed by a unit, such as '1 {bare_unit}'")
        magnitude, unit_text = float(match.group(1)), (match.group(2) or bare_unit)
    if kind != "temperature":  # in a rate such as "BTU/hr/degF" a degree is a temperature difference
        unit_text = _DEGREE_IN_RATE.sub(r"delta_deg\1", unit_text)
    elif "delta" in unit_text or unit_text.strip() in ("K/s", "1/K"):
        raise ScenarioError(key, value, "an absolute temperature such as '20 degC', '68 degF' or '293 K', "
                                        "not a temperature difference")
    if not math.isfinite(magnitude):
        raise ScenarioError(key, value, "a finite number")
    try:
        quantity = UREG.Quantity(magnitude, unit_text)
        return float(quantity.to(SI_UNIT[kind]).magnitude)
    except (pint.errors.UndefinedUnitError, pint.errors.DimensionalityError,
            pint.errors.DefinitionSyntaxError, AttributeError, TypeError, ValueError, AssertionError):
        raise ScenarioError(key, value, f"a {kind.replace('_', ' ')} in units such as '{bare_unit}'") from None


# Display units of the two systems, by kind of quantity.
DISPLAY_UNITS = {
    "SI": {"temperature": "degC", "temperature_difference": "delta_degC", "volume": "L", "power": "kW",
           "flow": "L/min", "pressure": "bar", "displacement": "cm^3", "conductance": "W/K",
           "time": "s", "length": "m", "mass": "kg", "energy": "kJ", "torque": "N*m"},
    "US": {"temperature": "degF", "temperature_difference": "delta_degF", "volume": "gal", "power": "hp",
           "flow": "gal/min", "pressure": "psi", "displacement": "in^3", "conductance": "BTU/hr/delta_degF",
           "time": "s", "length": "in", "mass": "lb", "energy": "BTU", "torque": "lbf*ft"},
}

# The printed symbol of every unit the package displays (here and on the page's inputs).
UNIT_LABEL = {"degC": "°C", "degF": "°F", "delta_degC": "K", "delta_degF": "°F", "L": "L", "gal": "gal",
              "kW": "kW", "W": "W", "hp": "hp", "L/min": "L/min", "gal/min": "gpm", "bar": "bar", "psi": "psi",
              "cm^3": "cm³", "in^3": "in³", "W/K": "W/K", "BTU/hr/delta_degF": "BTU/hr/°F", "s": "s",
              "min": "min", "m": "m", "mm": "mm", "in": "in", "ft": "ft", "kg": "kg", "lb": "lb",
              "kg/m^3": "kg/m³", "lb/ft^3": "lb/ft³", "cSt": "cSt", "m/s": "m/s", "ft/s": "ft/s",
              "kJ": "kJ", "BTU": "BTU", "N*m": "N·m", "lbf*ft": "lbf·ft"}

_SI_OF_DISPLAY_KIND = {"temperature": "K", "temperature_difference": "delta_degC", "volume": "m^3",
                       "power": "W", "flow": "m^3/s", "pressure": "Pa", "displacement": "m^3",
                       "conductance": "W/K", "time": "s", "length": "m", "mass": "kg", "energy": "J",
                       "torque": "N*m"}


@lru_cache(maxsize=None)
def affine_conversion(from_unit: str, to_unit: str) -> tuple[float, float]:
    """(scale, offset) with value_in_to_unit = scale * value_in_from_unit + offset, taken from pint
    once per unit pair (every unit the package converts between is affine: K to degF has an offset,
    the rest are pure scales). Saves the page a pint call per number and works on arrays."""
    at_zero = float(UREG.Quantity(0.0, from_unit).to(to_unit).magnitude)
    at_one = float(UREG.Quantity(1.0, from_unit).to(to_unit).magnitude)
    return at_one - at_zero, at_zero


def convert(value, from_unit: str, to_unit: str):
    """value (float or array) from one unit to another; a float stays a float."""
    scale, offset = affine_conversion(from_unit, to_unit)
    converted = scale * np.asarray(value, dtype=float) + offset
    return float(converted) if converted.ndim == 0 else converted


def to_display(value_si, kind: str, system: str):
    """Convert an SI value (float or array) of ``kind`` to the display unit of ``system`` ("SI" or "US")."""
    return convert(value_si, _SI_OF_DISPLAY_KIND[kind], DISPLAY_UNITS[system][kind])


def unit_label(kind: str, system: str) -> str:
    """The printed symbol of the display unit, e.g. '°F'."""
    return UNIT_LABEL[DISPLAY_UNITS[system][kind]]

