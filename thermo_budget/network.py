"""The lumped thermal network of a rig: five nodes and ambient air as the boundary.

    C_i(T) dT_i/dt = sum_j G_ij(T, flow) (T_j - T_i) + G_i,amb (T_amb - T_i) + Q_i

Nodes (NODE_NAMES): the oil (the reservoir's and the loop's), the reservoir wall, the loop's metal
bodies (pump, valve, manifold and fittings, wetted inside), and the hoses' wall (rubber and braid)
as two rings: the liner (HOSE, the inner fifth of the wall, touched by the oil) and the cover
(HOSE_COVER, the rest, to the air); see conductances.hose_rings_m for the rule and why.
Every array here is vectorised over designs: a `Rig` field is a float or an array of shape (N,),
a temperature state has shape (N, N_NODES) in K with columns OIL, WALL, HARDWARE, HOSE, HOSE_COVER.
Where one temperature stands for the hose (a report's end_hose_C, the trace CSV's hose_C), it is
the rubber's capacity-weighted mean (hose_mean_K), the temperature whose rise times the hose's
capacity is the heat it holds, as the one hose node's was.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np

from .air import air_columns
from .compiled import kernel
from .conductance_paths import (ambient_conductances_W_K, cooler_W_K, dry_shell_W_K, h_air_W_m2K, h_oil_bottom_W_m2K,
                                h_oil_side_W_m2K, hardware_to_ambient_W_K, hose_ring_link_W_K, hose_to_ambient_W_K,
                                loop_conductances_W_K, oil_to_hardware_W_K, oil_to_hose_W_K, oil_to_wall_W_K,
                                return_line_rise_K, stirring_velocity_m_s, wall_to_ambient_W_K)
from .conductances import (HOSE_LINER_FRACTION, HOSE_WALL_CONDUCTIVITY_W_mK, bodies_to_air, constant_parts, cooler,
                           hose_rings_m, hose_to_air, loop_paths, oil_side_h, oil_to_wall, wall_to_air)
from .oil import OIL_CP_A, OIL_CP_B, Oil, linear_enthalpy_J_kg, linear_temperature_from_enthalpy_K, oil_transport
from .rig_params import (AMBIENT, CAPACITY_MULT, COUPLING_MULT, HARDWARE_CAPACITY, HOSE_CAPACITY, HOSE_LINER_SHARE,
                         HOSE_LINK_G, OIL_FIRST, OIL_NODE_MASS, WALL_CAPACITY, pack)

# The conductances live in conductances.py (compiled) and conductance_paths.py (numpy over a Rig's
# designs); they are re-exported here, the network's one door.
__all__ = ["HARDWARE", "HOSE", "HOSE_COVER", "HOSE_LINER_FRACTION", "HOSE_RINGS", "HOSE_WALL_CONDUCTIVITY_W_mK",
           "N_NODES", "NODE_NAMES", "OIL", "WALL", "Inputs", "Rig", "hose_mean_K", "hose_mean_from_share_K",
           "hose_ring_link_W_K", "hose_rings_m", "ambient_column", "ambient_conductances_W_K", "cooler_W_K",
           "cooling_time_constant_s", "dry_shell_W_K", "h_air_W_m2K", "h_oil_bottom_W_m2K", "h_oil_side_W_m2K",
           "hardware_to_ambient_W_K", "heat_capacities_J_K", "hose_to_ambient_W_K", "loop_conductances_W_K",
           "node_enthalpy_J", "node_equations", "node_system", "oil_node_mass_kg", "oil_to_hardware_W_K",
           "oil_to_hose_W_K", "oil_to_wall_W_K", "passive_rejection_W", "per_design", "return_line_rise_K",
           "stirring_velocity_m_s", "temperatures_from_enthalpy_K", "wall_to_ambient_W_K"]

# HOSE is the hose wall's inner ring, the liner (the node the oil touches); HOSE_COVER its outer ring.
OIL, WALL, HARDWARE, HOSE, HOSE_COVER = 0, 1, 2, 3, 4
NODE_NAMES = ("oil", "wall", "hardware", "hose liner", "hose cover")
N_NODES = len(NODE_NAMES)
HOSE_RINGS = (HOSE, HOSE_COVER)


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
    wetted_area_m2: np.ndarray        # wetted sides + bottom (inside)
    fill_height_m: np.ndarray
    tank_cross_section_m2: np.ndarray
    wall_thickness_m: float
    wall_conductivity_W_mK: float
    wall_capacity_J_K: np.ndarray
    wall_emissivity: float
    # loop hardware: metal bodies (pump, valve, manifold, fittings) and hoses
    hardware_capacity_J_K: float      # the metal bodies
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
    # The inside of the rig (build_rig fills these; the defaults describe a rig without them).
    loop_oil_mass_kg: float = 0.0            # oil in the hoses, pump and valve (in the OIL node)
    hose_capacity_J_K: float = 1.0           # hose rubber and braid, both rings (the liner's share: constants)
    internal_area_m2: float = 0.0            # wetted inside of the metal bodies (pump chamber + passages)
    pump_wetted_area_m2: float = 0.0         # the part of it in the pump's working chamber
    gear_pitch_diameter_m: float = 0.04      # the pump's gears (taken as an external gear pump)
    passage_diameter_m: float = 0.02         # their passages' bore
    passage_length_m: float = 0.1            # length of one passage through a body
    wetted_side_area_m2: np.ndarray = 0.0    # wetted part of the tank's sides (inside = outside)
    wetted_bottom_area_m2: np.ndarray = 0.0  # the tank's bottom, inside (wetted even on the floor)
    dry_side_area_m2: np.ndarray = 0.0       # the sides above the oil line
    dry_fin_length_m: np.ndarray = 0.0       # dry side height + the lid's A/P: the fin fed from the oil line
    dry_capacity_weight: np.ndarray = 1.0    # share of the dry shell's capacity in the wall node
    jet_throw_m: np.ndarray = 0.3            # distance the return jet crosses to the far wall

    def with_changes(self, **changes) -> "Rig":
        return replace(self, **changes)

    @cached_property
    def constants(self) -> dict:
        """The parts of the conductances that depend on the geometry only, worked out once per rig
        (conductances.constant_parts); a changed rig is a new object and works them out again."""
        return constant_parts(self)

    @cached_property
    def params(self) -> np.ndarray:
        """The rig as the compiled network reads it: rows of floats (rig_params.pack)."""
        return pack(self)


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


def oil_node_mass_kg(rig: Rig):
    """Oil in the OIL node, kg: the reservoir's and the loop's (hoses, pump and valve). The loop oil
    turns over in seconds while the pump runs, so it is at the bulk temperature whenever heat goes in."""
    return rig.oil_mass_kg + rig.loop_oil_mass_kg


def _f64(value, n: int) -> np.ndarray:
    """A float or an (n,) array as a contiguous (n,) float array, the compiled loops' argument."""
    return np.ascontiguousarray(np.broadcast_to(np.asarray(value, dtype=float), (n,)))


