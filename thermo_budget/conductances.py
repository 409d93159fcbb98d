"""The conductances of the network, W/K: each path between two bodies of a rig, or between a body
and the air, one function with a docstring saying what it stands for. Pure functions of a `Rig`
(rig.py) and the temperatures, vectorised over designs.
"""
from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .air import air_properties
from .correlations import (Nu_combined_Churchill, confined_jet_circulation_velocity, Nu_flat_plate_forced_Incropera,
                           Nu_horizontal_cylinder_Churchill_Chu, Nu_horizontal_plate_hot_down_McAdams,
                           Nu_horizontal_plate_hot_up_McAdams, Nu_tube_Hausen_Gnielinski,
                           Nu_vertical_plate_Churchill_Chu, fin_efficiency_straight, h_radiation_grey, rayleigh)
from .rig import Rig, rows as _rows
from .still_paths import floor_W_K, head_space_W_K


def _like(rows, like):
    """Precomputed (k, N) rows, broadcast to the N of `like` when the rig holds one design and the
    state many."""
    n = np.shape(like)[-1]
    return rows if rows.shape[-1] == n else np.broadcast_to(rows[:, :1], (rows.shape[0], n))


def _Nu_top_and_bottom(Ra, dT):
    """Nusselt numbers of the top and bottom faces of one horizontal plate (McAdams): the top is the
    hot face up while the plate is hotter than the air, the bottom the hot face down."""
    up, down = Nu_horizontal_plate_hot_up_McAdams(Ra), Nu_horizontal_plate_hot_down_McAdams(Ra)
    hotter = dT >= 0
    return np.where(hotter, up, down), np.where(hotter, down, up)


def _with_forced_air(h_natural_W_m2K, air, air_speed_m_s, plate_length_m):
    """Natural convection combined with forced flow along a plate of plate_length_m (Churchill 1977,
    n = 3); h_natural unchanged in still air. air : (k, nu, Pr)."""
    if not air_speed_m_s > 0:
        return h_natural_W_m2K
    k, nu, pr = air
    Nu_F = Nu_flat_plate_forced_Incropera(air_speed_m_s * plate_length_m / nu, pr)
    return Nu_combined_Churchill(Nu_F * k / plate_length_m, h_natural_W_m2K)


def stirring_velocity_m_s(rig: Rig, volume_flow_m3_s):
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
    d = rig.hose_inner_diameter_m
    nozzle = 0.25 * np.pi * d**2
    circulation = confined_jet_circulation_velocity(volume_flow_m3_s / nozzle, nozzle, rig.jet_section_m2)
    return np.maximum(circulation, volume_flow_m3_s / rig.tank_cross_section_m2)


def _oil_side_coefficients(rig: Rig, T_oil_K, T_wall_K, volume_flow_m3_s, film_props=None):
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
    film_props : optional oil.transport() at the film temperature, if the caller has it already.
    """
    oil, parts = rig.oil, rig.constants
    nu, k, _, _, pr = oil.transport(0.5 * (T_oil_K + T_wall_K)) if film_props is None else film_props
    dT = T_wall_K - T_oil_K
    Ra_side = rayleigh(oil.expansion_per_K, dT, rig.fill_height_m, nu, pr)
    Ra_bottom = Ra_side * parts["bottom_ra_per_side_ra"]
    Nu = np.empty((2, np.shape(Ra_side)[0]))
    Nu[0] = Nu_vertical_plate_Churchill_Chu(Ra_side, pr)
    Nu[1] = np.where(dT >= 0, Nu_horizontal_plate_hot_up_McAdams(Ra_bottom), Nu_horizontal_plate_hot_down_McAdams(Ra_bottom))
    lengths = parts["oil_lengths_m"]
    velocity = stirring_velocity_m_s(rig, volume_flow_m3_s)
    if np.any(velocity > 0):
        forced = parts["oil_forced_lengths_m"]   # along the sides: the fill height; the bottom: its length
        Nu_F = Nu_flat_plate_forced_Incropera(velocity * forced / nu, pr) * lengths / forced   # on the natural lengths
        Nu = Nu_combined_Churchill(Nu_F, Nu)
    h = rig.oil_side_multiplier * Nu * k / lengths
    return h[0], h[1]


def h_oil_side_W_m2K(rig: Rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Oil-side coefficient on the wetted sides of the reservoir wall, W/(m^2 K) (see
    _oil_side_coefficients; the bottom has its own, h_oil_bottom_W_m2K)."""
    return _oil_side_coefficients(rig, T_oil_K, T_wall_K, volume_flow_m3_s)[0]


