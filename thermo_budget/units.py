"""Units at the edges: read quantity strings by our own grammar, convert SI results for display.

Inside the package every number is SI (K for temperatures, W, J, m, m^3, s, kg).

A quantity string is read in two stages. First our grammar (`split_quantity`) checks it: a number
with an optional sign and exponent, then a unit expression of unit names joined by `*` and `/`,
each with an optional small integer power (`^2`, `**3`), and at most one level of parentheses. The
number is read by Python's float(); there is no arithmetic on numbers, and the string is at most
MAX_QUANTITY_CHARS long, so nothing it holds can hang or crash the reader. Only then does pint see
the unit expression, to convert it. The units the package uses every day are converted from a
table of exact definitions (`_UNITS`, checked against pint in the tests), so that a plain run never
pays for loading pint's registry.
"""
from __future__ import annotations

import math
import re
from functools import lru_cache

import numpy as np

from .errors import ScenarioError

MAX_QUANTITY_CHARS = 60
MAX_UNIT_FACTORS = 8
QUANTITY_FORM = ("a number then a unit, e.g. '15 L', '77 degF' or '40 BTU/hr/degF' (unit names joined by * "
                 "and /, powers as ^2, one level of parentheses; no arithmetic)")

_NUMBER = re.compile(r"[-+]?(?:\d{1,30}(?:\.\d{0,30})?|\.\d{1,30})(?:[eE][-+]?\d{1,4})?")
_NAME = re.compile(r"[A-Za-z_\u00b0\u00b5\u03bc][A-Za-z0-9_]{0,30}")
_POWER = re.compile(r"(?:\^|\*\*)\s*(-?[1-4])")
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
    "pressure": "Pa",
    "flow": "m^3/s",
}

_LB_KG = 0.45359237            # exact (NIST SP 811, Appendix B)
_FT_M = 0.3048                 # exact
_IN_M = 0.0254                 # exact
_GAL_M3 = 231 * _IN_M**3       # US gallon, exact
_LBF_N = _LB_KG * 9.80665      # exact
_BTU_J = 1055.056              # International Table BTU as pint defines it
ZERO_CELSIUS_K = 273.15   # 0 degC in kelvin (exact, by the definition of the Celsius scale)
_F_K = 5.0 / 9.0
# Units converted without pint: unit -> (group, scale, offset) with value in the group's first unit
# = scale * value + offset. Every pair within a group is checked against pint in tests/test_units.py.
_UNITS = {
    "K": ("temperature", 1.0, 0.0), "degC": ("temperature", 1.0, ZERO_CELSIUS_K),
    "degF": ("temperature", _F_K, ZERO_CELSIUS_K - 32.0 * _F_K),
    "delta_degC": ("temperature_difference", 1.0, 0.0), "delta_degF": ("temperature_difference", _F_K, 0.0),
    "m": ("length", 1.0, 0.0), "mm": ("length", 1e-3, 0.0), "cm": ("length", 1e-2, 0.0),
    "in": ("length", _IN_M, 0.0), "ft": ("length", _FT_M, 0.0),
    "m^2": ("area", 1.0, 0.0), "cm^2": ("area", 1e-4, 0.0), "in^2": ("area", _IN_M**2, 0.0),
    "ft^2": ("area", _FT_M**2, 0.0),
    "m^3": ("volume", 1.0, 0.0), "L": ("volume", 1e-3, 0.0), "mL": ("volume", 1e-6, 0.0),
    "cm^3": ("volume", 1e-6, 0.0), "in^3": ("volume", _IN_M**3, 0.0), "ft^3": ("volume", _FT_M**3, 0.0),
    "gal": ("volume", _GAL_M3, 0.0),
    "kg": ("mass", 1.0, 0.0), "g": ("mass", 1e-3, 0.0), "lb": ("mass", _LB_KG, 0.0),
    "s": ("time", 1.0, 0.0), "min": ("time", 60.0, 0.0), "h": ("time", 3600.0, 0.0), "hr": ("time", 3600.0, 0.0),
    "W": ("power", 1.0, 0.0), "kW": ("power", 1e3, 0.0), "hp": ("power", 550.0 * _FT_M * _LBF_N, 0.0),
    "N*m": ("torque", 1.0, 0.0), "lbf*ft": ("torque", _LBF_N * _FT_M, 0.0),
    "kg/m^3": ("density", 1.0, 0.0), "lb/ft^3": ("density", _LB_KG / _FT_M**3, 0.0),
    "m^2/s": ("kinematic_viscosity", 1.0, 0.0), "cSt": ("kinematic_viscosity", 1e-6, 0.0),
    "W/K": ("conductance", 1.0, 0.0), "BTU/hr/delta_degF": ("conductance", _BTU_J / 3600.0 / _F_K, 0.0),
    "m/s": ("speed", 1.0, 0.0), "ft/s": ("speed", _FT_M, 0.0),
    "1/K": ("per_kelvin", 1.0, 0.0),
    "J/(kg*K)": ("specific_heat", 1.0, 0.0),
    "BTU/lb/delta_degF": ("specific_heat", _BTU_J / _LB_KG / _F_K, 0.0),
    "W/(m*K)": ("thermal_conductivity", 1.0, 0.0),
    "BTU/hr/ft/delta_degF": ("thermal_conductivity", _BTU_J / 3600.0 / _FT_M / _F_K, 0.0),
    "m^3/s": ("flow", 1.0, 0.0), "L/min": ("flow", 1e-3 / 60.0, 0.0), "gal/min": ("flow", _GAL_M3 / 60.0, 0.0),
    "Pa": ("pressure", 1.0, 0.0), "bar": ("pressure", 1e5, 0.0), "psi": ("pressure", _LBF_N / _IN_M**2, 0.0),
    "J": ("energy", 1.0, 0.0), "kJ": ("energy", 1e3, 0.0), "BTU": ("energy", _BTU_J, 0.0),
}


