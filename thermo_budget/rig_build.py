"""From a validated scenario to the thermal network it describes (`Rig`), and its fluid limit."""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from .materials import MATERIALS
from .network import Rig

if TYPE_CHECKING:
    from .scenario import Scenario


def build_rig(s: "Scenario", oil_volume_m3=None, cooler_W_K=None, convection_multiplier=None,
              capacity_multiplier=None) -> Rig:
    """The network of a scenario. oil_volume_m3 and cooler_W_K may be arrays (N designs); a changed
    oil volume scales the tank geometrically (same proportions and fill fraction)."""
    res, hw = s.reservoir, s.hardware
    volume = np.atleast_1d(np.asarray(res.oil_volume_m3 if oil_volume_m3 is None else oil_volume_m3, dtype=float))
    scale = (volume / res.oil_volume_m3) ** (1.0 / 3.0)
    if res.shape == "box":
        perimeter = 2.0 * (res.length_m + res.width_m)
        plate = res.length_m
    else:
        perimeter = np.pi * res.diameter_m
        plate = res.diameter_m
    footprint = res.footprint_m2
    fill = res.oil_volume_m3 / footprint
    side_area = perimeter * res.height_m * scale**2
    top_area = footprint * scale**2
    wall = MATERIALS[res.wall_material]
    shell_area = side_area + 2.0 * top_area
    hw_material = MATERIALS[hw.material]
    return Rig(
        oil=s.oil,
        oil_mass_kg=volume * s.oil.density_15C_kg_m3,
        side_area_m2=side_area, side_height_m=res.height_m * scale,
        top_area_m2=top_area, top_length_m=footprint / perimeter * scale,
        bottom_area_m2=top_area if res.bottom == "open" else np.zeros_like(top_area),
        plate_length_m=plate * scale,
        wetted_area_m2=(perimeter * fill + footprint) * scale**2,
        fill_height_m=fill * scale, tank_cross_section_m2=top_area,
        wall_thickness_m=res.wall_thickness_m, wall_conductivity_W_mK=wall["conductivity_W_mK"],
        wall_capacity_J_K=shell_area * res.wall_thickness_m * wall["density_kg_m3"] * wall["specific_heat_J_kgK"],
        wall_emissivity=res.emissivity,
        hardware_capacity_J_K=hw.mass_kg * hw_material["specific_heat_J_kgK"],
        hose_length_m=hw.hose_length_m, hose_outer_diameter_m=hw.hose_outer_diameter_m,
        hose_inner_diameter_m=hw.hose_inner_diameter_m, body_area_m2=hw.body_area_m2,
        body_length_m=np.sqrt(hw.body_area_m2 / 6.0) if hw.body_area_m2 > 0 else 0.1,
        hardware_emissivity=hw.emissivity,
        displacement_m3=s.displacement_m3, volumetric_efficiency=s.volumetric_efficiency,
        ambient_K=s.ambient_K, air_speed_m_s=s.air_speed_m_s,
        convection_multiplier=s.convection_multiplier if convection_multiplier is None else convection_multiplier,
        capacity_multiplier=s.capacity_multiplier if capacity_multiplier is None else capacity_multiplier,
        cooler_W_K=np.asarray(s.cooler_W_K if cooler_W_K is None else cooler_W_K, dtype=float),
        cooler_fan=s.cooler_fan)


def limit_K(s: "Scenario") -> tuple[float, str]:
    """The effective fluid limit: the lower of max_temperature and the temperature at which the
    viscosity falls to the pump's minimum. Returns (K, "max_temperature" | "min_viscosity")."""
    at_viscosity = s.oil.temperature_at_viscosity_K(s.min_viscosity_cSt)
    if at_viscosity < s.max_temperature_K:
        return at_viscosity, "min_viscosity"
    return s.max_temperature_K, "max_temperature"
