"""The conductances of the network, W/K: each path between two bodies of a rig, or between a body
and the air, one compiled function with a docstring saying what it stands for.

The paths without the pump (the standing loop oil, the engine-off link, the head space, the floor)
are compiled functions of still_paths.py, called from here and from network.node_system.
The network (network.node_system) calls them for one design at a time, in compiled code, with the
rig as a row of floats `p` (rig_params: p[FILL_HEIGHT] ...) and the air table's columns `air`
(air.air_at). They are the one implementation: the numpy functions of conductance_paths.py
(wall_to_ambient_W_K(rig, T) ...) run these same compiled functions over the designs of a `Rig`.
"""
from __future__ import annotations

import math

from .air import air_at
from .compiled import kernel
from .correlations import (Nu_combined_Churchill, Nu_flat_plate_forced_Incropera,
                           Nu_horizontal_cylinder_Churchill_Chu, Nu_horizontal_plate_hot_down_McAdams,
                           Nu_horizontal_plate_hot_up_McAdams, Nu_tube_Hausen_Gnielinski,
                           Nu_vertical_plate_Churchill_Chu, confined_jet_circulation_velocity,
                           fin_efficiency_straight, h_radiation_grey, rayleigh)
from .oil import OIL_BETA
from .still_paths import floor_link, head_space_W_K
from .rig_params import (AIR_SPEED, AMBIENT, BODY_AREA, BODY_LENGTH, BOTTOM_AREA, BOTTOM_RA_RATIO, CONVECTION_MULT,
                         COOLER, COOLER_ALWAYS, DISPLACEMENT, DRY_AREA, DRY_FIN_LENGTH, DRY_SHELL_MULT, DRY_SIDE_AREA,
                         FILL_HEIGHT, FLOOR_AREA, FLOOR_H, FLOOR_MULT, GEAR_PITCH_D, HALF_WALL, HARDWARE_EMISSIVITY,
                         HEAD_SPACE, HOSE_AREA, HOSE_INNER_D, HOSE_INNER_G, HOSE_LENGTH, HOSE_OUTER_G, HOSE_OUTER_D,
                         INTERNAL_AREA, JET_SECTION, OIL_FIRST, OIL_SIDE_MULT,
                         PASSAGE_D, PASSAGE_LENGTH, PLATE_LENGTH, PUMP_WETTED_AREA, SIDE_HEIGHT, TANK_CROSS_SECTION,
                         TOP_AREA, TOP_LENGTH, VOLUMETRIC_EFFICIENCY, WALL_EMISSIVITY, WALL_KT, WETTED_BOTTOM_AREA,
                         WETTED_SIDE_AREA)

# The surfaces of h_air, as codes (compiled code takes numbers, not strings)
VERTICAL, CYLINDER, TOP, BOTTOM = 0, 1, 2, 3


# --- the air side --------------------------------------------------------------------------------

@kernel
def with_forced_air(h_natural_W_m2K, k, nu, pr, air_speed_m_s, plate_length_m):
    """Natural convection combined with forced flow along a plate of plate_length_m (Churchill 1977,
    n = 3); h_natural unchanged in still air. k, nu, pr: the air's at the film."""
    if not air_speed_m_s > 0:
        return h_natural_W_m2K
    Nu_F = Nu_flat_plate_forced_Incropera(air_speed_m_s * plate_length_m / nu, pr)
    return Nu_combined_Churchill(Nu_F * k / plate_length_m, h_natural_W_m2K)


@kernel
def h_air(kind, length_m, T_surface_K, T_ambient_K, air_speed_m_s, plate_length_m, air):
    """Convective coefficient to ambient air, W/(m^2 K), of one kind of surface: VERTICAL (a plate,
    Churchill-Chu), CYLINDER (horizontal, Churchill-Chu), TOP or BOTTOM (the faces of a horizontal
    plate, McAdams: the top is the hot face up while the plate is hotter than the air, the bottom
    the hot face down). Natural convection, combined with a forced stream along plate_length_m by
    Churchill (1977), Nu^3 = Nu_F^3 + Nu_N^3, when air_speed_m_s > 0. Air properties at the film."""
    k, nu, pr, beta = air_at(0.5 * (T_surface_K + T_ambient_K), air)
    dT = T_surface_K - T_ambient_K
    Ra = rayleigh(beta, dT, length_m, nu, pr)
    if kind == VERTICAL:
        Nu = Nu_vertical_plate_Churchill_Chu(Ra, pr)
    elif kind == CYLINDER:
        Nu = Nu_horizontal_cylinder_Churchill_Chu(Ra, pr)
    elif (kind == TOP) == (dT >= 0):
        Nu = Nu_horizontal_plate_hot_up_McAdams(Ra)
    else:
        Nu = Nu_horizontal_plate_hot_down_McAdams(Ra)
    return with_forced_air(Nu * k / length_m, k, nu, pr, air_speed_m_s, plate_length_m)


