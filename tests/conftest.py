"""Shared fixtures: an invented base rig as a raw scenario dict, and helpers to write it as TOML;
the adiabatic rig of the solver's and the hose wall's tests; the `heavy` mark.

Every number in BASE_RAW is invented for the tests (our own rig, not a measured one).

Heavy runs (the long fuzz, 500 random rigs, the page in a real browser) carry `@pytest.mark.heavy`
and run only with THERMO_HEAVY=1 (`.ci/run` sets it in its second pytest command); the README's
`python -m pytest -q` runs the same checks on fewer, sharper cases.
"""
from __future__ import annotations

import copy
import os
from pathlib import Path

import numpy as np
import pytest
import tomli_w

from thermo_budget.inputs.scenario import load_scenario, with_path

HEAVY = os.environ.get("THERMO_HEAVY", "") not in ("", "0")


def pytest_configure(config):
    config.addinivalue_line("markers", "heavy: a long run, only with THERMO_HEAVY=1 (.ci/run sets it)")


def pytest_collection_modifyitems(config, items):
    if HEAVY:
        return
    skip = pytest.mark.skip(reason="heavy run: set THERMO_HEAVY=1 (.ci/run does)")
    for item in items:
        if "heavy" in item.keywords:
            item.add_marker(skip)

REPO = Path(__file__).resolve().parent.parent
SCENARIO_DIR = REPO / "scenarios"
SHIPPED_SCENARIOS = sorted(SCENARIO_DIR.glob("*.toml"))

BASE_RAW = {
    "name": "test rig",
    "ambient": "20 degC",
    "reservoir": {"oil_volume": "15 L", "shape": "box", "length": "0.35 m", "width": "0.25 m",
                  "height": "0.30 m", "wall_material": "steel", "wall_thickness": "2 mm",
                  "emissivity": 0.9, "bottom": "open"},
    "fluid": {"iso_vg": 46, "viscosity_index": 100, "density_15C": "870 kg/m^3",
              "max_temperature": "80 degC", "min_viscosity": "10 cSt"},
    "pump": {"displacement": "16 cm^3", "volumetric_efficiency": 0.92},
    "hardware": {"mass": "8 kg", "material": "steel", "hose_length": "2.5 m",
                 "hose_outer_diameter": "28 mm", "emissivity": 0.95},
    "losses": {"convection_multiplier": 1.0},
    "session": {"start_temperature": "20 degC", "repeat": 4,
                "steps": [{"kind": "pull", "duration": "12 s", "power": "9 kW", "rpm": 3400},
                          {"kind": "wait", "duration": "4 min", "engine": "off"}]},
}


def base_raw() -> dict:
    """A fresh deep copy of the base rig, to be changed by a test."""
    return copy.deepcopy(BASE_RAW)


def set_path(raw: dict, path: str, value):
    """Set raw["a"]["b"] for path "a.b" in place; value None removes the key."""
    new = with_path(raw, path, value)
    raw.clear()
    raw.update(new)
    return raw


def bad_scenario_path(tmp_path: Path, change) -> Path:
    """A scenario file for one BAD_INPUTS case: raw text as given, or a change applied to base_raw()."""
    if isinstance(change, str):
        path = tmp_path / "scenario.toml"
        path.write_text(change, encoding="utf-8")
        return path
    return write_toml(tmp_path, change(base_raw()))


def write_toml(directory: Path, raw: dict, name: str = "scenario.toml") -> Path:
    path = Path(directory) / name
    path.write_text(tomli_w.dumps(raw), encoding="utf-8")
    return path


@pytest.fixture
def raw():
    return base_raw()


@pytest.fixture(scope="session")
def base_scenario():
    return load_scenario(base_raw())


@pytest.fixture(scope="session")
def default_scenario():
    return load_scenario(SCENARIO_DIR / "default.toml")


def _drop(path):
    return lambda raw: set_path(raw, path, None)


def _put(path, value):
    return lambda raw: set_path(raw, path, value)


def _both(*changes):
    def apply(raw):
        for change in changes:
            raw = change(raw)
        return raw
    return apply


def _curve_pull(**overrides):
    step = {"kind": "pull", "duration": "10 s", "curve_rpm": [2000, 3000, 4000],
            "curve_torque": ["30 N*m", "35 N*m", "32 N*m"], "rpm_start": 2500, "rpm_end": 4000}
    step.update(overrides)
    return _put("session.steps", [step, {"kind": "wait", "duration": "1 min", "engine": "off"}])


MALFORMED_TOML = 'ambient = "20 degC"\n[reservoir\noil_volume = "15 L"\n'