@lru_cache(maxsize=1)
def registry():
    """pint's unit registry, built on first use (it takes about 0.3 s)."""
    import pint
    return pint.UnitRegistry()


def __getattr__(name):
    if name == "UREG":   # kept for callers that used the module-level registry
        return registry()
    raise AttributeError(name)


def split_quantity(text: str, key: str, bare_unit: str) -> tuple[float, str]:
    """(number, unit expression) of a quantity string by our grammar; the unit is "" when the
    string is a bare number. Raises ScenarioError naming key, value and the expected form."""
    expected = QUANTITY_FORM.replace("'15 L'", f"'1 {bare_unit}'") if bare_unit else QUANTITY_FORM
    if len(text) > MAX_QUANTITY_CHARS:
        raise ScenarioError(key, text, f"at most {MAX_QUANTITY_CHARS} characters: {expected}")
    stripped = text.strip()
    match = _NUMBER.match(stripped)
    if not match:
        raise ScenarioError(key, text, expected)
    magnitude = float(match.group(0))
    if not math.isfinite(magnitude):
        raise ScenarioError(key, text, "a finite number")
    unit = _unit_expression(stripped[match.end():].strip(), key, text, expected)
    return magnitude, unit


def _unit_expression(text: str, key: str, value: str, expected: str) -> str:
    """The unit part checked token by token (linear in its length) and written back normalised."""
    if not text:
        return ""
    out, position, factors, depth, need_factor = [], 0, 0, 0, True
    while position < len(text):
        char = text[position]
        if char.isspace():
            position += 1
            continue
        if need_factor:
            if char == "(":
                if depth:
                    raise ScenarioError(key, value, "at most one level of parentheses in the unit")
                depth, position = 1, position + 1
                out.append("(")
                continue
            if char == "1" and not out and text[position + 1:].lstrip().startswith("/"):
                out.append("1")
                position += 1
                need_factor = False
                continue
            name = _NAME.match(text, position)
            if not name:
                raise ScenarioError(key, value, expected)
            factors += 1
            if factors > MAX_UNIT_FACTORS:
                raise ScenarioError(key, value, f"a unit of at most {MAX_UNIT_FACTORS} names")
            out.append(name.group(0))
            position = name.end()
            power = _POWER.match(text, position)
            if power:
                out.append("^" + power.group(1))
                position = power.end()
            need_factor = False
            continue
        if char == ")" and depth:
            depth, position = 0, position + 1
            out.append(")")
            power = _POWER.match(text, position)
            if power:
                out.append("^" + power.group(1))
                position = power.end()
            continue
        if char in "*/" and not text.startswith("**", position):
            out.append(char)
            position += 1
            need_factor = True
            continue
        raise ScenarioError(key, value, expected)
    if need_factor or depth:
        raise ScenarioError(key, value, expected)
    return "".join(out)


