"""The page's field table: each number input that maps to one key of the scenario file, its label,
help, display quantity, range and +/- step, and reading and writing it in the page's unit system.

Pure functions, no Streamlit. A raw dict is never changed in place.
"""
from __future__ import annotations

from dataclasses import dataclass

from ..errors import ScenarioError
from ..display import QUANTITIES, quantity_text, to_shown, unit_symbol
from ..inputs.scenario import with_path
from ..units import parse_quantity

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
    Field("fluid.flash_point", "Flash point (optional)",
          "From the oil's data sheet (open cup, ASTM D92). Empty: a conservative 180 °C is assumed.",
          "temperature", "degC", minimum=None),
    Field("hardware.return_line_max_temperature", "Return-line limit (optional)",
          "The temperature rating of the hoses and seals the hot oil returns through. The pull count stops "
          "when the return-line oil passes it, if that comes before the bulk limit. Empty: no such limit.",
          "temperature", "degC", minimum=None),
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
    Field("altitude", "Altitude of the stand (optional)",
          "Height above sea level. Thinner air carries less heat away: at 1,600 m the air is about 17 % "
          "lighter. Empty: sea level. (A scenario file may give ambient_pressure instead.)",
          "altitude", "m", minimum=None),
    Field("relative_humidity", "Relative humidity of the air",
          "0 to 1 (0.4 is 40 %). 0: dry air. Moist air's properties come from CoolProp.",
          minimum=0.0, maximum=1.0),
    Field("cooler.specific_dissipation", "Cooler size",
          "Heat the cooler removes per degree between the oil going in and the air.", "conductance", "W/K"),
    Field("session.start_temperature", "Oil temperature at the start", "Usually room temperature for a cold rig.",
          "temperature", "degC", minimum=None),
    Field("session.repeat", "Pulls planned", "How many times the pull and its wait are repeated.",
          minimum=1, maximum=10000, integer=True),
    Field("uncertainty.confidence", "Confidence of the plan",
          "The share of the rigs the uncertainty model allows that the plan must keep under the limit, "
          "0.5 to 0.999: 0.9 plans for 9 in 10. The verdict and every planning card use it.",
          minimum=0.5, maximum=0.999),
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


# Step of the +/- buttons of each input, by display quantity and system.
STEPS = {"oil_volume": {"SI": 1.0, "US": 0.25}, "dimension": {"SI": 0.01, "US": 0.5},
         "thickness": {"SI": 0.5, "US": 0.01}, "hose_length": {"SI": 0.5, "US": 1.0},
         "hose_diameter": {"SI": 1.0, "US": 0.05}, "temperature": {"SI": 1.0, "US": 2.0},
         "density": {"SI": 5.0, "US": 0.5}, "viscosity": {"SI": 0.5, "US": 0.5},
         "displacement": {"SI": 1.0, "US": 0.05}, "mass": {"SI": 0.5, "US": 1.0},
         "air_speed": {"SI": 0.5, "US": 1.0}, "altitude": {"SI": 100.0, "US": 500.0}, "conductance": {"SI": 1.0, "US": 2.0},
         "power": {"SI": 0.5, "US": 1.0}, "idle_power": {"SI": 10.0, "US": 0.01},
         "torque": {"SI": 1.0, "US": 1.0}, "pull_time": {"SI": 1.0, "US": 1.0}, "wait_time": {"SI": 0.5, "US": 0.5}}
PLAIN_STEPS = {"reservoir.emissivity": 0.05, "hardware.emissivity": 0.05, "pump.volumetric_efficiency": 0.01,
               "fluid.viscosity_index": 1.0, "session.repeat": 1, "uncertainty.confidence": 0.05,
               "relative_humidity": 0.05}


def step_of(field: Field, system: str):
    return STEPS[field.quantity][system] if field.quantity else PLAIN_STEPS.get(field.path, 0.01)


def si_or_none(value, kind: str, bare: str):
    """A scenario value in SI (a unit string or a bare number in `bare`), or None where unreadable."""
    try:
        return parse_quantity(value, "", kind, bare)
    except ScenarioError:
        return None

