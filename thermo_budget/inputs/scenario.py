"""Scenario files: TOML with quantities as unit strings, validated into SI dataclasses.

Every key is known; an unknown key, a missing required key, a wrong unit or an impossible value
raises ScenarioError naming the key path, the value and what was expected.
"""
from __future__ import annotations

import copy
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import tomli_w

from ..physics.air import P_ATM_Pa, standard_pressure_Pa
from ..errors import ScenarioError
from ..physics.materials import MATERIALS
from ..physics.oil import DEFAULT_EXPANSION_PER_K, Oil, iso_vg_nu40_cSt, nu100_from_viscosity_index_cSt
from .hardware_defaults import body_cube_side_m, default_body_area_m2, default_internal_area_m2
from .scenario_steps import MIN_PULL_POWER_W, operating_point_warnings, parse_step  # noqa: F401 (MIN_PULL_POWER_W re-exported)
from ..engine.session import PLAN_RESOLUTION, Step
from ..physics.still_paths import flange_link_W_K
from .scenario_table import (_MISSING, KEYS, MAX_FILE_BYTES, MAX_TEXT_CHARS, _Table,  # noqa: F401
                             check_document_depth, read_toml_bytes, read_toml_text, temperature_unit_warnings,
                             with_path)
from .uncertainty import UncertaintyModel, read_uncertainty
from ..units import ZERO_CELSIUS_K, convert

SCENARIO_DIR = Path(__file__).resolve().parent.parent.parent / "scenarios"
DEFAULT_SCENARIO = SCENARIO_DIR / "default.toml"
# Hose bore as a fraction of its outside diameter when not given (common practice, no source;
# from memory of two-wire-braid hydraulic hose, e.g. 19 mm bore in 28-29 mm outside).
DEFAULT_HOSE_BORE_FRACTION = 0.66
# The work of a planned session: its sub-steps at the planning resolution (repeat x those of one
# cycle), which every search integrates. A session past LONG_SESSION_CYCLES cycles is integrated
# only until it is periodic (long_session.py), so the work is bounded by the pulls it takes to
# settle; this bound is on what a session may ask at most: 1,000 pulls with up to 15 sub-steps a
# cycle (an engine-curve pull is 8, a wait of up to 12 min 6), e.g. a break-in day of 1,000 short pulls.
MAX_SESSION_SUBSTEPS = 15000
# Flash point assumed when fluid.flash_point is not given. From memory, not from a cited source:
# data sheets of mineral hydraulic oils of ISO VG 22-68 give about 190-240 degC (ASTM D92, open cup);
# 180 degC is taken below that range on purpose, to be conservative.
DEFAULT_FLASH_POINT_C = 180.0

@dataclass(frozen=True)
class Reservoir:
    oil_volume_m3: float
    shape: str
    length_m: float | None
    width_m: float | None
    diameter_m: float | None
    height_m: float
    wall_material: str
    wall_thickness_m: float
    emissivity: float
    bottom: str

    @property
    def footprint_m2(self) -> float:
        if self.shape == "box":
            return self.length_m * self.width_m
        return 0.25 * np.pi * self.diameter_m**2

    @property
    def inner_volume_m3(self) -> float:
        return self.footprint_m2 * self.height_m


@dataclass(frozen=True)
class Hardware:
    mass_kg: float
    material: str
    hose_length_m: float
    hose_outer_diameter_m: float
    hose_inner_diameter_m: float
    emissivity: float
    body_area_m2: float
    internal_area_m2: float       # wetted inside of the metal bodies
    passage_length_m: float       # one passage through a body (the side of the bodies' cube)
    mounting: str = "apart"       # "apart" (joined to the tank by hoses only) or "on_tank" (pump bolted to it)
    engine_off_coupling_W_K: float = 0.0   # metal link bodies <-> tank (default from the mounting)


