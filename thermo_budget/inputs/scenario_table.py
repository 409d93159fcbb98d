"""Reading one TOML table of a scenario: typed getters that convert quantities to SI, check every
value against the table of plausible ranges (`KEYS`), and remember which keys were used, so that a
leftover (unknown) key is reported with a "did you mean".

Every problem raises ScenarioError naming the key path, the value and what was expected. Ranges
are quoted in the file's own unit system.
"""
from __future__ import annotations

import copy
import difflib
import re
import tomllib
from dataclasses import dataclass

import numpy as np

from ..errors import ScenarioError
from ..units import SI_UNIT, convert, parse_quantity

MAX_FILE_BYTES = 1_000_000
MAX_TEXT_CHARS = 200          # a name or description
MAX_NESTING = 20              # tables and arrays inside each other ([session] [[steps]] is 3)

_MISSING = object()


@dataclass(frozen=True)
class KeySpec:
    """One scenario key: its kind of quantity (None for a plain number), the unit a bare number
    means in an SI file and in a US file, and its plausible range in the SI bare unit (a value
    outside it is refused with the range quoted). integer: a whole number is required."""
    kind: str | None
    si_unit: str
    us_unit: str
    low: float
    high: float
    integer: bool = False

    def bare_unit(self, system: str) -> str:
        return self.us_unit if system == "US" else self.si_unit

    def range_text(self, system: str) -> str:
        unit = self.bare_unit(system)
        if self.kind is None:
            return f"{self.low:g} to {self.high:g}"
        low, high = (convert(v, self.si_unit, unit) for v in (self.low, self.high))
        return f"{low:.4g} to {high:.4g} {unit}"


def _q(kind, si_unit, us_unit, low, high):
    return KeySpec(kind, si_unit, us_unit, low, high)


def _n(low, high, integer=False):
    return KeySpec(None, "", "", low, high, integer)


