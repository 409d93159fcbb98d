"""Shared fixtures: an invented base rig as a raw scenario dict, and helpers to write it as TOML.

Every number in BASE_RAW is invented for the tests (our own rig, not a measured one).
"""
from __future__ import annotations

import copy
from pathlib import Path

import pytest
import tomli_w

from thermo_budget.scenario import load_scenario

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
    """Set raw["a"]["b"] for path "a.b"; value None removes the key."""
    parts = path.split(".")
    table = raw
    for part in parts[:-1]:
        table = table.setdefault(part, {})
    if value is None:
        table.pop(parts[-1], None)
    else:
        table[parts[-1]] = value
    return raw


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