def _states(T_K) -> np.ndarray:
    return np.ascontiguousarray(T_K, dtype=float)


# --- one design, compiled ------------------------------------------------------------------------

@kernel
def link(L, i, j, G):
    """A conductance G (W/K) between nodes i and j, added to L."""
    L[i, i] += G
    L[j, j] += G
    L[i, j] -= G
    L[j, i] -= G


@kernel
def loop_link(L, b, i, G, return_rise_K):
    """A conductance G from the loop's oil to node i: the loop's oil is at the bulk temperature plus
    half the return line's rise, which enters b as a source (out of the oil, into node i)."""
    link(L, OIL, i, G)
    b[OIL] -= 0.5 * G * return_rise_K
    b[i] += 0.5 * G * return_rise_K


@kernel
def to_air(L, b, g_amb, i, G, ambient_K):
    """A conductance G from node i to the ambient air."""
    L[i, i] += G
    g_amb[i] += G
    b[i] += G * ambient_K


@kernel
def capacities(p, cp_J_kgK, C):
    """Node heat capacities (J/K) into C; the oil's at the specific heat cp_J_kgK."""
    m = p[CAPACITY_MULT]
    liner = p[HOSE_LINER_SHARE] * p[HOSE_CAPACITY]
    C[OIL] = m * (p[OIL_NODE_MASS] * cp_J_kgK)
    C[WALL] = m * p[WALL_CAPACITY]
    C[HARDWARE] = m * p[HARDWARE_CAPACITY]
    C[HOSE] = m * liner
    C[HOSE_COVER] = m * (p[HOSE_CAPACITY] - liner)


