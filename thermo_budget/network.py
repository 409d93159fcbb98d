"""The lumped thermal network of a rig: three nodes (reservoir oil, reservoir wall, loop hardware)
and ambient air as the boundary.

    C_i(T) dT_i/dt = sum_j G_ij(T, flow) (T_j - T_i) + G_i,amb (T_amb - T_i) + Q_i

Every array here is vectorised over designs: a `Rig` field is a float or an array of shape (N,),
a temperature state has shape (N, 3) in K with columns OIL, WALL, HARDWARE.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .air import air_properties
from .correlations import (Nu_combined_Churchill, Nu_flat_plate_forced_Incropera,
                           Nu_horizontal_cylinder_Churchill_Chu, Nu_horizontal_plate_hot_down_McAdams,
                           Nu_horizontal_plate_hot_up_McAdams, Nu_tube_Hausen_Gnielinski,
                           Nu_vertical_plate_Churchill_Chu, cylinder_wall_conductance_W_K,
                           h_radiation_grey, rayleigh)
from .oil import Oil

OIL, WALL, HARDWARE = 0, 1, 2
NODE_NAMES = ("oil", "wall", "hardware")

# Rubber hose wall (common practice, no source; recalled from memory: 0.2-0.3 W/(m K)).
HOSE_WALL_CONDUCTIVITY_W_mK = 0.25


@dataclass(frozen=True)
class Rig:
    """A rig in SI units. Array-valued fields describe N designs at once (shape (N,))."""
    oil: Oil
    oil_mass_kg: np.ndarray
    # reservoir outer faces (m^2) and their characteristic lengths (m)
    side_area_m2: np.ndarray
    side_height_m: np.ndarray
    top_area_m2: np.ndarray
    top_length_m: np.ndarray          # A/P of the top face
    bottom_area_m2: np.ndarray        # 0 when the tank stands on the floor (adiabatic bottom)
    plate_length_m: np.ndarray        # length along a forced air stream
    wetted_area_m2: np.ndarray
    fill_height_m: np.ndarray
    tank_cross_section_m2: np.ndarray
    wall_thickness_m: float
    wall_conductivity_W_mK: float
    wall_capacity_J_K: np.ndarray
    wall_emissivity: float
    # loop hardware: pump, valve, fittings and hoses
    hardware_capacity_J_K: float
    hose_length_m: float
    hose_outer_diameter_m: float
    hose_inner_diameter_m: float
    body_area_m2: float               # pump, valve and fittings, outside
    body_length_m: float
    hardware_emissivity: float
    # pump
    displacement_m3: float
    volumetric_efficiency: float
    # surroundings and multipliers
    ambient_K: float                         # a float, or one per design
    air_speed_m_s: float = 0.0
    convection_multiplier: float = 1.0       # air side; a float, or one per design
    capacity_multiplier: float = 1.0         # a float, or one per design
    # Multipliers on the inside of the rig and on the load, each a float or one per design (the
    # uncertainty band samples them; 1 is the model as written).
    oil_side_multiplier: float = 1.0         # the oil-side coefficient on the tank's wetted wall
    hardware_coupling_multiplier: float = 1.0  # the conductance loop oil -> loop hardware
    power_multiplier: float = 1.0            # the absorbed power of every step
    # optional cooler: specific dissipation W/K per K of ETD; fan "with_flow" or "always"
    cooler_W_K: np.ndarray = 0.0
    cooler_fan: str = "with_flow"

    def with_changes(self, **changes) -> "Rig":
        return replace(self, **changes)


@dataclass(frozen=True)
class Inputs:
    """Inputs held constant over one sub-step. Arrays of shape (N,) or floats.

    power_W : heat absorbed by the pump and valve, all into the oil.
    volume_flow_m3_s : pump delivery (0 with the engine off).
    """
    power_W: np.ndarray
    volume_flow_m3_s: np.ndarray


def _columns(*values, n=None) -> np.ndarray:
    """Floats or (N,) arrays as the columns of one (N, k) array (cheaper than np.stack of broadcasts)."""
    n = next(np.shape(v)[0] for v in values if np.ndim(v)) if n is None else n
    out = np.empty((n, len(values)))
    for j, value in enumerate(values):
        out[:, j] = value
    return out


def per_design(value, n: int) -> np.ndarray:
    """A float or an (n,) array as an (n,) float array (the array itself when it already is one)."""
    if isinstance(value, np.ndarray) and value.shape == (n,) and value.dtype == float:
        return value
    return np.broadcast_to(np.asarray(value, dtype=float), (n,))


def ambient_column(ambient_K):
    """The ambient temperature (a float or one per design) shaped to broadcast over (N, k) arrays."""
    return np.reshape(np.asarray(ambient_K, dtype=float), (-1, 1))


def _rows(*values, like=None) -> np.ndarray:
    """Floats or (N,) arrays as the rows of one (k, N) array; N from `like` or the first array."""
    reference = next(v for v in values if np.ndim(v)) if like is None else like
    out = np.empty((len(values), np.shape(reference)[0]))
    for i, value in enumerate(values):
        out[i] = value
    return out


def heat_capacities_J_K(rig: Rig, T_K: np.ndarray, oil_cp_J_kgK=None) -> np.ndarray:
    """Node heat capacities (N, 3), J/K; the oil's follows Cragoe's c_p(T) (or oil_cp_J_kgK, if
    the caller has it already)."""
    cp = rig.oil.specific_heat(T_K[:, OIL]) if oil_cp_J_kgK is None else oil_cp_J_kgK
    C = np.empty((T_K.shape[0], 3))
    C[:, OIL] = rig.oil_mass_kg * cp
    C[:, WALL] = rig.wall_capacity_J_K
    C[:, HARDWARE] = rig.hardware_capacity_J_K
    return _capacity_scale(rig) * C


def _capacity_scale(rig: Rig):
    """The capacity multiplier, shaped to scale (N, 3) node arrays (it may be one per design)."""
    m = rig.capacity_multiplier
    return np.asarray(m, dtype=float)[:, None] if np.ndim(m) else m


def node_enthalpy_J(rig: Rig, T_K: np.ndarray) -> np.ndarray:
    """Sensible enthalpy of each node (N, 3), J, relative to 0 degC; its change is the heat stored."""
    oil = rig.oil_mass_kg * rig.oil.specific_enthalpy_J_kg(T_K[:, OIL])
    wall = rig.wall_capacity_J_K * (T_K[:, WALL] - 273.15)
    hardware = rig.hardware_capacity_J_K * (T_K[:, HARDWARE] - 273.15)
    return _capacity_scale(rig) * _columns(oil, wall, hardware)


def temperatures_from_enthalpy_K(rig: Rig, H_J: np.ndarray) -> np.ndarray:
    """Inverse of node_enthalpy_J."""
    H = H_J / _capacity_scale(rig)
    oil = rig.oil.temperature_from_enthalpy_K(H[:, OIL] / rig.oil_mass_kg)
    wall = H[:, WALL] / rig.wall_capacity_J_K + 273.15
    hardware = H[:, HARDWARE] / rig.hardware_capacity_J_K + 273.15
    return _columns(oil, wall, hardware)


def h_air_W_m2K(kind: str, length_m, T_surface_K, T_ambient_K, air_speed_m_s=0.0, plate_length_m=None,
                air=None):
    """Convective coefficient to ambient air, W/(m^2 K), for one kind of surface: "vertical",
    "cylinder" (horizontal), "top" or "bottom" (horizontal faces). Natural convection, combined with
    a forced stream by Churchill (1977), Nu^3 = Nu_F^3 + Nu_N^3, when air_speed_m_s > 0.
    air : optional (k, nu, Pr, beta) at the film temperature, to share between faces.
    """
    k, nu, pr, beta = air_properties(0.5 * (T_surface_K + T_ambient_K)) if air is None else air
    dT = T_surface_K - T_ambient_K
    Ra = rayleigh(beta, dT, length_m, nu, pr)
    if kind == "vertical":
        Nu = Nu_vertical_plate_Churchill_Chu(Ra, pr)
    elif kind == "cylinder":
        Nu = Nu_horizontal_cylinder_Churchill_Chu(Ra, pr)
    else:
        top, bottom = _Nu_top_and_bottom(Ra, dT)
        Nu = top if kind == "top" else bottom
    return _with_forced_air(Nu * k / length_m, (k, nu, pr), air_speed_m_s,
                            length_m if plate_length_m is None else plate_length_m)


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


def h_oil_side_W_m2K(rig: Rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Oil-side coefficient on the wetted reservoir wall, W/(m^2 K).

    Still oil: natural convection, Churchill-Chu on a vertical wall of the fill height, oil properties
    at the film temperature, beta the oil's expansion coefficient. Circulating oil: combined
    (Churchill 1977) with forced flow along the wall at the through-flow velocity Q / A_cross, a
    deliberately low estimate of the stirring by the return jet. The same coefficient is used on
    the wetted bottom.
    """
    oil = rig.oil
    nu, k, _, _, pr = oil.transport(0.5 * (T_oil_K + T_wall_K))
    Ra = rayleigh(oil.expansion_per_K, T_oil_K - T_wall_K, rig.fill_height_m, nu, pr)
    Nu_N = Nu_vertical_plate_Churchill_Chu(Ra, pr)
    velocity = volume_flow_m3_s / rig.tank_cross_section_m2
    Nu_F = Nu_flat_plate_forced_Incropera(velocity * rig.fill_height_m / nu, pr)
    return rig.oil_side_multiplier * Nu_combined_Churchill(Nu_F, Nu_N) * k / rig.fill_height_m