@kernel
def series(area_m2, h_W_m2K, resistance_m2K_W):
    """Conductance (W/K) of a coefficient h in series with a conduction resistance R''."""
    return area_m2 * h_W_m2K / (1.0 + h_W_m2K * resistance_m2K_W)


@kernel
def dry_shell(p, h_side_W_m2K, h_top_W_m2K):
    """Conductance to the air of the shell above the oil line (dry sides and lid), W/K, per K of the
    wetted wall's temperature above ambient.

    The dry shell is a fin fed by conduction from the oil line: eta h A, with eta = tanh(mL)/(mL)
    (correlations.fin_efficiency_straight), m = sqrt(h / (k t)) from the wall's own conductivity and
    thickness, L = dry side height + the lid's A/P (the lid is fed from its edges), and h the
    area-weighted outside coefficient (convection and radiation, each in series with half the wall).
    The inside face is taken as adiabatic here; the head space's exchange from the oil surface through
    the lid is its own path (tank_to_air, still_paths.head_space_W_K), and the two superpose.
    Times the dry-shell multiplier (the band's factor).
    Steel of 2 mm: 1/m ~ 0.1 m, eta ~ 0.5 on a 0.2 m fin; polyethylene: 1/m ~ 1 cm, eta ~ 0.05.
    """
    half_wall = p[HALF_WALL]
    shed = series(p[DRY_SIDE_AREA], h_side_W_m2K, half_wall) + series(p[TOP_AREA], h_top_W_m2K, half_wall)
    m = math.sqrt(shed / (p[DRY_AREA] * p[WALL_KT]))
    return p[DRY_SHELL_MULT] * fin_efficiency_straight(m, p[DRY_FIN_LENGTH]) * shed


@kernel
def tank_to_air(p, T_oil_K, T_wall_K, air):
    """Conductances (oil through the head space and the lid, reservoir wall) -> air, W/K.

    Wall: the wetted sides (vertical plates, Churchill-Chu) and the bottom (McAdams), each
    convection (times the multiplier) plus linearised radiation, in series with half the wall
    thickness; the dry sides and the lid as a fin (dry_shell); a bottom that stands on the floor
    into the floor (still_paths.floor_link: rig.floor_h_W_m2K, still_paths.floor_h_W_m2K, times the
    floor multiplier, in series with half the wall). Head space: still_paths.head_space_W_K, with
    the lid's outside coefficient in series with its whole wall; the air of its layer at the film
    between the oil and the lid's mid-temperature, 0.75 T_oil + 0.25 T_air.
    """
    T_a, m, speed = p[AMBIENT], p[CONVECTION_MULT], p[AIR_SPEED]
    h_rad = h_radiation_grey(p[WALL_EMISSIVITY], T_wall_K, T_a)
    h_side = m * h_air(VERTICAL, p[SIDE_HEIGHT], T_wall_K, T_a, speed, p[PLATE_LENGTH], air) + h_rad
    h_top = m * h_air(TOP, p[TOP_LENGTH], T_wall_K, T_a, speed, p[PLATE_LENGTH], air) + h_rad
    h_bottom = m * h_air(BOTTOM, p[TOP_LENGTH], T_wall_K, T_a, speed, p[PLATE_LENGTH], air) + h_rad
    half_wall = p[HALF_WALL]
    wall = (series(p[WETTED_SIDE_AREA], h_side, half_wall) + series(p[BOTTOM_AREA], h_bottom, half_wall)
            + dry_shell(p, h_side, h_top))
    wall = wall + floor_link(p[FLOOR_AREA], p[FLOOR_H], p[FLOOR_MULT], half_wall)
    h_lid_out = h_top / (1.0 + 2.0 * h_top * half_wall)
    k, nu, pr, _ = air_at(0.75 * T_oil_K + 0.25 * T_a, air)
    head = head_space_W_K(T_oil_K, T_a, p[TOP_AREA], p[HEAD_SPACE], p[WALL_EMISSIVITY], h_lid_out, k, nu, pr, m)
    return head, wall


@kernel
def bodies_to_air(p, T_hardware_K, air):
    """Conductance metal bodies -> air, W/K: vertical plates of body_length_m over body_area_m2,
    convection (times the multiplier) plus linearised radiation."""
    T_a = p[AMBIENT]
    h = h_air(VERTICAL, p[BODY_LENGTH], T_hardware_K, T_a, p[AIR_SPEED], p[BODY_LENGTH], air)
    return p[BODY_AREA] * (p[CONVECTION_MULT] * h + h_radiation_grey(p[HARDWARE_EMISSIVITY], T_hardware_K, T_a))