@dataclass(frozen=True)
class Scenario:
    """A validated scenario in SI units. `raw` is the document as read, for saving it again."""
    raw: dict
    units: str
    name: str
    ambient_K: float
    reservoir: Reservoir
    oil: Oil
    max_temperature_K: float
    min_viscosity_cSt: float
    displacement_m3: float
    volumetric_efficiency: float
    hardware: Hardware
    convection_multiplier: float
    capacity_multiplier: float
    air_speed_m_s: float
    cooler_W_K: float
    cooler_fan: str
    start_K: float
    repeat: int
    cycle: tuple
    ready_temperature_K: float | None = None  # schedule mode: wait until the oil has cooled to this
    hardware_coupling_multiplier: float = 1.0  # scales the oil -> metal bodies conductance (a log fit sets it)
    return_line_max_temperature_K: float | None = None  # hoses' and seals' rating; None: no such limit
    flash_point_K: float = DEFAULT_FLASH_POINT_C + ZERO_CELSIUS_K
    flash_point_given: bool = False           # False: DEFAULT_FLASH_POINT_C stands in
    uncertainty: UncertaintyModel = UncertaintyModel()   # the [uncertainty] table (uncertainty.py)
    warnings: tuple = ()     # accepted but doubtful input, one line each (scenario_table.temperature_unit_warnings)
    ambient_pressure_Pa: float = P_ATM_Pa     # from ambient_pressure, or altitude by the standard atmosphere
    relative_humidity: float = 0.0            # of the ambient air, 0 to 1 (0: dry, the shipped table)

    @property
    def steps(self) -> list[Step]:
        """The planned session: the cycle repeated."""
        return [step for _ in range(self.repeat) for step in self.cycle]

    @property
    def oil_volume_L(self) -> float:
        return self.reservoir.oil_volume_m3 * 1000.0

    def to_toml(self) -> str:
        return tomli_w.dumps(self.raw)

    def changed(self, **paths) -> "Scenario":
        """A new scenario with raw keys replaced, e.g. changed(**{"reservoir.oil_volume": "20 L"})."""
        raw = self.raw
        for path, value in paths.items():
            raw = with_path(raw, path, value)
        return load_scenario(raw)


def load_scenario(path_or_dict) -> Scenario:
    """Read and validate a scenario from a TOML path, TOML text is not accepted here, or a dict."""
    if isinstance(path_or_dict, dict):
        check_document_depth(path_or_dict)
        raw = copy.deepcopy(path_or_dict)
    else:
        path = Path(path_or_dict)
        if not path.is_file():
            raise ScenarioError("scenario", str(path), "an existing TOML file")
        if path.stat().st_size > MAX_FILE_BYTES:
            raise ScenarioError("scenario", f"{path.stat().st_size} bytes", f"a file of at most {MAX_FILE_BYTES} bytes")
        try:
            data = path.read_bytes()
        except OSError as error:
            raise ScenarioError("scenario", str(path), f"a readable file ({error.strerror})") from None
        raw = read_toml_bytes(data, str(path))
    return _parse(raw)