def parse_quantity(value, key: str, kind: str, bare_unit: str) -> float:
    """Return ``value`` in the SI unit of ``kind``.

    value : str such as "19 L" or "77 degF", or a bare number meaning ``bare_unit``.
    key : the scenario key path, for the error message.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise ScenarioError(key, value, f"a number or a string with units such as '1 {bare_unit}'")
    if isinstance(value, str):
        magnitude, unit_text = split_quantity(value, key, bare_unit)
        unit_text = unit_text or bare_unit
    else:
        try:
            magnitude, unit_text = float(value), bare_unit
        except OverflowError:
            magnitude = math.inf
    if not math.isfinite(magnitude):
        raise ScenarioError(key, value, "a finite number")
    if kind != "temperature":  # in a rate such as "BTU/hr/degF" a degree is a temperature difference
        unit_text = _DEGREE_IN_RATE.sub(r"delta_deg\1", unit_text)
    elif "delta" in unit_text or unit_text.replace(" ", "") in ("K/s", "1/K"):
        raise ScenarioError(key, value, "an absolute temperature such as '20 degC', '68 degF' or '293 K', "
                                        "not a temperature difference")
    try:
        scale, offset = affine_conversion(unit_text, SI_UNIT[kind])
    except Exception:  # pint's errors for an unknown or mismatched unit; the input is bounded by the grammar
        raise ScenarioError(key, value, f"a {kind.replace('_', ' ')} in units such as '{bare_unit}'") from None
    si = scale * magnitude + offset
    if not math.isfinite(si):
        raise ScenarioError(key, value, "a finite number")
    return si


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
    """(scale, offset) with value_in_to_unit = scale * value_in_from_unit + offset: from the table
    of exact definitions when both units are in it, else from pint once per unit pair (every unit
    the package converts between is affine: K to degF has an offset, the rest are pure scales)."""
    a, b = _UNITS.get(from_unit), _UNITS.get(to_unit)
    if a and b and a[0] == b[0]:
        return a[1] / b[1], (a[2] - b[2]) / b[1]
    ureg = registry()
    at_zero = float(ureg.Quantity(0.0, from_unit).to(to_unit).magnitude)
    at_one = float(ureg.Quantity(1.0, from_unit).to(to_unit).magnitude)
    return at_one - at_zero, at_zero


def convert(value, from_unit: str, to_unit: str):
    """value (float or array) from one unit to another; a float stays a float."""
    scale, offset = affine_conversion(from_unit, to_unit)
    converted = scale * np.asarray(value, dtype=float) + offset
    return float(converted) if converted.ndim == 0 else converted


def to_display(value_si, kind: str, system: str):
    """Convert an SI value (float or array) of ``kind`` to the display unit of ``system`` ("SI" or "US")."""
    return convert(value_si, _SI_OF_DISPLAY_KIND[kind], DISPLAY_UNITS[system][kind])


def from_display(value, kind: str, system: str):
    """Convert a value (float or array) of ``kind`` in the display unit of ``system`` to SI."""
    return convert(value, DISPLAY_UNITS[system][kind], _SI_OF_DISPLAY_KIND[kind])


def unit_label(kind: str, system: str) -> str:
    """The printed symbol of the display unit, e.g. '°F'."""
    return UNIT_LABEL[DISPLAY_UNITS[system][kind]]


def round_up(value: float, digits: int) -> float:
    """Round up to `digits` decimals, so that a rounded size still suffices (the searches are
    monotone). A value a float's noise above a round figure (1e-9 of the last digit) stays on it."""
    if not math.isfinite(value):
        return float(value)
    return float(math.ceil(value * 10**digits - 1e-9) / 10**digits) + 0.0   # + 0.0: never -0.0


def rounded_up_text(value: float, digits: int) -> str:
    """A size shown rounded up to `digits` decimals (round_up): a size rounded down might no longer suffice."""
    return f"{round_up(value, digits):.{digits}f}"
