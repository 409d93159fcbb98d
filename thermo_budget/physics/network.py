"""The lumped thermal network of a rig: six nodes and ambient air as the boundary.

    C_i(T) dT_i/dt = sum_j G_ij(T, flow) (T_j - T_i) + G_i,amb (T_amb - T_i) + Q_i

Nodes (NODE_NAMES): the tank's oil, the reservoir wall, the loop's metal bodies (pump, valve,
manifold and fittings, wetted inside), the hoses' wall (rubber and braid) as two rings: the liner
(HOSE, the inner fifth of the wall, touched by the oil) and the cover (HOSE_COVER, the rest, to the
air; see rig.hose_rings_m for the rule and why), and the loop's oil (LOOP_OIL, in the hoses
and bodies; see still_paths for why it is a node of its own).
The system of one design is assembled in compiled code (node_system: one line per path); the
numpy-facing functions run it over the designs.
Every array here is vectorised over designs: a `Rig` field is a float or an array of shape (N,),
a temperature state has shape (N, N_NODES) in K with columns OIL, WALL, HARDWARE, HOSE, HOSE_COVER,
LOOP_OIL.
Where one temperature stands for the hose (a report's end_hose_C, the trace CSV's hose_C), it is
the rubber's capacity-weighted mean (hose_mean_K), the temperature whose rise times the hose's
capacity is the heat it holds, as the one hose node's was.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .air import air_or_standard
from .compiled import kernel
from .conductance_paths import (air_paths_W_K, air_side_h_W_m2K, ambient_conductances_W_K, cooler_W_K, dry_shell_W_K,
                                h_oil_bottom_W_m2K, h_oil_side_W_m2K, hardware_to_ambient_W_K, hose_ring_link_W_K,
                                hose_to_ambient_W_K, loop_conductances_W_K, oil_to_hardware_W_K, oil_to_hose_W_K,
                                oil_to_wall_W_K, return_line_rise_K, stirring_velocity_m_s, wall_to_ambient_W_K)
from .conductances import bodies_to_air, cooler, hose_to_air, loop_paths, oil_side_h, oil_to_wall, tank_to_air
from .oil import OIL_CP_A, OIL_CP_B, linear_enthalpy_J_kg, linear_temperature_from_enthalpy_K, oil_transport
from .rig import HOSE_LINER_FRACTION, HOSE_WALL_CONDUCTIVITY_W_mK, PerDesign, Rig, hose_rings_m
from .rig_params import (AMBIENT, CAPACITY_MULT, COUPLING_MULT, ENGINE_OFF_G, ENGINE_OFF_MULT, HARDWARE_CAPACITY,
                         HOSE_CAPACITY, HOSE_INNER_D, HOSE_INNER_G, HOSE_LENGTH, HOSE_LINER_SHARE, HOSE_LINK_G,
                         INTERNAL_AREA, LOOP_OIL_MASS, LOOP_OIL_MIN_KG, OIL_FIRST, OIL_NODE_MASS, PASSAGE_D,
                         WALL_CAPACITY)
from .still_paths import engine_off_link, engine_off_link_W_K, floor_W_K, loop_oil_links, loop_oil_links_W_K
from ..units import ZERO_CELSIUS_K

# The Rig lives in rig.py, the conductances in conductances.py and still_paths.py (compiled) and
# conductance_paths.py (numpy over a Rig's designs); they are re-exported here, the network's one door.
__all__ = ["HARDWARE", "HOSE", "HOSE_COVER", "HOSE_LINER_FRACTION", "HOSE_RINGS", "HOSE_WALL_CONDUCTIVITY_W_mK",
           "LOOP_OIL", "N_NODES", "NODE_NAMES", "OIL", "WALL", "Inputs", "Rig", "air_paths_W_K", "air_side_h_W_m2K",
           "ambient_column", "ambient_conductances_W_K", "cooler_W_K", "cooling_time_constant_s", "dry_shell_W_K",
           "engine_off_link_W_K", "floor_W_K", "h_oil_bottom_W_m2K", "h_oil_side_W_m2K", "hardware_to_ambient_W_K",
           "heat_capacities_J_K", "hose_mean_K", "hose_mean_from_share_K", "hose_ring_link_W_K", "hose_rings_m",
           "hose_to_ambient_W_K", "loop_conductances_W_K", "loop_oil_links_W_K", "loop_oil_node_mass_kg",
           "node_enthalpy_J", "node_equations", "node_system", "oil_node_mass_kg", "oil_to_hardware_W_K",
           "oil_to_hose_W_K", "oil_to_wall_W_K", "passive_paths_W", "passive_rejection_W", "per_design",
           "return_line_rise_K", "stirring_velocity_m_s", "temperatures_from_enthalpy_K", "wall_to_ambient_W_K"]

# HOSE is the hose wall's inner ring, the liner (the node the oil touches); HOSE_COVER its outer ring.
OIL, WALL, HARDWARE, HOSE, HOSE_COVER, LOOP_OIL = 0, 1, 2, 3, 4, 5
NODE_NAMES = ("oil", "wall", "hardware", "hose liner", "hose cover", "loop oil")
N_NODES = len(NODE_NAMES)
HOSE_RINGS = (HOSE, HOSE_COVER)


@dataclass(frozen=True)
class Inputs:
    """Inputs held constant over one sub-step. Arrays of shape (N,) or floats.

    power_W : heat absorbed by the pump and valve, all into the oil.
    volume_flow_m3_s : pump delivery (0 with the engine off).
    """
    power_W: PerDesign
    volume_flow_m3_s: PerDesign


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
    """Oil in the OIL node, kg: the reservoir's (the loop's is LOOP_OIL's, loop_oil_node_mass_kg)."""
    return rig.oil_mass_kg


