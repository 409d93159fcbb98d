"""From a validated scenario to the thermal network it describes (`Rig`)."""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..physics.air import air_columns
from ..physics.compiled import elementwise
from ..physics.correlations import fin_efficiency_straight
from ..physics.materials import HOSE_WALL, MATERIALS
from .hardware_defaults import gear_pitch_diameter_m, pump_wetted_area_m2
from ..physics.rig import Rig
from ..physics.still_paths import floor_h_W_m2K

# Outside coefficient (convection + radiation) of a wall in still air at which the dry shell's share
# of the wall node's capacity is weighed: about 10 W/(m^2 K) (common practice, no source; the
# trade's 5.8-14 W/(m^2 K) band for steel tanks).
REFERENCE_OUTSIDE_H_W_m2K = 10.0

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
        plate, across = res.length_m, res.width_m      # the return jet runs along the length
    else:
        perimeter = np.pi * res.diameter_m
        plate = across = res.diameter_m
    footprint = res.footprint_m2
    fill = res.oil_volume_m3 / footprint
    side_area = perimeter * res.height_m * scale**2
    top_area = footprint * scale**2
    wall = MATERIALS[res.wall_material]
    height = res.height_m * scale
    fill_height = fill * scale
    wetted_side = perimeter * fill_height * scale
    dry_side = side_area - wetted_side
    dry_fin_length = (height - fill_height) + footprint / perimeter * scale
    # The dry shell is a fin fed from the oil line; its mean temperature rise over the air is eta
    # times the wetted wall's, so that is its share of the wall node's capacity.
    m_ref = np.sqrt(REFERENCE_OUTSIDE_H_W_m2K / (wall["conductivity_W_mK"] * res.wall_thickness_m))
    dry_weight = elementwise(fin_efficiency_straight)(m_ref, dry_fin_length)
    shell_volume_per_thickness = wetted_side + top_area + dry_weight * (dry_side + top_area)
    hw_material = MATERIALS[hw.material]
    hose_wall_m3 = 0.25 * np.pi * (hw.hose_outer_diameter_m**2 - hw.hose_inner_diameter_m**2) * hw.hose_length_m
    hose_bore_m3 = 0.25 * np.pi * hw.hose_inner_diameter_m**2 * hw.hose_length_m
    body_oil_m3 = 0.25 * hw.internal_area_m2 * hw.hose_inner_diameter_m   # passages of the hose's bore
    pump_area = min(pump_wetted_area_m2(s.displacement_m3), hw.internal_area_m2)
    return Rig(
        oil=s.oil,
        oil_mass_kg=volume * s.oil.density_15C_kg_m3,
        side_area_m2=side_area, side_height_m=height,
        top_area_m2=top_area, top_length_m=footprint / perimeter * scale,
        bottom_area_m2=top_area if res.bottom == "open" else np.zeros_like(top_area),
        plate_length_m=plate * scale,
        wetted_area_m2=(perimeter * fill + footprint) * scale**2,
        fill_height_m=fill_height, tank_cross_section_m2=top_area,
        wall_thickness_m=res.wall_thickness_m, wall_conductivity_W_mK=wall["conductivity_W_mK"],
        wall_capacity_J_K=shell_volume_per_thickness * res.wall_thickness_m * wall["density_kg_m3"]
        * wall["specific_heat_J_kgK"],
        wall_emissivity=res.emissivity,
        hardware_capacity_J_K=hw.mass_kg * hw_material["specific_heat_J_kgK"],
        hose_length_m=hw.hose_length_m, hose_outer_diameter_m=hw.hose_outer_diameter_m,
        hose_inner_diameter_m=hw.hose_inner_diameter_m, body_area_m2=hw.body_area_m2,
        body_length_m=np.sqrt(hw.body_area_m2 / 18.0) if hw.body_area_m2 > 0 else 0.1,  # one of three cubes
        hardware_emissivity=hw.emissivity,
        displacement_m3=s.displacement_m3, volumetric_efficiency=s.volumetric_efficiency,
        ambient_K=s.ambient_K, air_speed_m_s=s.air_speed_m_s,
        convection_multiplier=s.convection_multiplier if convection_multiplier is None else convection_multiplier,
        capacity_multiplier=s.capacity_multiplier if capacity_multiplier is None else capacity_multiplier,
        hardware_coupling_multiplier=s.hardware_coupling_multiplier,
        cooler_W_K=np.asarray(s.cooler_W_K if cooler_W_K is None else cooler_W_K, dtype=float),
        cooler_fan=s.cooler_fan,
        loop_oil_mass_kg=(hose_bore_m3 + body_oil_m3) * s.oil.density_15C_kg_m3,
        hose_capacity_J_K=hose_wall_m3 * HOSE_WALL["density_kg_m3"] * HOSE_WALL["specific_heat_J_kgK"],
        internal_area_m2=hw.internal_area_m2, pump_wetted_area_m2=pump_area,
        gear_pitch_diameter_m=gear_pitch_diameter_m(s.displacement_m3), passage_diameter_m=hw.hose_inner_diameter_m,
        passage_length_m=hw.passage_length_m,
        wetted_side_area_m2=wetted_side, wetted_bottom_area_m2=top_area, dry_side_area_m2=dry_side,
        dry_fin_length_m=dry_fin_length, jet_section_m2=across * fill_height * scale,
        engine_off_coupling_W_K=hw.engine_off_coupling_W_K,
        floor_area_m2=top_area if res.bottom == "floor" else np.zeros_like(top_area),
        floor_h_W_m2K=float(floor_h_W_m2K(sum(step.duration_s for step in s.steps))),
        head_space_m=np.maximum(height - fill_height, 0.0),
        air_columns=air_columns(s.ambient_pressure_Pa, s.relative_humidity, s.ambient_K))