def _parse(raw: dict) -> Scenario:
    top = _Table(raw, "")
    units = top.choice("units", ("SI", "US"), "SI")
    top.system = units
    name = top.get("name", "")
    description = top.get("description", "")
    for key, text in (("name", name), ("description", description)):
        if not isinstance(text, str) or len(text) > MAX_TEXT_CHARS:
            raise ScenarioError(key, text, f"a text string of at most {MAX_TEXT_CHARS} characters")
    ambient = top.quantity("ambient", "temperature", "degC", above=0.0)
    pressure, humidity = _read_air(top)

    r = top.table("reservoir")
    shape = r.choice("shape", ("box", "cylinder"))
    length = r.quantity("length", "length", "m", above=0.0) if shape == "box" else None
    width = r.quantity("width", "length", "m", above=0.0) if shape == "box" else None
    diameter = r.quantity("diameter", "length", "m", above=0.0) if shape == "cylinder" else None
    reservoir = Reservoir(
        oil_volume_m3=r.quantity("oil_volume", "volume", "L", above=0.0), shape=shape,
        length_m=length, width_m=width, diameter_m=diameter,
        height_m=r.quantity("height", "length", "m", above=0.0),
        wall_material=r.choice("wall_material", tuple(MATERIALS)),
        wall_thickness_m=r.quantity("wall_thickness", "length", "mm", above=0.0, maximum=0.05),
        emissivity=r.number("emissivity", minimum=0.0, maximum=1.0),
        bottom=r.choice("bottom", ("open", "floor")))
    r.finish()

    f = top.table("fluid")
    nu40 = f.quantity("viscosity_40C", "kinematic_viscosity", "cSt", default=None, above=0.0)
    grade = f.get("iso_vg", None)
    if grade is not None:
        f.plain_number("fluid.iso_vg", grade)
    if (nu40 is None) == (grade is None):
        raise ScenarioError("fluid.iso_vg", grade, "either iso_vg or viscosity_40C, not both and not neither")
    nu40_cSt = iso_vg_nu40_cSt(grade) if grade is not None else nu40 * 1e6
    nu100 = f.quantity("viscosity_100C", "kinematic_viscosity", "cSt", default=None, above=0.0)
    vi = f.number("viscosity_index", default=None, minimum=-100.0, maximum=400.0)
    if (nu100 is None) == (vi is None):
        raise ScenarioError("fluid.viscosity_index", vi, "either viscosity_index or viscosity_100C, not both and not neither")
    if nu100 is not None:
        nu100_cSt = nu100 * 1e6
        if not 2.0 <= nu100_cSt < nu40_cSt:
            raise ScenarioError("fluid.viscosity_100C", f.raw["viscosity_100C"], "at least 2 cSt and below the 40 degC viscosity")
    else:
        nu100_cSt = nu100_from_viscosity_index_cSt(nu40_cSt, vi)
    oil = Oil(nu40_cSt=nu40_cSt, nu100_cSt=nu100_cSt,
              density_15C_kg_m3=f.quantity("density_15C", "density", "kg/m^3", above=0.0),
              expansion_per_K=f.quantity("expansion", "per_kelvin", "1/K", DEFAULT_EXPANSION_PER_K, minimum=0.0),
              specific_heat_J_kgK=f.quantity("specific_heat", "specific_heat", "J/(kg*K)", None, above=0.0),
              conductivity_W_mK=f.quantity("conductivity", "thermal_conductivity", "W/(m*K)", None, above=0.0))
    max_T = f.quantity("max_temperature", "temperature", "degC", above=0.0)
    flash_point = f.quantity("flash_point", "temperature", "degC", None, above=0.0)
    min_nu = f.quantity("min_viscosity", "kinematic_viscosity", "cSt", above=0.0) * 1e6  # >= 2 cSt: ASTM D341's range
    f.finish()

    p = top.table("pump")
    displacement = p.quantity("displacement", "volume", "cm^3", above=0.0)
    eta_v = p.number("volumetric_efficiency", above=0.0, maximum=1.0)
    p.finish()

    h = top.table("hardware")
    mass = h.quantity("mass", "mass", "kg", above=0.0)
    hw_material = h.choice("material", tuple(MATERIALS))
    hose_od = h.quantity("hose_outer_diameter", "length", "mm", above=0.0)
    hose_id = h.quantity("hose_inner_diameter", "length", "mm", DEFAULT_HOSE_BORE_FRACTION * hose_od * 1000.0, above=0.0)
    if hose_id >= hose_od:
        raise ScenarioError("hardware.hose_inner_diameter", h.raw.get("hose_inner_diameter"), "less than hose_outer_diameter")
    metal_density = MATERIALS[hw_material]["density_kg_m3"]
    hardware = Hardware(mass_kg=mass, material=hw_material,
                        hose_length_m=h.quantity("hose_length", "length", "m", minimum=0.0),
                        hose_outer_diameter_m=hose_od, hose_inner_diameter_m=hose_id,
                        emissivity=h.number("emissivity", minimum=0.0, maximum=1.0),
                        body_area_m2=h.quantity("body_area", "area", "m^2", default_body_area_m2(mass, metal_density),
                                                minimum=0.0),
                        internal_area_m2=h.quantity("internal_area", "area", "m^2", default_internal_area_m2(
                            mass, metal_density, displacement, hose_id), above=0.0),
                        passage_length_m=body_cube_side_m(mass, metal_density),
                        mounting=h.choice("mounting", ("apart", "on_tank"), "apart"))
    hardware = replace(hardware, engine_off_coupling_W_K=h.quantity(
        "engine_off_coupling", "conductance", "W/K",
        flange_link_W_K(hardware.mounting == "on_tank", hardware.passage_length_m), minimum=0.0))
    return_line_max = h.quantity("return_line_max_temperature", "temperature", "degC", None, above=0.0)
    if hardware.hose_length_m == 0.0:
        raise ScenarioError("hardware.hose_length", h.raw["hose_length"], "a positive length (the loop has hoses)")
    h.finish()

    losses = top.table("losses", required=False)
    convection_multiplier = losses.number("convection_multiplier", 1.0, minimum=0.0, maximum=10.0)
    capacity_multiplier = losses.number("capacity_multiplier", 1.0, above=0.0, maximum=10.0)
    coupling_multiplier = losses.number("hardware_coupling_multiplier", 1.0, above=0.0, maximum=100.0)
    air_speed = losses.quantity("air_speed", "speed", "m/s", 0.0, minimum=0.0)
    losses.finish()

    c = top.table("cooler", required=False)
    cooler_W_K = c.quantity("specific_dissipation", "conductance", "W/K", 0.0, minimum=0.0)
    cooler_fan = c.choice("fan", ("with_flow", "always"), "with_flow")
    c.finish()

    s = top.table("session")
    start = s.quantity("start_temperature", "temperature", "degC", above=0.0)
    repeat = s.number("repeat", integer=True)
    ready = s.quantity("ready_temperature", "temperature", "degC", None, above=0.0)
    raw_steps = s.get("steps")
    if not isinstance(raw_steps, list) or not raw_steps:
        raise ScenarioError("session.steps", raw_steps, "a list of [[session.steps]] tables")
    if len(raw_steps) > MAX_SESSION_SUBSTEPS:
        raise ScenarioError("session.steps", f"{len(raw_steps)} steps", f"a cycle of at most {MAX_SESSION_SUBSTEPS} steps")
    cycle = tuple(parse_step(step, f"session.steps[{i}]", displacement, units, eta_v) for i, step in enumerate(raw_steps))
    per_cycle = sum(PLAN_RESOLUTION.substeps(step, step.duration_s) for step in cycle)
    if repeat * per_cycle > MAX_SESSION_SUBSTEPS:
        raise ScenarioError("session.repeat", repeat, f"a planned session of at most {MAX_SESSION_SUBSTEPS} sub-steps of "
                            f"the integrator (repeat x {per_cycle} for this cycle = {repeat * per_cycle}; at most "
                            f"{MAX_SESSION_SUBSTEPS // per_cycle} repeats)")
    if not any(step.is_pull for step in cycle):
        raise ScenarioError("session.steps", f"{len(cycle)} steps", "at least one step of kind \"pull\"")
    s.finish()
    uncertainty = read_uncertainty(top.get("uncertainty", None))
    top.finish()

    scenario = Scenario(raw=copy.deepcopy(raw), units=units, name=str(name), ambient_K=ambient,
                        reservoir=reservoir, oil=oil, max_temperature_K=max_T, min_viscosity_cSt=min_nu,
                        displacement_m3=displacement, volumetric_efficiency=eta_v, hardware=hardware,
                        convection_multiplier=convection_multiplier, capacity_multiplier=capacity_multiplier,
                        air_speed_m_s=air_speed, cooler_W_K=cooler_W_K, cooler_fan=cooler_fan,
                        start_K=start, repeat=repeat, cycle=cycle, ready_temperature_K=ready,
                        hardware_coupling_multiplier=coupling_multiplier,
                        return_line_max_temperature_K=return_line_max,
                        flash_point_K=DEFAULT_FLASH_POINT_C + ZERO_CELSIUS_K if flash_point is None else flash_point,
                        flash_point_given=flash_point is not None,
                        uncertainty=uncertainty,
                        warnings=temperature_unit_warnings(raw, units)
                        + operating_point_warnings(raw_steps, displacement, eta_v, units),
                        ambient_pressure_Pa=pressure, relative_humidity=humidity)
    _check_consistency(scenario)
    return scenario