def loop_oil_node_mass_kg(rig: Rig):
    """Oil in the LOOP_OIL node, kg: in the hoses, pump and valve (at least LOOP_OIL_MIN_KG)."""
    return np.maximum(rig.loop_oil_mass_kg, LOOP_OIL_MIN_KG)


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
def capacities(p, cp_J_kgK, loop_cp_J_kgK, C):
    """Node heat capacities (J/K) into C; the tank's oil at the specific heat cp_J_kgK, the loop's at
    loop_cp_J_kgK."""
    m = p[CAPACITY_MULT]
    liner = p[HOSE_LINER_SHARE] * p[HOSE_CAPACITY]
    C[OIL] = m * (p[OIL_NODE_MASS] * cp_J_kgK)
    C[WALL] = m * p[WALL_CAPACITY]
    C[HARDWARE] = m * p[HARDWARE_CAPACITY]
    C[HOSE] = m * liner
    C[HOSE_COVER] = m * (p[HOSE_CAPACITY] - liner)
    C[LOOP_OIL] = m * (p[LOOP_OIL_MASS] * loop_cp_J_kgK)


@kernel
def enthalpy(p, T_K, H):
    """Sensible enthalpy of each node (J, relative to 0 degC) at T_K into H."""
    m = p[CAPACITY_MULT]
    liner = p[HOSE_LINER_SHARE] * p[HOSE_CAPACITY]
    a, b = p[OIL_FIRST + OIL_CP_A], p[OIL_FIRST + OIL_CP_B]
    H[OIL] = m * (p[OIL_NODE_MASS] * linear_enthalpy_J_kg(T_K[OIL], a, b))
    H[WALL] = m * (p[WALL_CAPACITY] * (T_K[WALL] - ZERO_CELSIUS_K))
    H[HARDWARE] = m * (p[HARDWARE_CAPACITY] * (T_K[HARDWARE] - ZERO_CELSIUS_K))
    H[HOSE] = m * (liner * (T_K[HOSE] - ZERO_CELSIUS_K))
    H[HOSE_COVER] = m * ((p[HOSE_CAPACITY] - liner) * (T_K[HOSE_COVER] - ZERO_CELSIUS_K))
    H[LOOP_OIL] = m * (p[LOOP_OIL_MASS] * linear_enthalpy_J_kg(T_K[LOOP_OIL], a, b))