@kernel
def hose_to_air(p, T_cover_K, air):
    """Conductance hose cover -> air, W/K: horizontal cylinders (Churchill-Chu; convection times the
    multiplier, plus linearised radiation) in series with the conduction from the cover's centre to
    the outside face (hose_rings_m); T_cover_K is the cover's (the outer ring's) temperature."""
    T_a, D = p[AMBIENT], p[HOSE_OUTER_D]
    h = p[CONVECTION_MULT] * h_air(CYLINDER, D, T_cover_K, T_a, p[AIR_SPEED], D, air)
    h += h_radiation_grey(p[HARDWARE_EMISSIVITY], T_cover_K, T_a)
    return series(p[HOSE_AREA], h, p[HOSE_AREA] / p[HOSE_OUTER_G])


# --- the oil side --------------------------------------------------------------------------------

@kernel
def stirring_velocity(p, volume_flow_m3_s):
    """Oil velocity along the tank's wetted wall while the pump runs, m/s.

    The return line discharges below the oil line as a round jet of the hose's bore, u0 = Q / A_0.
    In the closed tank its momentum flux M = rho u0^2 A_0 drives a circulation whose velocity scale
    is sqrt(M / (rho A)), A the tank's wetted section across the jet (its width, or diameter, times
    the fill height): correlations.confined_jet_circulation_velocity (Craya and Curtet; Becker,
    Hottel and Williams 1963; jet-mixing times in tanks, Fossett and Prosser 1949, Grenville and
    Tilton 1996). That speed, not the jet's centreline speed where it meets the far wall (Pope's free
    jet, the former estimate, about 6.5 times higher on a 0.3 m tank), is what sweeps every wetted
    wall. Never below the through-flow velocity Q / A_cross; 0 with no flow.
    """
    nozzle = 0.25 * math.pi * p[HOSE_INNER_D]**2
    circulation = confined_jet_circulation_velocity(volume_flow_m3_s / nozzle, nozzle, p[JET_SECTION])
    return max(circulation, volume_flow_m3_s / p[TANK_CROSS_SECTION])


@kernel
def oil_side_h(p, T_oil_K, T_wall_K, volume_flow_m3_s, nu, k, pr):
    """(sides, bottom) oil-side coefficients on the tank's wetted wall, W/(m^2 K), each times the
    oil-side multiplier; oil properties at the film temperature, beta the oil's expansion.

    Sides, still oil: Churchill-Chu on a vertical wall of the fill height. Bottom, still oil: the
    inner face of the bottom is a plate facing up into the oil; under warmer oil it is a cooled plate
    facing up, a stable layer, with the hot-face-down correlation 0.27 Ra^(1/4) (McAdams; Incropera
    eq. 9.32, "lower surface of a hot plate or upper surface of a cold plate"), L = A/P of the
    footprint; under cooler oil 0.54 Ra^(1/4) / 0.15 Ra^(1/3) (eqs. 9.30-9.31). Stirred (pump
    running): each combined by Churchill (1977), Nu^3 = Nu_F^3 + Nu_N^3, with forced flow along the
    wall (flat plate, Incropera eqs. 7.30/7.38) at stirring_velocity_m_s, over the fill height on
    the sides and the footprint's length on the bottom.
    nu, k, pr : the oil's at the film temperature.
    """
    dT = T_wall_K - T_oil_K
    fill, footprint, plate = p[FILL_HEIGHT], p[TOP_LENGTH], p[PLATE_LENGTH]
    Ra_side = rayleigh(p[OIL_FIRST + OIL_BETA], dT, fill, nu, pr)
    Ra_bottom = Ra_side * p[BOTTOM_RA_RATIO]
    Nu_side = Nu_vertical_plate_Churchill_Chu(Ra_side, pr)
    if dT >= 0:
        Nu_bottom = Nu_horizontal_plate_hot_up_McAdams(Ra_bottom)
    else:
        Nu_bottom = Nu_horizontal_plate_hot_down_McAdams(Ra_bottom)
    velocity = stirring_velocity(p, volume_flow_m3_s)
    if velocity > 0:    # forced: along the sides over the fill height, the bottom over its length
        Nu_side = Nu_combined_Churchill(Nu_flat_plate_forced_Incropera(velocity * fill / nu, pr), Nu_side)
        Nu_bottom = Nu_combined_Churchill(
            Nu_flat_plate_forced_Incropera(velocity * plate / nu, pr) * footprint / plate, Nu_bottom)
    m = p[OIL_SIDE_MULT]
    return m * Nu_side * k / fill, m * Nu_bottom * k / footprint