# Every key of a scenario with its plausible range, for a small-engine test stand (invented
# bounds, wide enough for any rig of the kind and narrow enough to catch a unit slip; common
# practice, no source). Adding a key: one line here and its getter in scenario.py. Step keys are
# written with [] for the step index. A quantity key missing here gets the broad range of its kind.
KEYS = {
    "ambient": _q("temperature", "degC", "degF", -40, 60),
    "ambient_pressure": _q("pressure", "bar", "psi", 0.5, 1.1),
    "altitude": _q("length", "m", "ft", -500, 5000),
    "relative_humidity": _n(0, 1),
    "reservoir.oil_volume": _q("volume", "L", "gal", 0.1, 2000),
    "reservoir.length": _q("length", "m", "in", 0.02, 5),
    "reservoir.width": _q("length", "m", "in", 0.02, 5),
    "reservoir.diameter": _q("length", "m", "in", 0.02, 5),
    "reservoir.height": _q("length", "m", "in", 0.02, 5),
    "reservoir.wall_thickness": _q("length", "mm", "in", 0.1, 50),
    "reservoir.emissivity": _n(0, 1),
    "fluid.iso_vg": _n(2, 3200),
    "fluid.viscosity_40C": _q("kinematic_viscosity", "cSt", "cSt", 2, 5000),
    "fluid.viscosity_100C": _q("kinematic_viscosity", "cSt", "cSt", 2, 500),
    "fluid.viscosity_index": _n(-100, 400),
    "fluid.density_15C": _q("density", "kg/m^3", "lb/ft^3", 600, 1100),
    "fluid.expansion": _q("per_kelvin", "1/K", "1/K", 0, 0.002),
    "fluid.specific_heat": _q("specific_heat", "J/(kg*K)", "BTU/lb/delta_degF", 1000, 3500),
    "fluid.conductivity": _q("thermal_conductivity", "W/(m*K)", "BTU/hr/ft/delta_degF", 0.05, 0.5),
    "fluid.max_temperature": _q("temperature", "degC", "degF", 20, 200),
    "fluid.min_viscosity": _q("kinematic_viscosity", "cSt", "cSt", 2, 2000),
    "fluid.flash_point": _q("temperature", "degC", "degF", 50, 400),
    "pump.displacement": _q("volume", "cm^3", "in^3", 0.5, 500),
    "pump.volumetric_efficiency": _n(0.3, 1),
    "hardware.mass": _q("mass", "kg", "lb", 0.1, 500),
    "hardware.hose_length": _q("length", "m", "ft", 0.1, 50),
    "hardware.hose_outer_diameter": _q("length", "mm", "in", 3, 100),
    "hardware.hose_inner_diameter": _q("length", "mm", "in", 1, 100),
    "hardware.emissivity": _n(0, 1),
    "hardware.body_area": _q("area", "m^2", "ft^2", 0, 10),
    "hardware.internal_area": _q("area", "m^2", "ft^2", 0.001, 5),
    "hardware.return_line_max_temperature": _q("temperature", "degC", "degF", 20, 250),
    "hardware.engine_off_coupling": _q("conductance", "W/K", "BTU/hr/delta_degF", 0, 1000),
    "losses.convection_multiplier": _n(0, 10),
    "losses.capacity_multiplier": _n(0.01, 10),
    "losses.hardware_coupling_multiplier": _n(0.01, 100),
    "losses.air_speed": _q("speed", "m/s", "ft/s", 0, 30),
    "cooler.specific_dissipation": _q("conductance", "W/K", "BTU/hr/delta_degF", 0, 10000),
    "session.start_temperature": _q("temperature", "degC", "degF", -40, 200),
    "session.repeat": _n(1, 1000, integer=True),
    "session.ready_temperature": _q("temperature", "degC", "degF", -40, 200),
    "session.steps[].duration": _q("time", "s", "s", 0.1, 86400),
    "session.steps[].power": _q("power", "W", "hp", 0, 1e6),
    "session.steps[].pressure": _q("pressure", "bar", "psi", 0.1, 700),     # across pump and valve
    "session.steps[].flow": _q("flow", "L/min", "gal/min", 0.05, 2000),
    "session.steps[].rpm": _n(100, 30000),
    "session.steps[].rpm_start": _n(100, 30000),
    "session.steps[].rpm_end": _n(100, 30000),
    "session.steps[].curve_rpm": _n(0, 30000),
    "session.steps[].curve_torque": _q("torque", "N*m", "lbf*ft", 0, 5000),
    "session.steps[].curve_power": _q("power", "W", "hp", 0, 1e6),
}

# The broad range of each kind, in its SI unit, for a quantity key not (yet) in KEYS.
KIND_RANGES = {"temperature": (173.15, 673.15), "length": (1e-5, 100.0), "area": (0.0, 100.0),
               "volume": (0.0, 100.0), "mass": (0.0, 1e4), "time": (0.0, 1e6), "power": (0.0, 1e7),
               "torque": (0.0, 1e5), "density": (1.0, 2e4), "kinematic_viscosity": (0.0, 1.0),
               "conductance": (0.0, 1e5), "speed": (0.0, 100.0), "per_kelvin": (0.0, 0.01),
               "specific_heat": (100.0, 1e4), "thermal_conductivity": (0.0, 500.0)}

# The usual range of each temperature key, degC (narrower than the plausible range above; invented
# for a small-engine test stand, common practice, no source). A bare number outside it that would be
# inside it read in the other unit system's degrees (degF for degC, or the reverse) is accepted but
# warned about (`temperature_unit_warnings`): it looks like the other unit.
USUAL_TEMPERATURE_C = {"ambient": (-20, 45), "fluid.max_temperature": (40, 120), "fluid.flash_point": (150, 320),
                       "hardware.return_line_max_temperature": (60, 150), "session.start_temperature": (-20, 90),
                       "session.ready_temperature": (20, 90)}

_INDEX = re.compile(r"\[\d+\]")