@kernel
def temperatures(p, H_J, T):
    """Inverse of enthalpy: the node temperatures (K) of enthalpies H_J into T."""
    m = p[CAPACITY_MULT]
    liner = p[HOSE_LINER_SHARE] * p[HOSE_CAPACITY]
    a, b = p[OIL_FIRST + OIL_CP_A], p[OIL_FIRST + OIL_CP_B]
    T[OIL] = linear_temperature_from_enthalpy_K(H_J[OIL] / m / p[OIL_NODE_MASS], a, b)
    T[WALL] = H_J[WALL] / m / p[WALL_CAPACITY] + ZERO_CELSIUS_K
    T[HARDWARE] = H_J[HARDWARE] / m / p[HARDWARE_CAPACITY] + ZERO_CELSIUS_K
    T[HOSE] = H_J[HOSE] / m / liner + ZERO_CELSIUS_K
    T[HOSE_COVER] = H_J[HOSE_COVER] / m / (p[HOSE_CAPACITY] - liner) + ZERO_CELSIUS_K
    T[LOOP_OIL] = linear_temperature_from_enthalpy_K(H_J[LOOP_OIL] / m / p[LOOP_OIL_MASS], a, b)


@kernel
def node_system(p, T_K, volume_flow_m3_s, power_W, air, C, L, b, g_amb):
    """The linear system of one design frozen at T_K: fills C (k,) J/K, L (k,k) W/K, b (k,) W,
    g_amb (k,) W/K (node_equations) and returns the loss offset, W. Each path is one compiled
    function of conductances.py or still_paths.py and one line below: `link` between two nodes,
    `loop_link` from the loop's oil, `to_air` to the ambient."""
    T_oil, T_wall, T_a = T_K[OIL], T_K[WALL], p[AMBIENT]
    oil = p[OIL_FIRST:]
    nu, k, cp, rho, pr = oil_transport(oil, T_oil)                          # the bulk
    nu_f, k_f, _, _, pr_f = oil_transport(oil, 0.5 * (T_oil + T_wall))      # the wall's film
    _, k_loop, cp_loop, _, _ = oil_transport(oil, T_K[LOOP_OIL])             # the loop's oil
    flowing = volume_flow_m3_s > 0
    rate = rho * volume_flow_m3_s * cp                                      # m_dot c_p, W/K
    rise = power_W / max(rate, 1e-30) if flowing else 0.0                   # return line over bulk, K
    h_side, h_bottom = oil_side_h(p, T_oil, T_wall, volume_flow_m3_s, nu_f, k_f, pr_f)
    bodies, hose = loop_paths(p, volume_flow_m3_s, rate, nu, k, pr)
    loop_tank, loop_bodies, loop_liner = loop_oil_links(
        flowing, rate, k_loop, p[HOSE_INNER_D], p[HOSE_LENGTH], p[PASSAGE_D], p[INTERNAL_AREA], p[HOSE_INNER_G],
        p[ENGINE_OFF_MULT])
    G_cool = cooler(p, flowing, rate)
    head, wall = tank_to_air(p, T_oil, T_wall, air)
    L[:, :] = 0.0
    b[:] = 0.0
    g_amb[:] = 0.0
    link(L, OIL, WALL, oil_to_wall(p, h_side, h_bottom))
    loop_link(L, b, HARDWARE, p[COUPLING_MULT] * bodies, rise)
    loop_link(L, b, HOSE, hose, rise)
    loop_link(L, b, LOOP_OIL, loop_tank, rise)        # the stream, or the standing columns
    link(L, LOOP_OIL, HARDWARE, loop_bodies)           # still oil in the bodies
    link(L, LOOP_OIL, HOSE, loop_liner)                # still oil in the hoses
    link(L, HARDWARE, WALL, engine_off_link(p[ENGINE_OFF_G], p[ENGINE_OFF_MULT]))
    link(L, HOSE, HOSE_COVER, p[HOSE_LINK_G])
    to_air(L, b, g_amb, WALL, wall, T_a)
    to_air(L, b, g_amb, HARDWARE, bodies_to_air(p, T_K[HARDWARE], air), T_a)
    to_air(L, b, g_amb, HOSE_COVER, hose_to_air(p, T_K[HOSE_COVER], air), T_a)
    to_air(L, b, g_amb, OIL, G_cool, T_a)
    to_air(L, b, g_amb, OIL, head, T_a)                # the head space, oil surface -> lid -> air
    b[OIL] += power_W - G_cool * rise          # the cooler sees the return line, bulk + the full rise
    capacities(p, cp, cp_loop, C)
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
    """what 0: capacities at the oils' cp (cp[d] = tank's, loop's); 1: enthalpies of temperatures X;
    2: temperatures of enthalpies X."""
    out = np.empty_like(X)
    for d in range(X.shape[0]):
        p = params[d if params.shape[0] > 1 else 0]
        if what == 0:
            capacities(p, cp[d, 0], cp[d, 1], out[d])
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
                                air_or_standard(rig.air_columns))