def _read_air(top: _Table) -> tuple[float, float]:
    """(pressure Pa, relative humidity 0-1) of the ambient air: ambient_pressure, or altitude through
    the standard atmosphere (air.standard_pressure_Pa), not both; relative_humidity a fraction or a
    percentage string ("40 %"). Standard air (101325 Pa, dry) when neither is given."""
    pressure = top.quantity("ambient_pressure", "pressure", "bar", None, above=0.0)
    altitude = top.quantity("altitude", "length", "m", None)
    if pressure is not None and altitude is not None:
        raise ScenarioError("altitude", top.raw["altitude"], "either altitude or ambient_pressure, not both")
    if altitude is not None:
        pressure = standard_pressure_Pa(altitude)
    given = top.get("relative_humidity", 0.0)
    humidity = given
    if isinstance(given, str):
        try:
            humidity = float(given.strip().removesuffix("%")) / 100.0 if given.strip().endswith("%") else None
        except ValueError:
            humidity = None
        if humidity is None:
            raise ScenarioError("relative_humidity", given, 'a fraction from 0 to 1, or a percentage such as "40 %"')
    humidity = top.plain_number("relative_humidity", humidity, minimum=0.0, maximum=1.0)
    return (P_ATM_Pa if pressure is None else float(pressure)), float(humidity)



