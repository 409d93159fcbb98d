"""One conductance (or coefficient) of a `Rig` at given temperatures, as numpy arrays over its
designs: the compiled path functions of conductances.py run design by design (`_over_designs`),
never a second copy of them. For the tests, the report's figures and the reference models."""
from __future__ import annotations

import numpy as np

from typing import NamedTuple

from .air import air_or_standard
from .compiled import kernel
from .conductances import (BOTTOM, CYLINDER, TOP, VERTICAL, bodies_to_air, cooler, dry_shell, h_air, hose_to_air,
                           loop_paths, oil_side_h, oil_to_wall, stirring_velocity, tank_to_air)
from .oil import oil_transport
from .rig_params import (AIR_SPEED, AMBIENT, BODY_LENGTH, COUPLING_MULT, HOSE_OUTER_D, OIL_FIRST, PLATE_LENGTH,
                         SIDE_HEIGHT, TOP_LENGTH)

# what _over_designs evaluates
(_STIRRING, _OIL_SIDE, _OIL_TO_WALL, _LOOP, _DRY_SHELL, _AMBIENT, _COOLER, _AIR_SIDE, _RETURN_RISE, _TANK) = range(10)


@kernel
def _over_designs(which, params, args, air):
    """Path `which` for each design d (its rig row, its column of args): out (3, n)."""
    n = max(params.shape[0], args.shape[1])
    out = np.zeros((5, n))
    for d in range(n):
        p = params[d if params.shape[0] > 1 else 0]
        x = args[:, d if args.shape[1] > 1 else 0]
        if which == _STIRRING:
            out[0, d] = stirring_velocity(p, x[0])
        elif which == _OIL_SIDE:       # T_oil, T_wall, Q
            nu, k, _, _, pr = oil_transport(p[OIL_FIRST:], 0.5 * (x[0] + x[1]))
            out[0, d], out[1, d] = oil_side_h(p, x[0], x[1], x[2], nu, k, pr)
            out[2, d] = oil_to_wall(p, out[0, d], out[1, d])
        elif which == _LOOP:           # T_oil, Q, capacity rate, nu, k, Pr
            bodies, hose = loop_paths(p, x[1], x[2], x[3], x[4], x[5])
            out[0, d], out[1, d] = p[COUPLING_MULT] * bodies, hose
            out[2, d] = bodies
        elif which == _DRY_SHELL:      # h_side, h_top
            out[0, d] = dry_shell(p, x[0], x[1])
        elif which == _AMBIENT:        # T_wall, T_hardware, T_hose cover, T_oil: the wall's, the bodies', the hoses', the head space's
            out[3, d], out[0, d] = tank_to_air(p, x[3], x[0], air)
            out[1, d], out[2, d] = bodies_to_air(p, x[1], air), hose_to_air(p, x[2], air)
        elif which == _COOLER:         # flowing, capacity rate
            out[0, d] = cooler(p, x[0] > 0, x[1])
        elif which == _AIR_SIDE:       # T_wall, T_hardware, T_hose cover: sides, bodies, lid, bottom, hoses
            T_a, speed, plate, D = p[AMBIENT], p[AIR_SPEED], p[PLATE_LENGTH], p[HOSE_OUTER_D]
            out[0, d] = h_air(VERTICAL, p[SIDE_HEIGHT], x[0], T_a, speed, plate, air)
            out[1, d] = h_air(VERTICAL, p[BODY_LENGTH], x[1], T_a, speed, p[BODY_LENGTH], air)
            out[2, d] = h_air(TOP, p[TOP_LENGTH], x[0], T_a, speed, plate, air)
            out[3, d] = h_air(BOTTOM, p[TOP_LENGTH], x[0], T_a, speed, plate, air)
            out[4, d] = h_air(CYLINDER, D, x[2], T_a, speed, D, air)
        elif which == _RETURN_RISE:    # T_oil, Q, P
            _, _, cp, rho, _ = oil_transport(p[OIL_FIRST:], x[0])
            out[0, d] = x[2] / max(rho * x[1] * cp, 1e-30) if x[1] > 0 else 0.0
    return out


def _run(which, rig, *args, air=None):
    """The compiled path over the rig's designs; args broadcast to one column per design."""
    shaped = np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in args])
    size = shaped[0].size if shaped[0].ndim else 1
    columns = np.ascontiguousarray(np.stack([np.reshape(a, -1) for a in shaped])) if size else np.zeros((len(args), 0))
    return _over_designs(which, rig.params, columns, air_or_standard(rig.air_columns if air is None else air))


def stirring_velocity_m_s(rig, volume_flow_m3_s):
    """Oil velocity along the tank's wetted wall, m/s (conductances.stirring_velocity)."""
    return _run(_STIRRING, rig, volume_flow_m3_s)[0]


