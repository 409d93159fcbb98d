"""The lumped thermal network of a rig: six nodes and ambient air as the boundary.

    C_i(T) dT_i/dt = sum_j G_ij(T, flow) (T_j - T_i) + G_i,amb (T_amb - T_i) + Q_i

Nodes (NODE_NAMES): the tank's oil, the reservoir wall, the loop's metal bodies (pump, valve,
manifold and fittings, wetted inside), the hoses' wall (rubber and braid) as two rings: the liner
(HOSE, the inner fifth of the wall, touched by the oil) and the cover (HOSE_COVER, the rest, to the
air; see conductances.hose_rings_m for the rule and why), and the loop's oil (LOOP_OIL, in the hoses
and bodies; see still_paths for why it is a node of its own).
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

from .conductances import (ambient_conductances_W_K, air_side_h_W_m2K, dry_shell_W_K, hose_ring_link_W_K,
                           h_oil_bottom_W_m2K, h_oil_side_W_m2K, hardware_to_ambient_W_K, hose_to_ambient_W_K,
                           loop_conductances_W_K, oil_to_hardware_W_K, oil_to_hose_W_K, oil_to_wall_W_K,
                           stirring_velocity_m_s, wall_to_ambient_W_K, air_paths_W_K)
from .rig import HOSE_LINER_FRACTION, HOSE_WALL_CONDUCTIVITY_W_mK, PerDesign, Rig, hose_rings_m
from .still_paths import engine_off_link_W_K, floor_W_K, loop_oil_links_W_K
from .units import ZERO_CELSIUS_K

# The Rig lives in rig.py and the conductances in conductances.py; they are re-exported here, the
# network's one door.
__all__ = ["HARDWARE", "HOSE", "HOSE_COVER", "LOOP_OIL", "air_paths_W_K", "loop_oil_node_mass_kg", "HOSE_LINER_FRACTION", "HOSE_RINGS", "HOSE_WALL_CONDUCTIVITY_W_mK",
           "N_NODES", "NODE_NAMES", "OIL", "WALL", "Inputs", "Rig", "hose_mean_K", "hose_mean_from_share_K",
           "hose_ring_link_W_K", "hose_rings_m", "ambient_column", "ambient_conductances_W_K", "cooler_W_K", "cooling_time_constant_s", "dry_shell_W_K",
           "air_side_h_W_m2K", "h_oil_bottom_W_m2K", "h_oil_side_W_m2K", "hardware_to_ambient_W_K",
           "heat_capacities_J_K", "hose_to_ambient_W_K", "loop_conductances_W_K", "node_enthalpy_J",
           "node_equations", "oil_node_mass_kg", "oil_to_hardware_W_K", "oil_to_hose_W_K", "oil_to_wall_W_K",
           "passive_paths_W", "passive_rejection_W", "per_design", "return_line_rise_K", "return_rise_K", "stirring_velocity_m_s",
           "temperatures_from_enthalpy_K", "wall_to_ambient_W_K"]

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


# A floor under the loop oil's mass, so that a rig built without loop oil keeps a finite node.
LOOP_OIL_MIN_KG = 1e-4


def loop_oil_node_mass_kg(rig: Rig):
    """Oil in the LOOP_OIL node, kg: in the hoses, pump and valve (at least LOOP_OIL_MIN_KG)."""
    return np.maximum(rig.loop_oil_mass_kg, LOOP_OIL_MIN_KG)


def heat_capacities_J_K(rig: Rig, T_K: np.ndarray, oil_cp_J_kgK=None, loop_cp_J_kgK=None) -> np.ndarray:
    """Node heat capacities (N, N_NODES), J/K; the oils' follow Cragoe's c_p(T) (or oil_cp_J_kgK and
    loop_cp_J_kgK, if the caller has them already)."""
    cp = rig.oil.specific_heat(T_K[:, OIL]) if oil_cp_J_kgK is None else oil_cp_J_kgK
    loop_cp = rig.oil.specific_heat(T_K[:, LOOP_OIL]) if loop_cp_J_kgK is None else loop_cp_J_kgK
    C = np.empty((T_K.shape[0], N_NODES))
    C[:, OIL] = oil_node_mass_kg(rig) * cp
    C[:, WALL] = rig.wall_capacity_J_K
    C[:, HARDWARE] = rig.hardware_capacity_J_K
    C[:, HOSE], C[:, HOSE_COVER] = _hose_ring_capacities_J_K(rig)
    C[:, LOOP_OIL] = loop_oil_node_mass_kg(rig) * loop_cp
    return _capacity_scale(rig) * C


def _hose_ring_capacities_J_K(rig: Rig):
    """(liner, cover) heat capacities, J/K: the hose's split by the liner's share of the rubber."""
    liner = rig.constants["hose_liner_share"] * rig.hose_capacity_J_K
    return liner, rig.hose_capacity_J_K - liner


def _capacity_scale(rig: Rig):
    """The capacity multiplier, shaped to scale (N, k) node arrays (it may be one per design)."""
    m = rig.capacity_multiplier
    return np.asarray(m, dtype=float)[:, None] if np.ndim(m) else m


def node_enthalpy_J(rig: Rig, T_K: np.ndarray) -> np.ndarray:
    """Sensible enthalpy of each node (N, N_NODES), J, relative to 0 degC; its change is the heat stored."""
    oil = oil_node_mass_kg(rig) * rig.oil.specific_enthalpy_J_kg(T_K[:, OIL])
    wall = rig.wall_capacity_J_K * (T_K[:, WALL] - ZERO_CELSIUS_K)
    hardware = rig.hardware_capacity_J_K * (T_K[:, HARDWARE] - ZERO_CELSIUS_K)
    liner_C, cover_C = _hose_ring_capacities_J_K(rig)
    liner = liner_C * (T_K[:, HOSE] - ZERO_CELSIUS_K)
    cover = cover_C * (T_K[:, HOSE_COVER] - ZERO_CELSIUS_K)
    loop = loop_oil_node_mass_kg(rig) * rig.oil.specific_enthalpy_J_kg(T_K[:, LOOP_OIL])
    return _capacity_scale(rig) * _columns(oil, wall, hardware, liner, cover, loop, n=T_K.shape[0])


def temperatures_from_enthalpy_K(rig: Rig, H_J: np.ndarray) -> np.ndarray:
    """Inverse of node_enthalpy_J."""
    H = H_J / _capacity_scale(rig)
    oil = rig.oil.temperature_from_enthalpy_K(H[:, OIL] / oil_node_mass_kg(rig))
    wall = H[:, WALL] / rig.wall_capacity_J_K + ZERO_CELSIUS_K
    hardware = H[:, HARDWARE] / rig.hardware_capacity_J_K + ZERO_CELSIUS_K
    liner_C, cover_C = _hose_ring_capacities_J_K(rig)
    liner = H[:, HOSE] / liner_C + ZERO_CELSIUS_K
    cover = H[:, HOSE_COVER] / cover_C + ZERO_CELSIUS_K
    loop = rig.oil.temperature_from_enthalpy_K(H[:, LOOP_OIL] / loop_oil_node_mass_kg(rig))
    return _columns(oil, wall, hardware, liner, cover, loop, n=H.shape[0])


def hose_mean_K(rig: Rig, T_K: np.ndarray) -> np.ndarray:
    """The hose rubber's capacity-weighted mean temperature, K, of states T_K (..., N_NODES): the
    temperature whose rise times the hose's capacity is the heat the two rings hold."""
    return hose_mean_from_share_K(rig.constants["hose_liner_share"], T_K)