@kernel
def oil_to_wall(p, h_side_W_m2K, h_bottom_W_m2K):
    """Conductance oil -> wall node, W/K: the oil-side coefficients (oil_side_h) over the wetted sides
    and the bottom, each in series with half the wall thickness."""
    half_wall = p[HALF_WALL]
    return (series(p[WETTED_SIDE_AREA], h_side_W_m2K, half_wall)
            + series(p[WETTED_BOTTOM_AREA], h_bottom_W_m2K, half_wall))


@kernel
def loop_paths(p, volume_flow_m3_s, capacity_rate_W_K, nu, k_oil, pr):
    """Conductances loop oil -> (metal bodies, hose liner), W/K; the bodies' is not yet multiplied by
    hardware_coupling_multiplier. nu, k_oil, pr: the bulk oil's; capacity_rate_W_K: m_dot c_p.

    Flowing: each is a heat exchanger with one side (the solid) at a uniform temperature, so
    G = eps m_dot c_p with eps = 1 - exp(-NTU), NTU = UA / (m_dot c_p) (Incropera eq. 8.45b).
    - Bodies: UA = h_pump A_pump + h_passages A_passages, where A_pump (pump_wetted_area_m2) is the
      pump's working chamber and the rest of internal_area_m2 the passages through the bodies.
      Passages of bore passage_diameter_m, each passage_length_m long: the tube correlation
      (Hausen laminar entry, Gnielinski turbulent) at the passage velocity Q / (pi D^2 / 4).
      Pump chamber: the oil moves over the gears at their pitch-line speed u = pi d_p n, with
      n = Q / (V_d eta_v); forced flow along a flat plate of length d_p / 2 (Incropera eqs.
      7.30/7.38). The metal's own resistance is part of the body node (cast iron and steel: Biot
      number h t / k ~ 0.1-0.3). The valve's throttling jet and the gear mesh stir more than either
      estimate says, so this is a low estimate (hardware_coupling_multiplier carries the
      uncertainty).
    - Hoses: the tube correlation over the bore in series with the conduction from the bore to the
      liner's centre (the hose liner is the inner ring of the rubber, hose_rings_m).
    Still (engine off): 0. The bodies and the hose liner then exchange with the loop oil standing in
    them, a node of its own (network.LOOP_OIL; still_paths.loop_oil_links), which touches the
    tank's oil only along the standing columns.
    """
    D_i, L = p[HOSE_INNER_D], p[HOSE_LENGTH]
    Q = volume_flow_m3_s
    if not Q > 0:
        return 0.0, 0.0
    h_hose = Nu_tube_Hausen_Gnielinski(Q / (0.25 * math.pi * D_i**2) * D_i / nu, pr, D_i, L) * k_oil / D_i
    D = p[PASSAGE_D]
    h_passage = Nu_tube_Hausen_Gnielinski(Q / (0.25 * math.pi * D**2) * D / nu, pr, D, p[PASSAGE_LENGTH]) * k_oil / D
    UA_hose = 1.0 / (1.0 / (h_hose * math.pi * D_i * L) + 1.0 / p[HOSE_INNER_G])
    d_p = p[GEAR_PITCH_D]
    pitch_speed = math.pi * d_p * Q / (p[DISPLACEMENT] * p[VOLUMETRIC_EFFICIENCY])
    h_pump = Nu_flat_plate_forced_Incropera(pitch_speed * 0.5 * d_p / nu, pr) * k_oil / (0.5 * d_p)
    UA_bodies = h_pump * p[PUMP_WETTED_AREA] + h_passage * (p[INTERNAL_AREA] - p[PUMP_WETTED_AREA])
    rate = max(capacity_rate_W_K, 1e-30)
    return rate * -math.expm1(-UA_bodies / rate), rate * -math.expm1(-UA_hose / rate)


@kernel
def cooler(p, flowing, capacity_rate_W_K):
    """Effective cooler conductance, W/K per K of ETD (return-line oil minus ambient air).

    The rating is taken as constant with flow (no flow correction is applied), but it is capped at
    the oil stream's capacity rate m_dot c_p: a cooler cannot bring the oil below the air. With
    fan = "always" the cooler has its own circulation and works with the engine off too, at the
    rated value.
    """
    K = p[COOLER]
    if not K > 0:
        return 0.0
    if flowing:
        return min(K, capacity_rate_W_K)
    return K if p[COOLER_ALWAYS] > 0 else 0.0