def key_spec(path: str) -> KeySpec | None:
    """The KEYS entry of a key path such as "session.steps[2].power" or of a list entry such as
    "session.steps[0].curve_rpm[3]" (list indices dropped)."""
    general = _INDEX.sub("[]", path)
    return KEYS.get(general) or KEYS.get(general.removesuffix("[]"))


def _closest(name, candidates) -> str | None:
    close = difflib.get_close_matches(str(name), [str(c) for c in candidates], n=1, cutoff=0.6)
    return close[0] if close else None


def _did_you_mean(name, candidates) -> str:
    close = _closest(name, candidates)
    return f'did you mean "{close}"? ' if close else ""


class _Table:
    """Reads one TOML table, remembering which keys were used so leftovers are reported.

    system : the file's unit system ("SI" or "US"): bare numbers mean that system's bare unit of
    each key, and ranges are quoted in it.
    """

    def __init__(self, raw, path: str, required: bool = True, system: str = "SI", siblings=()):
        if raw is _MISSING or raw is None:
            if required:
                close = _closest(path.rsplit(".", 1)[-1], siblings)
                found = f'not found, but the file has "{close}": a misspelling?' if close else "the table is missing"
                raise ScenarioError(path, None, f"a [{path}] table ({found})")
            raw = {}
        if not isinstance(raw, dict):
            raise ScenarioError(path, raw, "a table")
        self.raw, self.path, self.used, self.system = raw, path, set(), system

    def key(self, name: str) -> str:
        return f"{self.path}.{name}" if self.path else name

    def table(self, name: str, required: bool = True) -> "_Table":
        """The sub-table `name`; a missing one suggests a close spelling among this table's keys."""
        self.used.add(name)
        unread = [k for k in self.raw if k not in self.used and k != name]
        return _Table(self.raw.get(name, _MISSING), self.key(name), required, self.system, unread)

    def get(self, name, default=_MISSING):
        self.used.add(name)
        if name in self.raw:
            return self.raw[name]
        if default is _MISSING:
            unread = [k for k in self.raw if k not in self.used]
            close = _closest(name, unread)
            if close is not None:      # the file has a key of nearly this name: name the file's key
                raise ScenarioError(self.key(close), self.raw[close],
                                    f'the key "{name}" (no key "{close}" is known here; did you mean "{name}"?)')
            raise ScenarioError(self.key(name), None, "a value (the key is missing)")
        return default

    def bare_unit(self, name: str, bare_unit: str) -> str:
        spec = key_spec(self.key(name))
        return spec.bare_unit(self.system) if spec and spec.kind else bare_unit

    def quantity(self, name, kind, bare_unit, default=_MISSING, minimum=None, above=None, maximum=None):
        """The value in SI, checked against its plausible range (KEYS); minimum, above and maximum
        are further bounds in SI."""
        value = self.get(name, default)
        if value is None:
            return None
        # a default is written by the caller in its own bare unit, whatever the file's system
        return self.convert(self.key(name), value, kind, bare_unit, minimum, above, maximum,
                            own_unit=name not in self.raw)

    def convert(self, key, value, kind, bare_unit, minimum=None, above=None, maximum=None, own_unit=False):
        """One quantity value (of a key or a list entry) in SI, range-checked."""
        spec = key_spec(key)
        unit = spec.bare_unit(self.system) if spec and spec.kind and not own_unit else bare_unit
        si = parse_quantity(value, key, kind, unit)
        if kind == "temperature" and si <= 0.0:
            raise ScenarioError(key, value, "a temperature above absolute zero")
        low, high = (spec.low, spec.high) if spec and spec.kind else KIND_RANGES.get(kind, (-np.inf, np.inf))
        if spec and spec.kind:
            low, high = (convert(v, spec.si_unit, SI_UNIT[kind]) for v in (low, high))
        if not low <= si <= high:
            shown_range = (spec.range_text(self.system) if spec and spec.kind
                           else f"{low:g} to {high:g} {SI_UNIT[kind]}")
            hint = ""
            other = _other_unit_reading(value, self.system) if kind == "temperature" and not own_unit else None
            if other is not None and low <= other[0] <= high:
                hint = (f"; as {other[1]} it would be {convert(other[0], 'K', unit):.4g} {unit}: "
                        f'write "{value:g} {other[1]}" if that is meant')
            raise ScenarioError(key, value, f"a {kind.replace('_', ' ')} from {shown_range} (the plausible range){hint}")
        _check_bounds(key, value, si, minimum, above, maximum, kind, unit)
        return si

    def number(self, name, default=_MISSING, minimum=None, maximum=None, above=None, integer=False):
        value = self.get(name, default)
        if value is None:
            return None
        return self.plain_number(self.key(name), value, minimum, maximum, above, integer)

    def plain_number(self, key, value, minimum=None, maximum=None, above=None, integer=False):
        spec = key_spec(key)
        integer = integer or bool(spec and spec.integer)
        if isinstance(value, bool) or not isinstance(value, (int, float)) or (integer and not isinstance(value, int)):
            raise ScenarioError(key, value, "a whole number" if integer else "a number")
        try:
            as_float = float(value)
        except OverflowError:
            as_float = np.inf
        if not np.isfinite(as_float):
            raise ScenarioError(key, value, "a finite number")
        if spec and spec.kind is None and not spec.low <= as_float <= spec.high:
            raise ScenarioError(key, value, f"a number from {spec.range_text(self.system)} (the plausible range)")
        if minimum is not None and value < minimum:
            raise ScenarioError(key, value, f"a number of at least {minimum:g}")
        if maximum is not None and value > maximum:
            raise ScenarioError(key, value, f"a number of at most {maximum:g}")
        if above is not None and value <= above:
            raise ScenarioError(key, value, f"a number greater than {above:g}")
        return value

    def choice(self, name, options, default=_MISSING):
        value = self.get(name, default)
        if isinstance(value, (list, dict)) or value not in options:
            hint = _did_you_mean(value, options) if isinstance(value, str) else ""
            raise ScenarioError(self.key(name), value, hint + "one of " + ", ".join(f'"{o}"' for o in options))
        return value

    def finish(self):
        unknown = [k for k in self.raw if k not in self.used]
        if unknown:
            hint = _did_you_mean(unknown[0], sorted(self.used))
            raise ScenarioError(self.key(unknown[0]), self.raw[unknown[0]],
                                f"no such key here; {hint}known keys: " + ", ".join(sorted(self.used)))