def _series(area_m2, h_W_m2K, resistance_m2K_W):
    """Conductance (W/K) of a coefficient h in series with a conduction resistance R''."""
    return area_m2 * h_W_m2K / (1.0 + h_W_m2K * resistance_m2K_W)


def ambient_conductances_W_K(rig: Rig, T_wall_K, T_hardware_K):
    """Conductances to the air, W/K: (reservoir wall, loop hardware), each convection (times the
    multiplier) plus linearised radiation.

    Wall: the tank's sides (vertical plates, Churchill-Chu), top and bottom (McAdams), each in
    series with half the wall thickness. Hardware: hoses as horizontal cylinders (Churchill-Chu),
    pump, valve and fittings as vertical plates of the equivalent cube's side.
    Evaluated together to share work: one air-property lookup for both film temperatures, one
    vertical-plate evaluation for the tank sides and the pump body, one Rayleigh number for the top
    and the bottom (same face, same temperature).
    """
    T_a, m, speed = rig.ambient_K, rig.convection_multiplier, rig.air_speed_m_s
    T_s = _rows(T_wall_K, T_hardware_K, like=np.atleast_1d(T_wall_K))
    k, nu, pr, beta = air_properties(0.5 * (T_s + T_a))   # row 0 at the wall's film, row 1 the hardware's
    dT = T_s - T_a
    h_rad_wall = h_radiation_grey(rig.wall_emissivity, T_s[0], T_a)
    h_rad_hw = h_radiation_grey(rig.hardware_emissivity, T_s[1], T_a)

    vertical_length = _rows(rig.side_height_m, rig.body_length_m, like=T_s[0])
    forced_length = _rows(rig.plate_length_m, rig.body_length_m, like=T_s[0])
    Nu_vertical = Nu_vertical_plate_Churchill_Chu(rayleigh(beta, dT, vertical_length, nu, pr), pr)
    h_side, h_body = _with_forced_air(Nu_vertical * k / vertical_length, (k, nu, pr), speed, forced_length)

    air_w = (k[0], nu[0], pr[0])
    Nu_top, Nu_bottom = _Nu_top_and_bottom(rayleigh(beta[0], dT[0], rig.top_length_m, nu[0], pr[0]), dT[0])
    h_top = _with_forced_air(Nu_top * k[0] / rig.top_length_m, air_w, speed, rig.plate_length_m)
    h_bottom = _with_forced_air(Nu_bottom * k[0] / rig.top_length_m, air_w, speed, rig.plate_length_m)

    D = rig.hose_outer_diameter_m
    Nu_hose = Nu_horizontal_cylinder_Churchill_Chu(rayleigh(beta[1], dT[1], D, nu[1], pr[1]), pr[1])
    h_hose = _with_forced_air(Nu_hose * k[1] / D, (k[1], nu[1], pr[1]), speed, D)

    half_wall = 0.5 * rig.wall_thickness_m / rig.wall_conductivity_W_mK
    wall = (_series(rig.side_area_m2, m * h_side + h_rad_wall, half_wall)
            + _series(rig.top_area_m2, m * h_top + h_rad_wall, half_wall)
            + _series(rig.bottom_area_m2, m * h_bottom + h_rad_wall, half_wall))
    hose_area = np.pi * D * rig.hose_length_m
    hardware = hose_area * (m * h_hose + h_rad_hw) + rig.body_area_m2 * (m * h_body + h_rad_hw)
    return wall, hardware