@kernel
def enthalpy(p, T_K, H):
    """Sensible enthalpy of each node (J, relative to 0 degC) at T_K into H."""
    m = p[CAPACITY_MULT]
    liner = p[HOSE_LINER_SHARE] * p[HOSE_CAPACITY]
    h_oil = linear_enthalpy_J_kg(T_K[OIL], p[OIL_FIRST + OIL_CP_A], p[OIL_FIRST + OIL_CP_B])
    H[OIL] = m * (p[OIL_NODE_MASS] * h_oil)
    H[WALL] = m * (p[WALL_CAPACITY] * (T_K[WALL] - 273.15))
    H[HARDWARE] = m * (p[HARDWARE_CAPACITY] * (T_K[HARDWARE] - 273.15))
    H[HOSE] = m * (liner * (T_K[HOSE] - 273.15))
    H[HOSE_COVER] = m * ((p[HOSE_CAPACITY] - liner) * (T_K[HOSE_COVER] - 273.15))


@kernel
def temperatures(p, H_J, T):
    """Inverse of enthalpy: the node temperatures (K) of enthalpies H_J into T."""
    m = p[CAPACITY_MULT]
    liner = p[HOSE_LINER_SHARE] * p[HOSE_CAPACITY]
    T[OIL] = linear_temperature_from_enthalpy_K(H_J[OIL] / m / p[OIL_NODE_MASS], p[OIL_FIRST + OIL_CP_A],
                                                p[OIL_FIRST + OIL_CP_B])
    T[WALL] = H_J[WALL] / m / p[WALL_CAPACITY] + 273.15
    T[HARDWARE] = H_J[HARDWARE] / m / p[HARDWARE_CAPACITY] + 273.15
    T[HOSE] = H_J[HOSE] / m / liner + 273.15
    T[HOSE_COVER] = H_J[HOSE_COVER] / m / (p[HOSE_CAPACITY] - liner) + 273.15


@kernel
def node_system(p, T_K, volume_flow_m3_s, power_W, air, C, L, b, g_amb):
    """The linear system of one design frozen at T_K: fills C (k,) J/K, L (k,k) W/K, b (k,) W,
    g_amb (k,) W/K (node_equations) and returns the loss offset, W. Each path is one compiled
    function of conductances.py and one line below: `link` between two nodes, `loop_link` from the
    loop's oil, `to_air` to the ambient."""
    T_oil, T_wall, T_a = T_K[OIL], T_K[WALL], p[AMBIENT]
    oil = p[OIL_FIRST:]
    nu, k, cp, rho, pr = oil_transport(oil, T_oil)                          # the bulk
    nu_f, k_f, _, _, pr_f = oil_transport(oil, 0.5 * (T_oil + T_wall))      # the wall's film
    flowing = volume_flow_m3_s > 0
    rate = rho * volume_flow_m3_s * cp                                      # m_dot c_p, W/K
    rise = power_W / max(rate, 1e-30) if flowing else 0.0                   # return line over bulk, K
    h_side, h_bottom = oil_side_h(p, T_oil, T_wall, volume_flow_m3_s, nu_f, k_f, pr_f)
    bodies, hose = loop_paths(p, volume_flow_m3_s, rate, nu, k, pr)
    G_cool = cooler(p, flowing, rate)
    L[:, :] = 0.0
    b[:] = 0.0
    g_amb[:] = 0.0
    link(L, OIL, WALL, oil_to_wall(p, h_side, h_bottom))
    loop_link(L, b, HARDWARE, p[COUPLING_MULT] * bodies, rise)
    loop_link(L, b, HOSE, hose, rise)
    link(L, HOSE, HOSE_COVER, p[HOSE_LINK_G])
    to_air(L, b, g_amb, WALL, wall_to_air(p, T_wall, air), T_a)
    to_air(L, b, g_amb, HARDWARE, bodies_to_air(p, T_K[HARDWARE], air), T_a)
    to_air(L, b, g_amb, HOSE_COVER, hose_to_air(p, T_K[HOSE_COVER], air), T_a)
    to_air(L, b, g_amb, OIL, G_cool, T_a)
    b[OIL] += power_W - G_cool * rise          # the cooler sees the return line, bulk + the full rise
    capacities(p, cp, C)
    return G_cool * rise


# --- over designs, for numpy callers -------------------------------------------------------------