def _check_bounds(key, value, si, minimum, above, maximum, kind, unit):
    """The caller's own bounds (SI), quoted in the bare unit of the file."""
    def quoted(bound):
        return f"{convert(bound, SI_UNIT[kind], unit):.4g} {unit}"
    if kind == "temperature":
        return   # temperatures are bounded by KEYS alone
    if above is not None and si <= above:
        raise ScenarioError(key, value, f"a value greater than {quoted(above)}" if above else "a positive value")
    if minimum is not None and si < minimum:
        raise ScenarioError(key, value, "a value of zero or more" if minimum == 0 else f"at least {quoted(minimum)}")
    if maximum is not None and si > maximum:
        raise ScenarioError(key, value, f"at most {quoted(maximum)}")


def _bare_temperature_units(system: str) -> tuple[str, str]:
    """(the bare unit of temperatures in a file of `system`, the other system's)."""
    return ("degF", "degC") if system == "US" else ("degC", "degF")


def _other_unit_reading(value, system: str):
    """(value read in the other unit system's degrees, K; that unit) for a bare number, else None."""
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(float(value)):
        return None
    other = _bare_temperature_units(system)[1]
    return convert(float(value), other, "K"), other


def temperature_unit_warnings(raw: dict, system: str) -> tuple[str, ...]:
    """Warnings for the temperature keys of a checked document given as bare numbers that look like
    the other unit system's degrees (USUAL_TEMPERATURE_C): accepted as written, but named."""
    own = _bare_temperature_units(system)[0]
    messages = []
    for key, (low_C, high_C) in USUAL_TEMPERATURE_C.items():
        table = raw
        for part in key.split(".")[:-1]:
            table = table.get(part) if isinstance(table, dict) else None
        value = table.get(key.split(".")[-1]) if isinstance(table, dict) else None
        other = _other_unit_reading(value, system)
        if other is None:
            continue
        as_written_C, as_other_C = convert(float(value), own, "degC"), convert(other[0], "K", "degC")
        if not low_C <= as_written_C <= high_C and low_C <= as_other_C <= high_C:
            messages.append(f"{key} = {value:g} is read as {value:g} {own} (a bare number means {own} in "
                            f"{'a US' if system == 'US' else 'an SI'} file), unusual for it; as {other[1]} it "
                            f"would be {convert(as_other_C, 'degC', own):.4g} {own}: write \"{value:g} {other[1]}\" "
                            f"if that is meant")
    return tuple(messages)