def h_oil_side_W_m2K(rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Oil-side coefficient on the wetted sides of the reservoir wall, W/(m^2 K) (conductances.oil_side_h)."""
    return _run(_OIL_SIDE, rig, T_oil_K, T_wall_K, volume_flow_m3_s)[0]


def h_oil_bottom_W_m2K(rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Oil-side coefficient on the wetted bottom of the reservoir, W/(m^2 K) (conductances.oil_side_h)."""
    return _run(_OIL_SIDE, rig, T_oil_K, T_wall_K, volume_flow_m3_s)[1]


def oil_to_wall_W_K(rig, T_oil_K, T_wall_K, volume_flow_m3_s):
    """Conductance oil -> wall node, W/K (conductances.oil_to_wall)."""
    return _run(_OIL_SIDE, rig, T_oil_K, T_wall_K, volume_flow_m3_s)[2]


def loop_conductances_W_K(rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductances loop oil -> (metal bodies, hose liner), W/K, the bodies' not yet multiplied by
    hardware_coupling_multiplier (conductances.loop_paths). oil_props: oil.transport() at T_oil_K,
    if the caller has it already."""
    nu, k, _, _, pr = rig.oil.transport(T_oil_K) if oil_props is None else oil_props
    out = _run(_LOOP, rig, T_oil_K, volume_flow_m3_s, np.asarray(mass_flow_kg_s) * cp_J_kgK, nu, k, pr)
    return out[2], out[1]


def oil_to_hardware_W_K(rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductance loop oil -> metal bodies, W/K, times hardware_coupling_multiplier."""
    nu, k, _, _, pr = rig.oil.transport(T_oil_K) if oil_props is None else oil_props
    return _run(_LOOP, rig, T_oil_K, volume_flow_m3_s, np.asarray(mass_flow_kg_s) * cp_J_kgK, nu, k, pr)[0]


def oil_to_hose_W_K(rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props=None):
    """Conductance loop oil -> hose liner, W/K."""
    return loop_conductances_W_K(rig, T_oil_K, volume_flow_m3_s, mass_flow_kg_s, cp_J_kgK, oil_props)[1]


def dry_shell_W_K(rig, h_side_W_m2K, h_top_W_m2K):
    """Conductance to the air of the shell above the oil line, W/K (conductances.dry_shell)."""
    return _run(_DRY_SHELL, rig, h_side_W_m2K, h_top_W_m2K)[0]


def air_paths_W_K(rig, T_wall_K, T_hardware_K, T_hose_K=None, T_oil_K=None):
    """Conductances to the surroundings, W/K: (oil through the head space and the lid, reservoir wall
    with the floor, metal bodies, hoses) (conductances.tank_to_air, bodies_to_air, hose_to_air).
    T_hose_K is the hose cover's temperature, T_hardware_K by default; T_oil_K defaults to T_wall_K."""
    T_hose_K = T_hardware_K if T_hose_K is None else T_hose_K
    T_oil_K = T_wall_K if T_oil_K is None else T_oil_K
    out = _run(_AMBIENT, rig, T_wall_K, T_hardware_K, T_hose_K, T_oil_K)
    return out[3], out[0], out[1], out[2]


def ambient_conductances_W_K(rig, T_wall_K, T_hardware_K, T_hose_K=None):
    """Conductances to the air, W/K: (reservoir wall, metal bodies, hoses); see air_paths_W_K (the
    head space, from the oil, is left out here)."""
    return air_paths_W_K(rig, T_wall_K, T_hardware_K, T_hose_K)[1:]


class AirSide(NamedTuple):
    """Convective coefficients to the air, W/(m^2 K), before the multiplier and without radiation."""
    side: np.ndarray      # the tank's sides (vertical plates)
    body: np.ndarray      # the metal bodies (vertical plates)
    top: np.ndarray       # the lid (horizontal face, hot face up while hotter than the air)
    bottom: np.ndarray    # the bottom (horizontal face, hot face down)
    hose: np.ndarray      # the hoses (horizontal cylinders)


def air_side_h_W_m2K(rig, T_surface_K, air=None) -> AirSide:
    """The air side of every outer face, W/(m^2 K) (conductances.h_air): natural convection
    (Churchill-Chu for the vertical plates and the hoses, McAdams for the lid and the bottom),
    combined with the forced stream of rig.air_speed_m_s by Churchill (1977) where it blows.
    T_surface_K : (3, N) rows, the wall's, the bodies' and the hose cover's temperatures, K.
    air : the (3, rows) columns of another air (air.air_columns), else the rig's."""
    T = np.asarray(T_surface_K, dtype=float)
    out = _run(_AIR_SIDE, rig, T[0], T[1], T[2], air=air)
    return AirSide(*out)


def wall_to_ambient_W_K(rig, T_wall_K):
    """Conductance reservoir wall -> air, W/K."""
    return ambient_conductances_W_K(rig, T_wall_K, T_wall_K)[0]


def hardware_to_ambient_W_K(rig, T_hardware_K):
    """Conductance metal bodies -> air, W/K."""
    return ambient_conductances_W_K(rig, T_hardware_K, T_hardware_K)[1]


def hose_to_ambient_W_K(rig, T_hose_K):
    """Conductance hose cover -> air, W/K, at the cover's temperature."""
    return ambient_conductances_W_K(rig, T_hose_K, T_hose_K)[2]


def hose_ring_link_W_K(rig):
    """Conductance hose liner -> hose cover, W/K: the rubber's shell between the two rings' centres
    (hose_rings_m), 2 pi k L / ln(r_cover / r_liner)."""
    return rig.constants["hose_link_W_K"]


def cooler_W_K(rig, flowing, capacity_rate_W_K):
    """Effective cooler conductance, W/K per K of ETD (conductances.cooler)."""
    return _run(_COOLER, rig, np.asarray(flowing, dtype=float), capacity_rate_W_K)[0]


def return_line_rise_K(rig, T_oil_K, inputs):
    """Return-line oil temperature minus bulk: P / (m_dot c_p), K; 0 with no flow."""
    out = _run(_RETURN_RISE, rig, T_oil_K, inputs.volume_flow_m3_s, inputs.power_W)[0]
    shape = np.broadcast(np.asarray(T_oil_K), np.asarray(inputs.volume_flow_m3_s), np.asarray(inputs.power_W)).shape
    return out.reshape(shape) if out.size == int(np.prod(shape)) else out
