"""From a validated scenario to the thermal network it describes (`Rig`), and its fluid limit."""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from .compiled import elementwise
from .correlations import fin_efficiency_straight
from .materials import HOSE_WALL, MATERIALS
from .network import Rig

# Outside coefficient (convection + radiation) of a wall in still air at which the dry shell's share
# of the wall node's capacity is weighed: about 10 W/(m^2 K) (common practice, no source; the
# trade's 5.8-14 W/(m^2 K) band for steel tanks).
REFERENCE_OUTSIDE_H_W_m2K = 10.0

if TYPE_CHECKING:
    from .scenario import Scenario

# The default rules for the loop's metal bodies (engineering judgement, stated so it can be checked):
# - They are three compact castings (pump, valve, manifold with fittings) with ribs, flanges, ports
#   and bolt heads: their outside area is taken as 3 times that of one cube of the whole metal mass
#   (a review of real pumps, valves and manifolds put it at 2-4 times; the middle of that band).
BODY_AREA_PER_CUBE_AREA = 3.0
# - Inside, the oil wets the pump's working chamber and the passages through the bodies. The pump
#   is taken as an external gear pump, the usual pump of small stands, with two gears of
#   GEAR_TEETH teeth and a face width of half the pitch diameter; its displacement is then about
#   V_d = 2 pi m^2 z b = pi d_p^3 / z (the usual approximation for external gear pumps, m the module,
#   b the face width). A 14 cm^3/rev pump so has gears of about 38 mm pitch diameter and 19 mm
#   width, and wets about 0.02 m^2 (tooth flanks and faces of both gears, the housing bores, the
#   ports), i.e. about 35 V_d^(2/3); geometrically similar pumps scale with V_d^(2/3).
GEAR_TEETH = 12
PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3 = 35.0
# - The passages through the valve, the manifold and the fittings have the hose's bore; the oil
#   crosses the bodies four times (into and out of the pump, into and out of the valve), each time
#   one side of the cube of the bodies' metal, s = (m / rho)^(1/3).
PASSAGES_PER_LOOP = 4


def body_cube_side_m(mass_kg: float, density_kg_m3: float) -> float:
    """Side of one cube holding the bodies' metal, m."""
    return (mass_kg / density_kg_m3) ** (1.0 / 3.0)


def default_body_area_m2(mass_kg: float, density_kg_m3: float) -> float:
    """The bodies' outside area when not given, m^2: BODY_AREA_PER_CUBE_AREA cubes' worth."""
    return BODY_AREA_PER_CUBE_AREA * 6.0 * body_cube_side_m(mass_kg, density_kg_m3) ** 2


def gear_pitch_diameter_m(displacement_m3):
    """Pitch diameter of the gears of an external gear pump of this displacement, m:
    d_p = (z V_d / pi)^(1/3) (see GEAR_TEETH).

    >>> round(gear_pitch_diameter_m(14e-6) * 1000, 1)
    37.7
    """
    return (GEAR_TEETH * displacement_m3 / np.pi) ** (1.0 / 3.0)


def pump_wetted_area_m2(displacement_m3):
    """Wetted area of a gear pump's working chamber, m^2 (see PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3)."""
    return PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3 * displacement_m3 ** (2.0 / 3.0)


def default_internal_area_m2(mass_kg: float, density_kg_m3: float, displacement_m3: float,
                             bore_m: float) -> float:
    """The bodies' wetted inside when not given, m^2: the pump's working chamber
    (PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3 V_d^(2/3)) plus PASSAGES_PER_LOOP passages of the hose's
    bore, each one cube side long. 12 kg of steel with a 16 cm^3 pump and 17.8 mm bore: 0.048 m^2.

    >>> round(default_internal_area_m2(12.0, 7850.0, 16e-6, 0.0178), 4)
    0.048
    """
    return pump_wetted_area_m2(displacement_m3) + PASSAGES_PER_LOOP * np.pi * bore_m * body_cube_side_m(mass_kg, density_kg_m3)


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
        dry_fin_length_m=dry_fin_length, jet_throw_m=plate * scale)


def limit_K(s: "Scenario") -> tuple[float, str]:
    """The effective fluid limit: the lower of max_temperature and the temperature at which the
    viscosity falls to the pump's minimum. Returns (K, "max_temperature" | "min_viscosity")."""
    at_viscosity = s.oil.temperature_at_viscosity_K(s.min_viscosity_cSt)
    if at_viscosity < s.max_temperature_K:
        return at_viscosity, "min_viscosity"
    return s.max_temperature_K, "max_temperature"