def heat_capacities_J_K(rig: Rig, T_K: np.ndarray, oil_cp_J_kgK=None, loop_cp_J_kgK=None) -> np.ndarray:
    """Node heat capacities (N, N_NODES), J/K; the oils' follow Cragoe's c_p(T) (or oil_cp_J_kgK and
    loop_cp_J_kgK, if the caller has them already)."""
    T = _states(T_K)
    n = T.shape[0]
    cp = np.empty((n, 2))
    cp[:, 0] = rig.oil.specific_heat(T[:, OIL]) if oil_cp_J_kgK is None else oil_cp_J_kgK
    cp[:, 1] = rig.oil.specific_heat(T[:, LOOP_OIL]) if loop_cp_J_kgK is None else loop_cp_J_kgK
    return _per_node_many(0, rig.params, T, cp)


def node_enthalpy_J(rig: Rig, T_K: np.ndarray) -> np.ndarray:
    """Sensible enthalpy of each node (N, N_NODES), J, relative to 0 degC; its change is the heat stored."""
    return _per_node_many(1, rig.params, _states(T_K), np.empty((0, 2)))


def temperatures_from_enthalpy_K(rig: Rig, H_J: np.ndarray) -> np.ndarray:
    """Inverse of node_enthalpy_J."""
    return _per_node_many(2, rig.params, _states(H_J), np.empty((0, 2)))


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
                  for g in air_paths_W_K(rig, T[:, WALL], T[:, HARDWARE], T[:, HOSE_COVER], T[:, OIL])))
    return C / G if G > 0 else float("inf")


def passive_rejection_W(rig: Rig, T_K: float):
    """Steady heat loss to ambient with the whole rig at T_K, engine off, no cooler, W."""
    T_wall = np.atleast_1d(np.asarray(T_K, dtype=float))
    dT = T_wall - rig.ambient_K
    return sum(air_paths_W_K(rig, T_wall, T_wall, T_wall, T_wall)) * dT


def passive_paths_W(rig: Rig, T_K: float) -> dict:
    """The steady heat loss of design 0 with the whole rig at T_K, engine off, no cooler, W, by path:
    the tank's walls to the air (sides, bottom, dry shell and lid), the floor, the head space (oil
    surface -> lid -> air), the metal bodies, the hoses."""
    T = np.atleast_1d(np.asarray(T_K, dtype=float))
    head, wall, bodies, hoses = (float(np.atleast_1d(g)[0]) for g in air_paths_W_K(rig, T, T, T, T))
    floor = float(np.atleast_1d(floor_W_K(rig))[0])
    dT = float(T[0] - np.atleast_1d(rig.ambient_K)[0])
    return {"tank_to_air": (wall - floor) * dT, "floor": floor * dT, "head_space": head * dT,
            "bodies": bodies * dT, "hoses": hoses * dT}
