"""The paths that carry heat without the pump: the loop oil standing in the bodies and hoses, the
optional metal link from the bodies to the tank, the head space from the oil surface to the lid, and
the floor under a tank that stands on it.

Each conductance is one compiled function of floats (W/K or W/(m^2 K)): the network
(network.node_system, conductances.tank_to_air) calls them in compiled code; the thin wrappers at
the end run the same functions over the designs of a `Rig` for numpy callers.

Why the loop oil is a node of its own (network.LOOP_OIL) and not a capacity that switches between
nodes: with the engine off, the oil standing in the hoses and bodies (about 0.5-1 L on a small rig)
is cut off from the tank, and it cools into the metal around it through still oil, with a time
constant C / G of several minutes (0.8 kg x 1,900 J/(kg K) over a few W/K), comparable to the
waits. Merging it into the bodies' or the hose's node would make it follow the metal at once;
leaving it in the tank's oil (the earlier model) lets the bulk keep heat that has gone into the
loop. A switch of capacity between nodes at every engine start and stop would also move enthalpy
between nodes outside the integrator. As its own node it carries its own temperature through every
step: while the pump runs it is tied to the bulk by the stream, G = m_dot c_p (the loop's contents
turn over in V/Q, a few seconds), and it sits at the bulk plus half the return-line rise, as the
bodies see it; while the pump stands it exchanges with the bodies and the hose liner by conduction
through the still oil, and with the tank's oil only along the standing columns.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import math

import numpy as np

from .compiled import elementwise, kernel
from .correlations import (NU_STILL_CYLINDER, Nu_horizontal_enclosure_Hollands, h_radiation_parallel_plates,
                           h_semi_infinite_solid, rayleigh)

if TYPE_CHECKING:
    from .rig import Rig

# Emissivity of the oil's free surface: oils and oil films on metal are about 0.8-0.95 in the thermal
# infrared (from memory of emissivity tables, e.g. Incropera Table A.11 and the Omega tables; not
# checked against a source), 0.9 taken.
OIL_SURFACE_EMISSIVITY = 0.9

# The floor under a tank with bottom = "floor": concrete, stone mix (Incropera, 6th ed., Table A.3,
# from memory: k = 1.4 W/(m K), rho = 2300 kg/m^3, c = 880 J/(kg K); alpha = 6.9e-7 m^2/s).
CONCRETE_CONDUCTIVITY_W_mK = 1.4
CONCRETE_DIFFUSIVITY_m2_s = 1.4 / (2300.0 * 880.0)

# The optional metal link from the bodies to the tank (hardware.engine_off_coupling) by
# hardware.mounting: "apart" (the pump and valve stand on their own, joined to the tank by hoses
# only): 0 W/K; "on_tank" (the pump's flange is bolted to the tank): the contact over one face of
# the bodies' cube, at this contact coefficient. Engineering judgement: a bolted flange with a gasket
# or paint in the joint; bare metal joints under pressure reach 3,000-20,000 W/(m^2 K) (Incropera,
# 6th ed., Table 3.1, contact resistances 0.5-3e-4 m^2 K/W, from memory), a gasket far less. The
# band's engine-off factor carries the rest.
FLANGE_CONTACT_W_m2K = 1000.0


@kernel
def standing_loop_oil_W_K(k_oil_W_mK, bore_m, internal_area_m2, hose_length_m, hose_inner_W_K):
    """Conductances of the loop oil standing still to (the metal bodies, the hose liner), W/K.

    Conduction through still oil in a tube, from the oil's mean temperature to the wall: the slowest
    mode of a cylinder of fluid, Nu_D = 5.783 (correlations.NU_STILL_CYLINDER; fully developed laminar
    flow gives 3.66, the range the literature quotes for still oil in a tube). In the bodies, over
    their wetted inside (passages of the hose's bore); in the hoses, over the bore in series with the
    rubber from the bore to the liner's centre (hose_inner_W_K). Natural convection inside the tube
    (Ra_D ~ 1e4-1e5 in hot oil) is left out: no published correlation for a horizontal tube of fluid
    cooled at its wall was at hand, so this is the lower bound, and the band's engine-off factor
    (uncertainty.FACTORS) carries it.
    """
    h = NU_STILL_CYLINDER * k_oil_W_mK / bore_m
    to_bodies = h * internal_area_m2
    to_liner = 1.0 / (1.0 / (h * math.pi * bore_m * hose_length_m) + 1.0 / hose_inner_W_K)
    return to_bodies, to_liner


@kernel
def standing_column_W_K(k_oil_W_mK, bore_m, hose_length_m):
    """Conductance loop oil -> tank oil with the pump stopped, W/K: conduction along the oil standing
    in the hoses, over half their length (nearly nothing: 3e-5 W/K on a 3 m hose of 19 mm bore)."""
    return k_oil_W_mK * (0.25 * math.pi * bore_m**2) / (0.5 * hose_length_m)


def flange_link_W_K(mounting_on_tank: bool, body_cube_side_m: float) -> float:
    """The default of hardware.engine_off_coupling, W/K (see FLANGE_CONTACT_W_m2K)."""
    return FLANGE_CONTACT_W_m2K * body_cube_side_m**2 if mounting_on_tank else 0.0


@kernel
def head_space_W_K(T_oil_K, T_air_K, lid_area_m2, gap_m, lid_emissivity, h_lid_outside_W_m2K,
                   k_air, nu_air, pr_air, convection_multiplier):
    """Conductance oil surface -> air through the head space and the lid, W/K per K of T_oil - T_air.

    Inside: radiation between two parallel grey plates (the oil surface at OIL_SURFACE_EMISSIVITY,
    the lid's inside at lid_emissivity; Incropera eq. 13.24) plus the convection of the enclosed air
    layer heated from below (Hollands 1984 / Hollands, Raithby and Konicek 1975,
    correlations.Nu_horizontal_enclosure_Hollands) over the gap between the oil line and the lid,
    times the convection multiplier (it is air-side convection). Outside: the lid's outside
    coefficient (convection and radiation, in series with its wall). The two in series.
    The lid's temperature, at which the inside coefficients are evaluated, is taken midway between
    the oil and the air: the two coefficients are of the same size (5-8 W/(m^2 K)); the layer's Nu
    goes as dT^(1/3), so a 30 % error in that split moves it by about 10 %.
    Air properties (k, nu, Pr) at the layer's mean temperature are passed in; beta = 1/T.
    The lid's share fed by conduction from the wetted wall is the dry shell's (dry_shell_W_K); the
    two superpose (a linear conduction problem with fixed coefficients).
    """
    T_lid = 0.5 * (T_oil_K + T_air_K)
    dT = T_oil_K - T_lid
    T_mean = 0.5 * (T_oil_K + T_lid)
    Ra = rayleigh(1.0 / T_mean, dT, gap_m, nu_air, pr_air)
    Nu = Nu_horizontal_enclosure_Hollands(Ra, pr_air) if dT > 0 else 1.0
    h_inside = (h_radiation_parallel_plates(OIL_SURFACE_EMISSIVITY, lid_emissivity, T_oil_K, T_lid)
                + convection_multiplier * Nu * k_air / max(gap_m, 1e-3))
    return lid_area_m2 * h_inside * h_lid_outside_W_m2K / max(h_inside + h_lid_outside_W_m2K, 1e-300)


def floor_h_W_m2K(session_s, conductivity_W_mK=CONCRETE_CONDUCTIVITY_W_mK, diffusivity_m2_s=CONCRETE_DIFFUSIVITY_m2_s):
    """Coefficient of the floor under a tank that stands on it, W/(m^2 K): the floor as a
    semi-infinite solid (correlations.h_semi_infinite_solid) at the end of the planned session,
    counted from its start (the floor at the air's temperature then), and at least FLOOR_MIN_ELAPSED_S.

    A constant coefficient, so that the network stays a function of its state (a periodic state, a
    ready schedule and a resumed integration see the same floor). Why its value at the end: the
    floor's coefficient only falls with time, so within the planned session this is its lowest,
    and errs towards a hotter tank (with the bottom's excess held from the start, the heat the floor
    takes over a session tau is 2 k dT sqrt(tau / (pi alpha)) = h(tau/4) dT tau, twice h(tau) dT tau).
    Why at least an hour: the answers reach past the planned session (the pulls repeating the cycle
    up to the limit, the all-day cadence), where the floor has soaked longer. For a whole day it
    still overstates (8 h: 5.6 W/(m^2 K) against 15.8 at 1 h); the band's floor factor carries that.
    Concrete: 1 h 15.8 W/(m^2 K), 3 h 9.1 (ENGINEERING.md: about 16 and 9).
    """
    return elementwise(h_semi_infinite_solid)(conductivity_W_mK, diffusivity_m2_s, np.maximum(session_s, FLOOR_MIN_ELAPSED_S))


FLOOR_MIN_ELAPSED_S = 3600.0


@kernel
def loop_oil_links(flowing, capacity_rate_W_K, k_loop_oil_W_mK, hose_bore_m, hose_length_m, passage_bore_m,
                   internal_area_m2, hose_inner_W_K, engine_off_multiplier):
    """(loop oil <-> tank oil, loop oil <-> bodies, loop oil <-> hose liner), W/K.

    Pump running: the stream ties the loop oil to the bulk, G = m_dot c_p, and the bodies and the
    liner exchange with the flowing oil through the loop conductances (conductances.loop_paths),
    so the standing paths are 0. Pump stopped: the standing columns to the tank, the still oil to
    the bodies and the liner, each times the engine-off multiplier (the band's factor).
    """
    if flowing:
        return capacity_rate_W_K, 0.0, 0.0
    m = engine_off_multiplier
    column = m * standing_column_W_K(k_loop_oil_W_mK, hose_bore_m, hose_length_m)
    bodies, liner = standing_loop_oil_W_K(k_loop_oil_W_mK, passage_bore_m, internal_area_m2, hose_length_m,
                                          hose_inner_W_K)
    return column, m * bodies, m * liner


@kernel
def engine_off_link(engine_off_coupling_W_K, engine_off_multiplier):
    """The metal bodies <-> the tank wall, W/K: hardware.engine_off_coupling (by default from the
    mounting, flange_link_W_K), times the engine-off multiplier. A metal path, so it is there with
    the engine running too, where it is small against the flowing oil's coupling."""
    return engine_off_multiplier * engine_off_coupling_W_K


@kernel
def floor_link(floor_area_m2, floor_h_W_m2K, floor_multiplier, half_wall_m2K_W):
    """Conductance tank wall -> floor, W/K: the floor's coefficient (times the floor multiplier, the
    band's factor) over the bottom standing on it, in series with half the wall (0 where open)."""
    h = floor_multiplier * floor_h_W_m2K
    return floor_area_m2 * h / (1.0 + h * half_wall_m2K_W)


@kernel
def _loop_oil_links_many(flowing, rate, k, bore, length, passage, area, inner, mult):
    out = np.empty((3, flowing.size))
    for d in range(flowing.size):
        out[0, d], out[1, d], out[2, d] = loop_oil_links(flowing[d] > 0, rate[d], k[d], bore[d], length[d], passage[d],
                                                         area[d], inner[d], mult[d])
    return out


# --- the wrappers that read a Rig (numpy callers: tests, the report's figures) -----------------

def loop_oil_links_W_K(rig: Rig, flowing, capacity_rate_W_K, k_loop_oil_W_mK):
    """loop_oil_links over the designs of a rig: three arrays (N,), W/K."""
    args = (np.asarray(flowing, dtype=float), capacity_rate_W_K, k_loop_oil_W_mK, rig.hose_inner_diameter_m,
            rig.hose_length_m, rig.passage_diameter_m, rig.internal_area_m2, rig.constants["hose_inner_W_K"],
            rig.engine_off_multiplier)
    shaped = np.broadcast_arrays(*[np.atleast_1d(np.asarray(a, dtype=float)) for a in args])
    out = _loop_oil_links_many(*[np.ascontiguousarray(a) for a in shaped])
    return out[0], out[1], out[2]


def engine_off_link_W_K(rig: Rig):
    """engine_off_link of a rig, W/K (a float, or one per design)."""
    return elementwise(engine_off_link)(rig.engine_off_coupling_W_K, rig.engine_off_multiplier)


def floor_W_K(rig: Rig):
    """floor_link of a rig, W/K (a float, or one per design)."""
    return elementwise(floor_link)(rig.floor_area_m2, rig.floor_h_W_m2K, rig.floor_multiplier,
                                   rig.constants["half_wall_m2K_W"])