# Every kind of bad scenario input: (id, change to the base rig or TOML text, key the message names)
BAD_INPUTS = [
    ("missing key", _drop("reservoir.height"), "reservoir.height"),
    ("missing table", _drop("pump"), "pump"),
    ("missing top-level key", _drop("ambient"), "ambient"),
    ("wrong unit volume", _put("reservoir.oil_volume", "15 kg"), "reservoir.oil_volume"),
    ("wrong unit temperature", _put("ambient", "20 m"), "ambient"),
    ("wrong unit power", _put("session.steps", [{"kind": "pull", "duration": "12 s", "power": "9 kg", "rpm": 3000}]),
     "session.steps[0].power"),
    ("unknown unit", _put("hardware.mass", "8 foo"), "hardware.mass"),
    ("not a number", _put("reservoir.oil_volume", "lots L"), "reservoir.oil_volume"),
    ("boolean quantity", _put("reservoir.oil_volume", True), "reservoir.oil_volume"),
    ("negative volume", _put("reservoir.oil_volume", "-5 L"), "reservoir.oil_volume"),
    ("zero volume", _put("reservoir.oil_volume", "0 L"), "reservoir.oil_volume"),
    ("negative displacement", _put("pump.displacement", "-16 cm^3"), "pump.displacement"),
    ("below absolute zero", _put("ambient", "-300 degC"), "ambient"),
    ("limit below ambient", _put("fluid.max_temperature", "15 degC"), "fluid.max_temperature"),
    ("viscosity limit below ambient", _put("fluid.min_viscosity", "400 cSt"), "fluid.min_viscosity"),
    ("start above limit", _put("session.start_temperature", "90 degC"), "session.start_temperature"),
    ("unknown key", _put("reservoir.colour", "red"), "reservoir.colour"),
    ("unknown top-level key", _put("colour", "red"), "colour"),
    ("unknown step key", _put("session.steps", [{"kind": "pull", "duration": "12 s", "power": "9 kW",
                                                  "rpm": 3000, "torque": "20 N*m"}]), "session.steps[0].torque"),
    ("unknown table", _put("cooling", {"fan": "always"}), "cooling"),
    ("malformed TOML", MALFORMED_TOML, "scenario.toml"),
    ("oil not fitting the tank", _put("reservoir.oil_volume", "40 L"), "reservoir.oil_volume"),
    ("oil fits cold but not hot", _put("reservoir.oil_volume", "26.1 L"), "reservoir.oil_volume"),
    ("bad shape", _put("reservoir.shape", "sphere"), "reservoir.shape"),
    ("cylinder without diameter", _put("reservoir.shape", "cylinder"), "reservoir.diameter"),
    ("bad material", _put("reservoir.wall_material", "wood"), "reservoir.wall_material"),
    ("wall thicker than 50 mm", _put("reservoir.wall_thickness", "80 mm"), "reservoir.wall_thickness"),
    ("bad bottom", _put("reservoir.bottom", "hanging"), "reservoir.bottom"),
    ("emissivity above one", _put("reservoir.emissivity", 1.5), "reservoir.emissivity"),
    ("emissivity as text", _put("hardware.emissivity", "high"), "hardware.emissivity"),
    ("not an ISO grade", _put("fluid.iso_vg", 47), "fluid.iso_vg"),
    ("grade and viscosity", _put("fluid.viscosity_40C", "46 cSt"), "fluid.iso_vg"),
    ("neither VI nor nu100", _drop("fluid.viscosity_index"), "fluid.viscosity_index"),
    ("nu100 above nu40", _both(_drop("fluid.viscosity_index"), _put("fluid.viscosity_100C", "60 cSt")),
     "fluid.viscosity_100C"),
    ("viscosity index out of range", _put("fluid.viscosity_index", 900), "fluid.viscosity_index"),
    ("density not a liquid", _put("fluid.density_15C", "2000 kg/m^3"), "fluid.density_15C"),
    ("min viscosity below D341 range", _put("fluid.min_viscosity", "1 cSt"), "fluid.min_viscosity"),
    ("volumetric efficiency above one", _put("pump.volumetric_efficiency", 1.2), "pump.volumetric_efficiency"),
    ("hose bore not inside", _put("hardware.hose_inner_diameter", "30 mm"), "hardware.hose_inner_diameter"),
    ("negative convection multiplier", _put("losses.convection_multiplier", -1.0), "losses.convection_multiplier"),
    ("negative air speed", _put("losses.air_speed", "-2 m/s"), "losses.air_speed"),
    ("bad cooler fan", _put("cooler", {"specific_dissipation": "20 W/K", "fan": "sometimes"}), "cooler.fan"),
    ("bad units system", _put("units", "imperial"), "units"),
    ("zero repeat", _put("session.repeat", 0), "session.repeat"),
    ("fractional repeat", _put("session.repeat", 2.5), "session.repeat"),
    ("no steps", _put("session.steps", []), "session.steps"),
    ("no pull", _put("session.steps", [{"kind": "wait", "duration": "1 min", "engine": "off"}]), "session.steps"),
    ("bad step kind", _put("session.steps", [{"kind": "sprint", "duration": "1 s"}]), "session.steps[0].kind"),
    ("bad engine state", _put("session.steps", [{"kind": "pull", "duration": "12 s", "power": "9 kW", "rpm": 3000},
                                                 {"kind": "wait", "duration": "1 min", "engine": "running"}]),
     "session.steps[1].engine"),
    ("negative duration", _put("session.steps", [{"kind": "pull", "duration": "-12 s", "power": "9 kW", "rpm": 3000}]),
     "session.steps[0].duration"),
    ("curve speeds not increasing", _curve_pull(curve_rpm=[2000, 4000, 3000]), "session.steps[0].curve_rpm"),
    ("sweep outside the curve", _curve_pull(rpm_end=5000), "session.steps[0].rpm_end"),
    ("curve lengths differ", _curve_pull(curve_torque=["30 N*m", "35 N*m"]), "session.steps[0].curve_torque"),
    # a curve that absorbs nothing is a pull of zero power, which a constant-power pull rejects
    ("curve with no power", _curve_pull(curve_torque=["0 N*m", "0 N*m", "0 N*m"]), "session.steps[0]"),
    # an absolute temperature given as a temperature difference must not become 20 K
    ("temperature difference unit", _put("ambient", "20 delta_degC"), "ambient"),
]