def h_oil_bottom_W_m2K(rig: Rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Oil-side coefficient on the wetted bottom of the reservoir, W/(m^2 K) (see _oil_side_coefficients)."""
    return _oil_side_coefficients(rig, T_oil_K, T_wall_K, volume_flow_m3_s)[1]


def _series(area_m2, h_W_m2K, resistance_m2K_W):
    """Conductance (W/K) of a coefficient h in series with a conduction resistance R''."""
    return area_m2 * h_W_m2K / (1.0 + h_W_m2K * resistance_m2K_W)


def hose_ring_link_W_K(rig: Rig):
    """Conductance hose liner -> hose cover, W/K: the rubber's shell between the two rings' centres
    (hose_rings_m), 2 pi k L / ln(r_cover / r_liner)."""
    return rig.constants["hose_link_W_K"]


def dry_shell_W_K(rig: Rig, h_side_W_m2K, h_top_W_m2K):
    """Conductance to the air of the shell above the oil line (dry sides and lid), W/K, per K of the
    wetted wall's temperature above ambient.

    The dry shell is a fin fed by conduction from the oil line: eta h A, with eta = tanh(mL)/(mL)
    (correlations.fin_efficiency_straight), m = sqrt(h / (k t)) from the wall's own conductivity and
    thickness, L = dry side height + the lid's A/P (the lid is fed from its edges), and h the
    area-weighted outside coefficient (convection and radiation, each in series with half the wall).
    The inside face is taken as adiabatic here; the head space's exchange from the oil surface through
    the lid is its own path (air_paths_W_K, still_paths.head_space_W_K), and the two superpose.
    Times the dry-shell multiplier (the band's factor).
    Steel of 2 mm: 1/m ~ 0.1 m, eta ~ 0.5 on a 0.2 m fin; polyethylene: 1/m ~ 1 cm, eta ~ 0.05.
    """
    parts = rig.constants
    half_wall = parts["half_wall_m2K_W"]
    shed = _series(rig.dry_side_area_m2, h_side_W_m2K, half_wall) + _series(rig.top_area_m2, h_top_W_m2K, half_wall)
    m = np.sqrt(shed / (parts["dry_area_m2"] * parts["wall_kt_W_K"]))
    return rig.dry_shell_multiplier * fin_efficiency_straight(m, rig.dry_fin_length_m) * shed


class AirSide(NamedTuple):
    """Convective coefficients to the air, W/(m^2 K), before the multiplier and without radiation."""
    side: np.ndarray      # the tank's sides (vertical plates)
    body: np.ndarray      # the metal bodies (vertical plates)
    top: np.ndarray       # the lid (horizontal face, hot face up while hotter than the air)
    bottom: np.ndarray    # the bottom (horizontal face, hot face down)
    hose: np.ndarray      # the hoses (horizontal cylinders)


def air_side_h_W_m2K(rig: Rig, T_surface_K, air=None) -> AirSide:
    """The air side of every outer face, W/(m^2 K): natural convection (Churchill-Chu for the
    vertical plates and the hoses, McAdams for the lid and the bottom), combined with the forced
    stream of rig.air_speed_m_s by Churchill (1977), Nu^3 = Nu_F^3 + Nu_N^3, where it blows.
    T_surface_K : (3, N) rows, the wall's, the bodies' and the hose cover's temperatures, K.
    air : the (k, nu, Pr, beta) rows at the three films where the caller has looked them up already
    (air_paths_W_K, which looks up the head space's layer with them), else None.
    Evaluated together to share work: one air-property lookup for the three film temperatures, one
    vertical-plate evaluation for the tank sides and the bodies, one Rayleigh number for the top
    and the bottom (same face, same temperature).
    """
    T_a, speed, parts, T_s = rig.ambient_K, rig.air_speed_m_s, rig.constants, T_surface_K
    k, nu, pr, beta = air_properties(0.5 * (T_s + T_a), rig.air_columns) if air is None else air
    dT = T_s - T_a
    vertical_length = _like(parts["vertical_lengths_m"], T_s[:2])
    forced_length = _like(parts["forced_lengths_m"], T_s[:2])
    Nu_vertical = Nu_vertical_plate_Churchill_Chu(rayleigh(beta[:2], dT[:2], vertical_length, nu[:2], pr[:2]), pr[:2])
    h_side, h_body = _with_forced_air(Nu_vertical * k[:2] / vertical_length, (k[:2], nu[:2], pr[:2]), speed,
                                      forced_length)

    air_w = (k[0], nu[0], pr[0])
    Nu_top, Nu_bottom = _Nu_top_and_bottom(rayleigh(beta[0], dT[0], rig.top_length_m, nu[0], pr[0]), dT[0])
    h_top = _with_forced_air(Nu_top * k[0] / rig.top_length_m, air_w, speed, rig.plate_length_m)
    h_bottom = _with_forced_air(Nu_bottom * k[0] / rig.top_length_m, air_w, speed, rig.plate_length_m)

    D = rig.hose_outer_diameter_m
    Nu_hose = Nu_horizontal_cylinder_Churchill_Chu(rayleigh(beta[2], dT[2], D, nu[2], pr[2]), pr[2])
    h_hose = _with_forced_air(Nu_hose * k[2] / D, (k[2], nu[2], pr[2]), speed, D)
    return AirSide(h_side, h_body, h_top, h_bottom, h_hose)


def ambient_conductances_W_K(rig: Rig, T_wall_K, T_hardware_K, T_hose_K=None):
    """Conductances to the air, W/K: (reservoir wall, metal bodies, hoses); see air_paths_W_K (the
    head space, from the oil, is left out here)."""
    return air_paths_W_K(rig, T_wall_K, T_hardware_K, T_hose_K)[1:]


def air_paths_W_K(rig: Rig, T_wall_K, T_hardware_K, T_hose_K=None, T_oil_K=None):
    """Conductances to the surroundings, W/K: (oil through the head space and the lid, reservoir wall,
    metal bodies, hoses), each convection (times the multiplier) plus linearised radiation.
    T_hose_K is the hose cover's (the outer ring's) temperature, the hoses' conductance is from the
    cover's centre; it defaults to T_hardware_K. T_oil_K defaults to T_wall_K.

    Wall: the wetted sides (vertical plates, Churchill-Chu) and the bottom (McAdams), each in series
    with half the wall thickness; the dry sides and the lid as a fin (dry_shell_W_K); a bottom that
    stands on the floor into the floor (rig.floor_h_W_m2K, still_paths.floor_h_W_m2K, times the floor
    multiplier) in series with half the wall. Head space: still_paths.head_space_W_K, the lid's
    outside coefficient in series with its whole wall. Bodies: vertical plates of body_length_m over
    body_area_m2. Hoses: horizontal cylinders (Churchill-Chu) in series with the conduction from the
    cover's centre to the outside face (hose_rings_m). The air side of every face: air_side_h_W_m2K,
    with one air-property lookup for its three films and the head space's layer.
    """
    T_a, m, parts = rig.ambient_K, rig.convection_multiplier, rig.constants
    T_hose_K = T_hardware_K if T_hose_K is None else T_hose_K
    T_oil_K = T_wall_K if T_oil_K is None else T_oil_K
    T_s = _rows(T_wall_K, T_hardware_K, T_hose_K, like=np.atleast_1d(T_wall_K))
    # rows: the wall's, the bodies' and the hoses' films; the head space's layer (oil to mid-lid)
    films = np.empty((4, T_s.shape[1]))
    films[:3] = 0.5 * (T_s + T_a)
    films[3] = 0.75 * T_oil_K + 0.25 * T_a
    k, nu, pr, beta = air_properties(films, rig.air_columns)
    h_rad = h_radiation_grey(_rows(rig.wall_emissivity, rig.hardware_emissivity, rig.hardware_emissivity,
                                   like=T_s[0]), T_s, T_a)
    h_side, h_body, h_top, h_bottom, h_hose = air_side_h_W_m2K(rig, T_s, (k[:3], nu[:3], pr[:3], beta[:3]))

    half_wall = parts["half_wall_m2K_W"]
    h_side, h_top, h_bottom = m * h_side + h_rad[0], m * h_top + h_rad[0], m * h_bottom + h_rad[0]
    wall = (_series(rig.wetted_side_area_m2, h_side, half_wall) + _series(rig.bottom_area_m2, h_bottom, half_wall)
            + dry_shell_W_K(rig, h_side, h_top))
    # Physics II: the floor under a tank that stands on it (0 where the bottom is open)
    wall = wall + floor_W_K(rig)
    hardware = rig.body_area_m2 * (m * h_body + h_rad[1])
    hose_area = parts["hose_area_m2"]
    hose = _series(hose_area, m * h_hose + h_rad[2], hose_area / parts["hose_outer_W_K"])
    # Physics II: the head space, oil surface -> lid -> air
    h_lid_out = h_top / (1.0 + 2.0 * h_top * half_wall)
    head = head_space_W_K(T_oil_K, T_a, rig.top_area_m2, rig.head_space_m, rig.wall_emissivity, h_lid_out,
                          k[3], nu[3], pr[3], m)
    return head, wall, hardware, hose


def wall_to_ambient_W_K(rig: Rig, T_wall_K):
    """Conductance reservoir wall -> air, W/K (see ambient_conductances_W_K)."""
    return ambient_conductances_W_K(rig, T_wall_K, T_wall_K)[0]


def hardware_to_ambient_W_K(rig: Rig, T_hardware_K):
    """Conductance metal bodies -> air, W/K (see ambient_conductances_W_K)."""
    return ambient_conductances_W_K(rig, T_hardware_K, T_hardware_K)[1]


def hose_to_ambient_W_K(rig: Rig, T_hose_K):
    """Conductance hose cover -> air, W/K, at the cover's temperature T_hose_K (see
    ambient_conductances_W_K)."""
    return ambient_conductances_W_K(rig, T_hose_K, T_hose_K)[2]


def oil_to_wall_W_K(rig: Rig, T_oil_K, T_wall_K, volume_flow_m3_s, film_props=None):
    """Conductance oil -> wall node, W/K: the oil-side coefficients over the wetted sides and the
    bottom, each in series with half the wall thickness. film_props: see _oil_side_coefficients."""
    h_side, h_bottom = _oil_side_coefficients(rig, T_oil_K, T_wall_K, volume_flow_m3_s, film_props)
    half_wall = rig.constants["half_wall_m2K_W"]
    return _series(rig.wetted_side_area_m2, h_side, half_wall) + _series(rig.wetted_bottom_area_m2, h_bottom, half_wall)


def loop_conductances_W_K(rig: Rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductances loop oil -> (metal bodies, hose liner), W/K; the bodies' is not yet multiplied by
    hardware_coupling_multiplier.

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
    them, a node of its own (network.LOOP_OIL; still_paths.loop_oil_links_W_K), which touches the
    tank's oil only along the standing columns.
    """
    D_i, L = rig.hose_inner_diameter_m, rig.hose_length_m
    nu, k_oil, _, _, pr = rig.oil.transport(T_oil_K) if oil_props is None else oil_props
    flowing = np.asarray(volume_flow_m3_s) > 0
    if not flowing.any():
        still = np.zeros(np.shape(T_oil_K))
        return still, still
    parts = rig.constants
    D = _like(parts["tube_diameters_m"], np.atleast_1d(T_oil_K))
    length = _like(parts["tube_lengths_m"], D[0])
    velocity = volume_flow_m3_s / (0.25 * np.pi * D**2)
    h = Nu_tube_Hausen_Gnielinski(velocity * D / nu, pr, D, length) * k_oil / D
    UA_hose = 1.0 / (1.0 / (h[0] * np.pi * D_i * L) + 1.0 / parts["hose_inner_W_K"])
    d_p = rig.gear_pitch_diameter_m
    pitch_speed = np.pi * d_p * volume_flow_m3_s / (rig.displacement_m3 * rig.volumetric_efficiency)
    h_pump = Nu_flat_plate_forced_Incropera(pitch_speed * 0.5 * d_p / nu, pr) * k_oil / (0.5 * d_p)
    UA_bodies = h_pump * rig.pump_wetted_area_m2 + h[1] * (rig.internal_area_m2 - rig.pump_wetted_area_m2)
    capacity_rate = np.maximum(mass_flow_kg_s * cp_J_kgK, 1e-30)
    G = capacity_rate * -np.expm1(-_rows(UA_bodies, UA_hose, like=D[0]) / capacity_rate)
    return np.where(flowing, G[0], 0.0), np.where(flowing, G[1], 0.0)


def oil_to_hardware_W_K(rig: Rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductance loop oil -> metal bodies, W/K, times hardware_coupling_multiplier (see
    loop_conductances_W_K)."""
    bodies = loop_conductances_W_K(rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props)[0]
    return rig.hardware_coupling_multiplier * bodies


def oil_to_hose_W_K(rig: Rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductance loop oil -> hose liner, W/K (see loop_conductances_W_K)."""
    return loop_conductances_W_K(rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props)[1]