def hose_mean_from_share_K(liner_share, T_K: np.ndarray) -> np.ndarray:
    """hose_mean_K from the liner's share of the hose's capacity (a float, or one per design)."""
    return liner_share * T_K[..., HOSE] + (1.0 - liner_share) * T_K[..., HOSE_COVER]


def node_equations(rig: Rig, T_K: np.ndarray, inputs: Inputs):
    """The linear system frozen at state T_K: C dT/dt = -L T + b.

    Returns (C (N,k) J/K, L (N,k,k) W/K, b (N,k) W, g_amb (N,k) W/K, loss_offset_W (N,)), k = N_NODES.
    g_amb are the conductances to ambient; loss_offset_W is the part of the heat lost to ambient
    that does not depend on T (the cooler sees the return line, hotter than the bulk). The heat
    lost to ambient at state T is  g_amb . (T - T_amb) + loss_offset_W.
    """
    n = T_K.shape[0]
    T_oil, T_wall = T_K[:, OIL], T_K[:, WALL]
    T_a = rig.ambient_K
    Q = per_design(inputs.volume_flow_m3_s, n)
    P = per_design(inputs.power_W, n)   # already scaled by rig.power_multiplier (the solver does it)
    flowing = Q > 0
    # bulk, wall film and (Physics II) the loop oil
    both = rig.oil.transport(_columns(T_oil, 0.5 * (T_oil + T_wall), T_K[:, LOOP_OIL], n=n).T)
    oil_props, film_props = tuple(p[0] for p in both), tuple(p[1] for p in both)
    loop_k, loop_cp = both[1][2], both[2][2]
    cp, rho = oil_props[2], oil_props[3]
    mass_flow = rho * Q
    return_rise = return_rise_K(P, mass_flow * cp, flowing)

    G_ow = oil_to_wall_W_K(rig, T_oil, T_wall, Q, film_props)
    G_ob, G_oh = loop_conductances_W_K(rig, T_oil, Q, mass_flow, cp, oil_props)
    G_ob = rig.hardware_coupling_multiplier * G_ob
    G_head, G_wa, G_ba, G_ha = air_paths_W_K(rig, T_wall, T_K[:, HARDWARE], T_K[:, HOSE_COVER], T_oil)
    # Physics II: the loop oil (stream-tied to the bulk, or standing in the bodies and hoses), and
    # the metal link bodies <-> tank wall
    G_ol, G_lb, G_lh = loop_oil_links_W_K(rig, flowing, mass_flow * cp, loop_k)
    G_bw = engine_off_link_W_K(rig)
    G_lc = hose_ring_link_W_K(rig)
    G_cool = cooler_W_K(rig, flowing, mass_flow * cp)

    L = np.zeros((n, N_NODES, N_NODES))
    L[:, OIL, OIL] = G_ow + G_ob + G_oh + G_cool + G_head + G_ol          # Physics II: + G_head + G_ol
    L[:, WALL, WALL] = G_ow + G_wa + G_bw                                 # Physics II: + G_bw
    L[:, HARDWARE, HARDWARE] = G_ob + G_ba + G_lb + G_bw                  # Physics II: + G_lb + G_bw
    L[:, HOSE, HOSE] = G_oh + G_lc + G_lh                                 # Physics II: + G_lh
    L[:, HOSE_COVER, HOSE_COVER] = G_lc + G_ha
    L[:, LOOP_OIL, LOOP_OIL] = G_ol + G_lb + G_lh                         # Physics II
    L[:, OIL, WALL] = L[:, WALL, OIL] = -G_ow
    L[:, OIL, HARDWARE] = L[:, HARDWARE, OIL] = -G_ob
    L[:, OIL, HOSE] = L[:, HOSE, OIL] = -G_oh
    L[:, HOSE, HOSE_COVER] = L[:, HOSE_COVER, HOSE] = -G_lc
    L[:, OIL, LOOP_OIL] = L[:, LOOP_OIL, OIL] = -G_ol                     # Physics II
    L[:, LOOP_OIL, HARDWARE] = L[:, HARDWARE, LOOP_OIL] = -G_lb           # Physics II
    L[:, LOOP_OIL, HOSE] = L[:, HOSE, LOOP_OIL] = -G_lh                   # Physics II
    L[:, HARDWARE, WALL] = L[:, WALL, HARDWARE] = -G_bw                   # Physics II
    g_amb = _columns(G_cool + G_head, G_wa, G_ba, 0.0, G_ha, 0.0, n=n)     # Physics II: + G_head, loop oil 0
    # The bodies, the hose liner and the loop oil see the mean loop oil temperature, bulk + half the
    # return-line rise; the cooler sees the return line, bulk + the full rise.
    b = g_amb * ambient_column(T_a)
    b[:, OIL] += P - G_cool * return_rise - 0.5 * (G_ob + G_oh + G_ol) * return_rise   # Physics II: + G_ol
    b[:, HARDWARE] += 0.5 * G_ob * return_rise
    b[:, HOSE] += 0.5 * G_oh * return_rise
    b[:, LOOP_OIL] += 0.5 * G_ol * return_rise                            # Physics II
    return heat_capacities_J_K(rig, T_K, cp, loop_cp), L, b, g_amb, G_cool * return_rise


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


def return_rise_K(power_W, capacity_rate_W_K, flowing):
    """Return-line oil temperature minus bulk, K: the pull's heat carried by the loop's stream,
    P / (m_dot c_p); 0 with no flow. The one formula node_equations and return_line_rise_K share."""
    return np.where(flowing, power_W / np.maximum(capacity_rate_W_K, 1e-30), 0.0)


def return_line_rise_K(rig: Rig, T_oil_K, inputs: Inputs):
    """Return-line oil temperature minus bulk at bulk temperature T_oil_K, K (return_rise_K)."""
    Q = np.asarray(inputs.volume_flow_m3_s, dtype=float)
    capacity_rate = rig.oil.density_kg_m3(T_oil_K) * Q * rig.oil.specific_heat(T_oil_K)
    return return_rise_K(inputs.power_W, capacity_rate, Q > 0)


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