@pytest.fixture(scope="session")
def default_report(default_scenario):
    """thermo_budget.report on the default scenario, computed once (it runs the planning searches)."""
    import thermo_budget
    return thermo_budget.report(default_scenario).to_json()


@pytest.fixture(scope="session")
def demo_log_fit(default_scenario):
    """calibrate.fit_log of the shipped demo log on the default scenario, computed once (tests of
    the calibration, the band and the uncertainty model read it; none changes it)."""
    from thermo_budget.logs.calibrate import fit_log
    return fit_log(default_scenario, (SCENARIO_DIR / "demo_log.csv").read_text())


@pytest.fixture(scope="session")
def busy_scenario(default_scenario):
    """The default rig asked for 45 pulls: more than fit, so the wait, the cooler and the volume are
    all non-trivial."""
    return default_scenario.changed(**{"session.repeat": 45})


@pytest.fixture(scope="session")
def busy_report(busy_scenario):
    """thermo_budget.report on the busy scenario, computed once (tests/test_bands.py, tests/test_planning.py)."""
    import thermo_budget
    return thermo_budget.report(busy_scenario).to_json()


# Keys `run --json` must contain (issue 2)
REQUIRED_JSON_KEYS = ["limit_C", "limit_reason", "start_C", "peak_C", "end_C", "peak_return_C",
                      "pulls_planned", "pulls_under_limit", "time_to_limit_s", "energy_in_J", "energy_lost_J",
                      "energy_stored_J", "energy_balance_rel_error", "heat_capacity_J_per_K",
                      "passive_rejection_at_limit_W", "peak_pull_power_W", "pump"]


# --- the adiabatic rig (tests/test_solver.py, tests/test_hose_wall_reference.py) ------------------

def adiabatic_raw() -> dict:
    """The base rig with no path to the air: no convection, no radiation."""
    raw = base_raw()
    set_path(raw, "losses.convection_multiplier", 0.0)
    set_path(raw, "reservoir.emissivity", 0.0)
    set_path(raw, "hardware.emissivity", 0.0)
    return raw


def single_temperature_K(rig, T0_K, energy_J):
    """The temperature at which every node would sit after taking energy_J from T0_K (first law,
    written with the package's enthalpies, which tests/test_solver.py checks against Cragoe)."""
    from scipy.optimize import brentq

    from thermo_budget.physics.network import N_NODES, node_enthalpy_J

    def total(T):
        return float(np.sum(node_enthalpy_J(rig, np.full((1, N_NODES), T))))
    H0 = total(T0_K)
    return brentq(lambda T: total(T) - H0 - energy_J, T0_K, T0_K + 300.0, xtol=1e-10)


def _adiabatic_steps():
    from thermo_budget.engine.session import Step
    return (Step(kind="pull", duration_s=10.0, engine="on", power_W=10000.0, rpm=3600.0),
            Step(kind="wait", duration_s=30.0, engine="off"))


# 10 kW x 10 s pulls and 30 s engine-off waits (invented)
ADIABATIC_PULL, ENGINE_OFF_30S = _adiabatic_steps()


def load_tool(name: str):
    """A developer tool of tools/ (outside the installed package), loaded from its file."""
    import importlib.util
    path = Path(__file__).resolve().parents[1] / "tools" / f"{name}.py"
    spec = importlib.util.spec_from_file_location(f"tools_{name}", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module