def with_path(raw: dict, path: str, value) -> dict:
    """A copy of the document raw with the key path "a.b" set to value (None removes the key)."""
    new = copy.deepcopy(raw)
    parts = path.split(".")
    table = new
    for part in parts[:-1]:
        table = table.setdefault(part, {})
    if value is None:
        table.pop(parts[-1], None)
    else:
        table[parts[-1]] = value
    return new


def nesting_depth(text: str) -> int:
    """An upper bound on the bracket nesting of TOML text (brackets inside strings count too), to
    refuse a deeply nested file before the TOML reader recurses into it."""
    depth = deepest = 0
    for char in text:
        if char in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif char in "]}":
            depth = max(depth - 1, 0)
    return deepest


def structure_depth(value, limit: int = MAX_NESTING) -> int:
    """The nesting of dicts and lists inside a document (the document itself is 0, [session] 1, its
    steps 2, a step 3), walked without recursion and counted no further than limit + 1, so that a
    deep or self-containing dict is refused before anything recurses into it."""
    deepest = 0
    stack = [(value, 0)]
    while stack:
        node, depth = stack.pop()
        if depth > limit:
            return depth
        deepest = max(deepest, depth)
        children = node.values() if isinstance(node, dict) else node if isinstance(node, (list, tuple)) else ()
        stack.extend((child, depth + 1) for child in children if isinstance(child, (dict, list, tuple)))
    return deepest


def check_document_depth(raw, source: str = "scenario") -> None:
    """Refuse a document (a dict) nested deeper than MAX_NESTING, as the TOML reader refuses the text."""
    if structure_depth(raw) > MAX_NESTING:
        raise ScenarioError(source, f"tables and lists nested more than {MAX_NESTING} deep",
                            f"a scenario with tables and arrays nested at most {MAX_NESTING} deep")


def read_toml_text(text: str, source: str = "scenario") -> dict:
    size = len(text.encode("utf-8", "surrogatepass"))
    if size > MAX_FILE_BYTES:
        raise ScenarioError(source, f"{size} bytes", f"a file of at most {MAX_FILE_BYTES} bytes")
    if nesting_depth(text) > MAX_NESTING:
        raise ScenarioError(source, f"brackets nested {nesting_depth(text)} deep",
                            f"a scenario with tables and arrays nested at most {MAX_NESTING} deep")
    try:
        return tomllib.loads(text)
    except (tomllib.TOMLDecodeError, RecursionError, ValueError) as error:
        raise ScenarioError(source, "malformed TOML", f"valid TOML ({error})") from None


def read_toml_bytes(data: bytes, source: str = "scenario") -> dict:
    """A scenario document from a file's bytes: UTF-8 text (a byte-order mark is allowed) in TOML."""
    if len(data) > MAX_FILE_BYTES:
        raise ScenarioError(source, f"{len(data)} bytes", f"a file of at most {MAX_FILE_BYTES} bytes")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise ScenarioError(source, f"byte {error.start} is not UTF-8", "a UTF-8 text file in TOML") from None
    return read_toml_text(text, source)