def wall_to_ambient_W_K(rig: Rig, T_wall_K):
    """Conductance reservoir wall -> air, W/K (see ambient_conductances_W_K)."""
    return ambient_conductances_W_K(rig, T_wall_K, T_wall_K)[0]


def hardware_to_ambient_W_K(rig: Rig, T_hardware_K):
    """Conductance loop hardware -> air, W/K (see ambient_conductances_W_K)."""
    return ambient_conductances_W_K(rig, T_hardware_K, T_hardware_K)[1]


def oil_to_wall_W_K(rig: Rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Conductance oil -> wall node, W/K: oil-side coefficient over the wetted area in series with
    half the wall thickness."""
    h_oil = h_oil_side_W_m2K(rig, T_oil_K, T_wall_K, volume_flow_m3_s)
    return _series(rig.wetted_area_m2, h_oil, 0.5 * rig.wall_thickness_m / rig.wall_conductivity_W_mK)


def oil_to_hardware_W_K(rig: Rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductance loop oil -> hardware, W/K.

    Flowing: the hose is a heat exchanger with one side (the hardware) at uniform temperature, so
    G = eps m_dot c_p with eps = 1 - exp(-NTU), NTU = UA / (m_dot c_p) (Incropera eq. 8.45b); UA is
    the tube-side coefficient (Hausen / Gnielinski) over the bore in series with the hose wall.
    Still (engine off): conduction along the oil column of half the hose length, nearly nothing.
    """
    D_i, L = rig.hose_inner_diameter_m, rig.hose_length_m
    nu, k_oil, _, _, pr = rig.oil.transport(T_oil_K) if oil_props is None else oil_props
    still = k_oil * (0.25 * np.pi * D_i**2) / (0.5 * L)
    flowing = np.asarray(volume_flow_m3_s) > 0
    if not flowing.any():
        return still
    velocity = volume_flow_m3_s / (0.25 * np.pi * D_i**2)
    Nu = Nu_tube_Hausen_Gnielinski(velocity * D_i / nu, pr, D_i, L)
    h_i = Nu * k_oil / D_i
    UA = 1.0 / (1.0 / (h_i * np.pi * D_i * L) + 1.0 / cylinder_wall_conductance_W_K(
        D_i, rig.hose_outer_diameter_m, L, HOSE_WALL_CONDUCTIVITY_W_mK))
    capacity_rate = np.maximum(mass_flow_kg_s * cp_J_kgK, 1e-30)
    G = capacity_rate * -np.expm1(-UA / capacity_rate)
    return np.where(flowing, G, still)


def node_equations(rig: Rig, T_K: np.ndarray, inputs: Inputs):
    """The linear system frozen at state T_K: C dT/dt = -L T + b.

    Returns (C (N,3) J/K, L (N,3,3) W/K, b (N,3) W, g_amb (N,3) W/K, loss_offset_W (N,)).
    g_amb are the conductances to ambient; loss_offset_W is the part of the heat lost to ambient
    that does not depend on T (the cooler sees the return line, hotter than the bulk). The heat
    lost to ambient at state T is  g_amb . (T - T_amb) + loss_offset_W.
    """
    n = T_K.shape[0]
    T_oil, T_wall, T_hw = T_K[:, OIL], T_K[:, WALL], T_K[:, HARDWARE]
    T_a = rig.ambient_K
    Q = per_design(inputs.volume_flow_m3_s, n)
    P = per_design(inputs.power_W, n)   # already scaled by rig.power_multiplier (the solver does it)
    flowing = Q > 0
    oil_props = rig.oil.transport(T_oil)
    cp, rho = oil_props[2], oil_props[3]
    mass_flow = rho * Q
    return_rise = np.where(flowing, P / np.maximum(mass_flow * cp, 1e-30), 0.0)

    G_ow = oil_to_wall_W_K(rig, T_oil, T_wall, Q)
    G_oh = rig.hardware_coupling_multiplier * oil_to_hardware_W_K(rig, T_oil, Q, mass_flow, cp, oil_props)
    G_wa, G_ha = ambient_conductances_W_K(rig, T_wall, T_hw)
    G_cool = cooler_W_K(rig, flowing, mass_flow * cp)

    L = np.zeros((n, 3, 3))
    L[:, OIL, OIL] = G_ow + G_oh + G_cool
    L[:, WALL, WALL] = G_ow + G_wa
    L[:, HARDWARE, HARDWARE] = G_oh + G_ha
    L[:, OIL, WALL] = L[:, WALL, OIL] = -G_ow
    L[:, OIL, HARDWARE] = L[:, HARDWARE, OIL] = -G_oh
    g_amb = _columns(G_cool, G_wa, G_ha, n=n)
    # The loop hardware sees the mean loop oil temperature, bulk + half the return-line rise;
    # the cooler sees the return line, bulk + the full rise.
    b = g_amb * ambient_column(T_a)
    b[:, OIL] += P - G_cool * return_rise - 0.5 * G_oh * return_rise
    b[:, HARDWARE] += 0.5 * G_oh * return_rise
    return heat_capacities_J_K(rig, T_K, cp), L, b, g_amb, G_cool * return_rise


def cooler_W_K(rig: Rig, flowing, capacity_rate_W_K):
    """Effective cooler conductance, W/K per K of ETD (return-line oil minus ambient air).

    The rating is taken as constant with flow (no flow correction is applied), but it is capped at
    the oil stream's capacity rate m_dot c_p: a cooler cannot bring the oil below the air. With
    fan = "always" the cooler has its own circulation and works with the engine off too, at the
    rated value.
    """
    K = np.asarray(rig.cooler_W_K, dtype=float)
    if not (K > 0).any():
        return np.zeros_like(np.asarray(capacity_rate_W_K, dtype=float))
    running = np.where(flowing, np.minimum(K, capacity_rate_W_K), 0.0)
    if rig.cooler_fan == "always":
        running = np.where(flowing, running, K)
    return running


def return_line_rise_K(rig: Rig, T_oil_K, inputs: Inputs):
    """Return-line oil temperature minus bulk: P / (m_dot c_p), K; 0 with no flow."""
    Q = np.asarray(inputs.volume_flow_m3_s, dtype=float)
    capacity_rate = rig.oil.density_kg_m3(T_oil_K) * Q * rig.oil.specific_heat(T_oil_K)
    return np.where(Q > 0, inputs.power_W / np.maximum(capacity_rate, 1e-30), 0.0)


def cooling_time_constant_s(rig: Rig, T_K: float) -> float:
    """Whole-rig cooling time constant with every node at T_K, engine off, no cooler: the total heat
    capacity over the total conductance to the air, s (inf where nothing is lost). Design 0."""
    T = np.full((1, 3), float(T_K))
    C = float(np.sum(heat_capacities_J_K(rig, T)[0]))
    wall, hardware = ambient_conductances_W_K(rig, T[:, WALL], T[:, HARDWARE])
    G = float(np.atleast_1d(wall)[0] + np.atleast_1d(hardware)[0])
    return C / G if G > 0 else float("inf")


def passive_rejection_W(rig: Rig, T_K: float):
    """Steady heat loss to ambient with the whole rig at T_K, engine off, no cooler, W."""
    T_wall = np.atleast_1d(np.asarray(T_K, dtype=float))
    dT = T_wall - rig.ambient_K
    wall, hardware = ambient_conductances_W_K(rig, T_wall, T_wall)
    return (wall + hardware) * dT