@kernel
def _node_equations_many(params, T_K, flow, power, air):
    n, k = T_K.shape
    C, L, b, g = np.empty((n, k)), np.empty((n, k, k)), np.empty((n, k)), np.empty((n, k))
    offset = np.empty(n)
    for d in range(n):
        p = params[d if params.shape[0] > 1 else 0]
        offset[d] = node_system(p, T_K[d], flow[d], power[d], air, C[d], L[d], b[d], g[d])
    return C, L, b, g, offset


@kernel
def _per_node_many(what, params, X, cp):
    """what 0: capacities at the oil's cp; 1: enthalpies of temperatures X; 2: temperatures of enthalpies X."""
    out = np.empty_like(X)
    for d in range(X.shape[0]):
        p = params[d if params.shape[0] > 1 else 0]
        if what == 0:
            capacities(p, cp[d], out[d])
        elif what == 1:
            enthalpy(p, X[d], out[d])
        else:
            temperatures(p, X[d], out[d])
    return out


def node_equations(rig: Rig, T_K: np.ndarray, inputs: Inputs):
    """The linear system frozen at state T_K: C dT/dt = -L T + b (node_system, design by design).

    Returns (C (N,k) J/K, L (N,k,k) W/K, b (N,k) W, g_amb (N,k) W/K, loss_offset_W (N,)), k = N_NODES.
    g_amb are the conductances to ambient; loss_offset_W is the part of the heat lost to ambient
    that does not depend on T (the cooler sees the return line, hotter than the bulk). The heat
    lost to ambient at state T is  g_amb . (T - T_amb) + loss_offset_W.
    """
    T = _states(T_K)
    n = T.shape[0]
    return _node_equations_many(rig.params, T, _f64(inputs.volume_flow_m3_s, n), _f64(inputs.power_W, n),
                                air_columns())


def heat_capacities_J_K(rig: Rig, T_K: np.ndarray, oil_cp_J_kgK=None) -> np.ndarray:
    """Node heat capacities (N, N_NODES), J/K; the oil's follows Cragoe's c_p(T) (or oil_cp_J_kgK,
    if the caller has it already)."""
    T = _states(T_K)
    cp = rig.oil.specific_heat(T[:, OIL]) if oil_cp_J_kgK is None else oil_cp_J_kgK
    return _per_node_many(0, rig.params, T, _f64(cp, T.shape[0]))


def node_enthalpy_J(rig: Rig, T_K: np.ndarray) -> np.ndarray:
    """Sensible enthalpy of each node (N, N_NODES), J, relative to 0 degC; its change is the heat stored."""
    T = _states(T_K)
    return _per_node_many(1, rig.params, T, np.empty(0))


def temperatures_from_enthalpy_K(rig: Rig, H_J: np.ndarray) -> np.ndarray:
    """Inverse of node_enthalpy_J."""
    return _per_node_many(2, rig.params, _states(H_J), np.empty(0))


def hose_mean_K(rig: Rig, T_K: np.ndarray) -> np.ndarray:
    """The hose rubber's capacity-weighted mean temperature, K, of states T_K (..., N_NODES): the
    temperature whose rise times the hose's capacity is the heat the two rings hold."""
    return hose_mean_from_share_K(rig.constants["hose_liner_share"], T_K)


def hose_mean_from_share_K(liner_share, T_K: np.ndarray) -> np.ndarray:
    """hose_mean_K from the liner's share of the hose's capacity (a float, or one per design)."""
    return liner_share * T_K[..., HOSE] + (1.0 - liner_share) * T_K[..., HOSE_COVER]


def cooling_time_constant_s(rig: Rig, T_K: float) -> float:
    """Whole-rig cooling time constant with every node at T_K, engine off, no cooler: the total heat
    capacity over the total conductance to the air, s (inf where nothing is lost). Design 0."""
    T = np.full((1, N_NODES), float(T_K))
    C = float(np.sum(heat_capacities_J_K(rig, T)[0]))
    G = float(sum(np.atleast_1d(g)[0]
                  for g in ambient_conductances_W_K(rig, T[:, WALL], T[:, HARDWARE], T[:, HOSE_COVER])))
    return C / G if G > 0 else float("inf")


def passive_rejection_W(rig: Rig, T_K: float):
    """Steady heat loss to ambient with the whole rig at T_K, engine off, no cooler, W."""
    T_wall = np.atleast_1d(np.asarray(T_K, dtype=float))
    dT = T_wall - rig.ambient_K
    return sum(ambient_conductances_W_K(rig, T_wall, T_wall, T_wall)) * dT