def limit_K(s: Scenario) -> tuple[float, str]:
    """The effective fluid limit: the lower of max_temperature and the temperature at which the
    viscosity falls to the pump's minimum. Returns (K, "max_temperature" | "min_viscosity")."""
    at_viscosity = s.oil.temperature_at_viscosity_K(s.min_viscosity_cSt)
    if at_viscosity < s.max_temperature_K:
        return at_viscosity, "min_viscosity"
    return s.max_temperature_K, "max_temperature"


def _temperature_text(T_K: float, system: str) -> str:
    """A temperature in the file's bare unit, e.g. '176.0 degF'."""
    unit = "degF" if system == "US" else "degC"
    return f"{convert(T_K, 'K', unit):.1f} {unit}"


def _check_consistency(s: Scenario):
    """Checks across keys, each after the keys it compares have been checked alone (the ambient
    first): the limit above ambient and start, the oil fitting the tank when hot. Temperatures are
    quoted in the file's units."""
    def temp(T_K):
        return _temperature_text(T_K, s.units)
    limit = limit_K(s)[0]
    if s.max_temperature_K <= s.ambient_K:
        raise ScenarioError("fluid.max_temperature", s.raw["fluid"]["max_temperature"],
                            f"a limit above the ambient temperature ({temp(s.ambient_K)})")
    if limit <= s.ambient_K:
        raise ScenarioError("fluid.min_viscosity", s.raw["fluid"]["min_viscosity"],
                            f"a viscosity reached only above the ambient temperature ({temp(s.ambient_K)}); "
                            f"this oil reaches it at {temp(limit)}")
    if s.start_K >= limit:
        raise ScenarioError("session.start_temperature", s.raw["session"]["start_temperature"],
                            f"a start below the fluid limit ({temp(limit)})")
    hot_volume = s.reservoir.oil_volume_m3 * (1.0 + s.oil.expansion_per_K * (s.max_temperature_K - 288.15))
    if hot_volume > s.reservoir.inner_volume_m3:
        unit = "gal" if s.units == "US" else "L"
        tank, needs = (convert(v, "m^3", unit) for v in (s.reservoir.inner_volume_m3, hot_volume))
        raise ScenarioError("reservoir.oil_volume", s.raw["reservoir"]["oil_volume"],
                            f"at most the tank's {tank:.2f} {unit} once expanded at the "
                            f"maximum temperature (needs {needs:.2f} {unit})")
    if s.return_line_max_temperature_K is not None and s.return_line_max_temperature_K <= s.start_K:
        raise ScenarioError("hardware.return_line_max_temperature", s.raw["hardware"]["return_line_max_temperature"],
                            f"a return-line limit above the start temperature ({temp(s.start_K)})")
    if s.flash_point_given and s.flash_point_K <= s.max_temperature_K:
        raise ScenarioError("fluid.flash_point", s.raw["fluid"]["flash_point"],
                            f"a flash point above the fluid's max_temperature ({temp(s.max_temperature_K)})")
    if s.ready_temperature_K is not None and not s.ambient_K < s.ready_temperature_K < limit:
        raise ScenarioError("session.ready_temperature", s.raw["session"]["ready_temperature"],
                            f"a temperature between ambient ({temp(s.ambient_K)}) and the fluid limit ({temp(limit)})")
