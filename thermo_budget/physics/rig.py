"""A rig's description in SI units (`Rig`), and the parts of its conductances that depend on its
geometry alone, worked out once per rig (`constant_parts`, `Rig.constants`), among them the hose
wall's two rings (`hose_rings_m`). Every field may be a float or one value per design (`PerDesign`),
so that one integration serves a single run, a batched search and a design sweep alike.
"""
from __future__ import annotations

from dataclasses import dataclass, fields, replace
from functools import cached_property

import numpy as np

from .correlations import cylinder_wall_conductance_W_K
from .materials import HOSE_WALL
from .oil import Oil
from .rig_params import LOOP_OIL_MIN_KG, OIL_FIRST, PARAMS

PerDesign = float | np.ndarray   # a float, the same for every design, or an array of shape (N,), one per design

# Rubber hose wall (recalled from memory: 0.2-0.3 W/(m K); see materials.HOSE_WALL).
HOSE_WALL_CONDUCTIVITY_W_mK = HOSE_WALL["conductivity_W_mK"]



def rows(*values, like=None) -> np.ndarray:
    """Floats or (N,) arrays as the rows of one (k, N) array; N from `like` or the first array."""
    reference = next(v for v in values if np.ndim(v)) if like is None else like
    out = np.empty((len(values), np.shape(reference)[0]))
    for i, value in enumerate(values):
        out[i] = value
    return out


# The hose wall as two finite-volume rings (see hose_rings_m): the liner is this fraction of the
# wall's thickness, next to the oil; the cover is the rest.
HOSE_LINER_FRACTION = 0.2


def hose_rings_m(hose_inner_diameter_m, hose_outer_diameter_m):
    """The hose wall's two rings, radii in m: (bore face, liner/cover interface, outside face,
    liner centre, cover centre).

    Finite-volume rings (Incropera, 6th ed., ch. 5, in radial form): each node sits at its ring's
    mid-radius and holds its ring's volume; neighbouring centres exchange 2 pi k L / ln(r_b / r_a)
    (the shell conductance, eq. 3.27). The rule: the liner, the ring in contact with the oil, is the
    inner HOSE_LINER_FRACTION (a fifth) of the wall thickness, the cover the rest.

    Why a fifth: a pull touches the rubber for 10-30 s, and heat soaks into it about sqrt(alpha t)
    deep, 0.9-1.5 mm with alpha = k / (rho c) = 7.5e-8 m^2/s (materials.HOSE_WALL), a fifth to a
    third of a 4.8 mm wall, while the whole wall's conduction time t^2 / alpha is about 300 s. One node
    at mid-wall (the former model) cannot take heat up in a 10-s contact. Against the wall resolved
    into 40 rings (tests/hose_wall_reference.py, the adiabatic rig of tests/test_solver.py: 20 pulls
    of 10 kW x 10 s with 30 s engine-off waits, inner face adiabatic while the engine is off), the heat
    two rings take over the session, by the liner's share of the thickness (measured, one-way drive
    by the four-node model's trace): 0.10: -8.6 %, 0.15: -6.0 %, 0.20: -6.5 %, 0.25: -8.1 %,
    1/3: -11.7 %, 0.50 (equal rings): -19.3 %; one node at mid-wall: -38 %. The optimum is flat
    between 0.15 and 0.2; a fifth is the round figure in it.
    """
    r_i, r_o = 0.5 * hose_inner_diameter_m, 0.5 * hose_outer_diameter_m
    r_s = r_i + HOSE_LINER_FRACTION * (r_o - r_i)
    return r_i, r_s, r_o, 0.5 * (r_i + r_s), 0.5 * (r_s + r_o)


def hose_liner_share(hose_inner_diameter_m, hose_outer_diameter_m):
    """The liner's share of the hose wall's volume (and so of its capacity): (r_s^2 - r_i^2) /
    (r_o^2 - r_i^2), a little under HOSE_LINER_FRACTION (0.18 on a 0.66 bore ratio)."""
    r_i, r_s, r_o, _, _ = hose_rings_m(hose_inner_diameter_m, hose_outer_diameter_m)
    return (r_s**2 - r_i**2) / (r_o**2 - r_i**2)


def constant_parts(rig: Rig) -> dict:
    """Geometry-only parts of the conductances, to work out once per rig (Rig.constants): stacked
    lengths, the wall's and the hose wall's conduction, areas. (Emissivities and multipliers may be
    sampled per design by the uncertainty band, so they stay out of it.)"""
    like = np.atleast_1d(rig.fill_height_m)
    half_wall = 0.5 * rig.wall_thickness_m / rig.wall_conductivity_W_mK
    L = rig.hose_length_m
    r_i, _, r_o, r_liner, r_cover = hose_rings_m(rig.hose_inner_diameter_m, rig.hose_outer_diameter_m)
    k_hose = HOSE_WALL_CONDUCTIVITY_W_mK
    return {
        "half_wall_m2K_W": half_wall,
        # oil side: (sides, bottom) natural-convection lengths and forced-flow lengths
        "bottom_ra_per_side_ra": (rig.top_length_m / rig.fill_height_m) ** 3,
        "oil_forced_lengths_m": rows(rig.fill_height_m, rig.plate_length_m, like=like),
        "oil_lengths_m": rows(rig.fill_height_m, rig.top_length_m, like=like),
        # air side: rows (wall, bodies) of the vertical and forced lengths
        "vertical_lengths_m": rows(rig.side_height_m, rig.body_length_m, like=like),
        "forced_lengths_m": rows(rig.plate_length_m, rig.body_length_m, like=like),
        "dry_area_m2": rig.dry_side_area_m2 + rig.top_area_m2,
        "wall_kt_W_K": rig.wall_conductivity_W_mK * rig.wall_thickness_m,
        # hoses: the rubber's two rings (hose_rings_m): bore face -> liner centre, liner centre ->
        # cover centre, cover centre -> outside face; the liner's share of the capacity
        "hose_area_m2": np.pi * rig.hose_outer_diameter_m * L,
        "hose_inner_W_K": cylinder_wall_conductance_W_K(2 * r_i, 2 * r_liner, L, k_hose),
        "hose_link_W_K": cylinder_wall_conductance_W_K(2 * r_liner, 2 * r_cover, L, k_hose),
        "hose_outer_W_K": cylinder_wall_conductance_W_K(2 * r_cover, 2 * r_o, L, k_hose),
        "hose_liner_share": hose_liner_share(rig.hose_inner_diameter_m, rig.hose_outer_diameter_m),
        # loop: rows (hose bore, passages) of the tube diameters and lengths
        "tube_diameters_m": rows(rig.hose_inner_diameter_m, rig.passage_diameter_m, like=like),
        "tube_lengths_m": rows(L, rig.passage_length_m, like=like),
    }


@dataclass(frozen=True)
class Rig:
    """A rig in SI units. Every numeric field is `PerDesign`: a float (the same for every design) or
    an array of shape (N,), one value per design, so that one integration serves N designs at once
    (a design sweep varies the oil and the cooler, the uncertainty band the multipliers, the
    emissivities and the ambient, the hot day the ambient). Defaults describe a rig without the
    part (no cooler, no loop oil, the model as written)."""
    # the fluid
    oil: Oil
    oil_mass_kg: PerDesign                   # in the reservoir
    # the reservoir's outer faces, m^2, and their characteristic lengths, m
    side_area_m2: PerDesign
    side_height_m: PerDesign
    top_area_m2: PerDesign
    top_length_m: PerDesign                  # A/P of the top face
    bottom_area_m2: PerDesign                # 0 when the tank stands on the floor (then floor_area_m2)
    plate_length_m: PerDesign                # length along a forced air stream
    wetted_area_m2: PerDesign                # wetted sides + bottom (inside)
    fill_height_m: PerDesign
    tank_cross_section_m2: PerDesign
    # the reservoir's wall
    wall_thickness_m: PerDesign
    wall_conductivity_W_mK: PerDesign
    wall_capacity_J_K: PerDesign
    wall_emissivity: PerDesign
    # the loop's hardware: metal bodies (pump, valve, manifold, fittings) and hoses
    hardware_capacity_J_K: PerDesign         # the metal bodies
    hose_length_m: PerDesign
    hose_outer_diameter_m: PerDesign
    hose_inner_diameter_m: PerDesign
    body_area_m2: PerDesign                  # pump, valve and fittings, outside
    body_length_m: PerDesign
    hardware_emissivity: PerDesign
    # the pump
    displacement_m3: PerDesign               # per revolution
    volumetric_efficiency: PerDesign         # 0-1
    # the surroundings
    ambient_K: PerDesign
    air_speed_m_s: PerDesign = 0.0
    # multipliers on the model (1 is the model as written): the air side and the capacities (a fit
    # of a log sets them), the inside of the rig and the load (the uncertainty band samples them)
    convection_multiplier: PerDesign = 1.0
    capacity_multiplier: PerDesign = 1.0
    oil_side_multiplier: PerDesign = 1.0           # the oil-side coefficient on the tank's wetted wall
    hardware_coupling_multiplier: PerDesign = 1.0  # the conductance loop oil -> loop hardware
    power_multiplier: PerDesign = 1.0              # the absorbed power of every step
    # an optional cooler: specific dissipation, W/K per K of ETD; its fan "with_flow" or "always"
    cooler_W_K: PerDesign = 0.0
    cooler_fan: str = "with_flow"
    # the inside of the rig (build_rig fills these)
    loop_oil_mass_kg: PerDesign = 0.0        # oil in the hoses, pump and valve (the LOOP_OIL node)
    hose_capacity_J_K: PerDesign = 1.0       # hose rubber and braid, both rings (the liner's share: constants)
    internal_area_m2: PerDesign = 0.0        # wetted inside of the metal bodies (pump chamber + passages)
    pump_wetted_area_m2: PerDesign = 0.0     # the part of it in the pump's working chamber
    gear_pitch_diameter_m: PerDesign = 0.04  # the pump's gears (taken as an external gear pump)
    passage_diameter_m: PerDesign = 0.02     # their passages' bore
    passage_length_m: PerDesign = 0.1        # length of one passage through a body
    wetted_side_area_m2: PerDesign = 0.0     # wetted part of the tank's sides (inside = outside)
    wetted_bottom_area_m2: PerDesign = 0.0   # the tank's bottom, inside (wetted even on the floor)
    dry_side_area_m2: PerDesign = 0.0        # the sides above the oil line
    dry_fin_length_m: PerDesign = 0.0        # dry side height + the lid's A/P: the fin fed from the oil line
    dry_capacity_weight: PerDesign = 1.0     # share of the dry shell's capacity in the wall node
    jet_section_m2: PerDesign = 0.09         # the tank's wetted section across the return jet
    # the paths without the pump, and the air (build_rig fills these)
    engine_off_coupling_W_K: PerDesign = 0.0  # metal link bodies <-> tank wall (hardware.engine_off_coupling)
    engine_off_multiplier: PerDesign = 1.0   # on the standing loop oil's paths and that link (a band factor)
    floor_area_m2: PerDesign = 0.0           # the bottom standing on the floor (0: open or none)
    floor_h_W_m2K: PerDesign = 0.0           # the floor as a semi-infinite solid (still_paths.floor_h_W_m2K)
    floor_multiplier: PerDesign = 1.0        # on the floor's coefficient (a band factor)
    dry_shell_multiplier: PerDesign = 1.0    # on the dry shell's conductance (a band factor)
    head_space_m: PerDesign = 0.0            # gap from the oil line to the lid
    air_columns: np.ndarray | None = None    # air.air_columns of the scenario's air; None: standard air

    def with_changes(self, **changes) -> "Rig":
        return replace(self, **changes)

    @cached_property
    def constants(self) -> dict:
        """The parts of the conductances that depend on the geometry only, worked out once per rig
        (constant_parts); a changed rig is a new object and works them out again."""
        return constant_parts(self)

    @cached_property
    def params(self) -> np.ndarray:
        """The rig as the compiled network reads it: rows of floats (pack)."""
        return pack(self)


def pack(rig: Rig) -> np.ndarray:
    """The rig as the compiled network reads it (rig_params.PARAMS): rows of floats (n, OIL_FIRST +
    len(oil.OIL_PARAMS)), n = 1 or its number of designs."""
    parts = rig.constants
    values = []
    for name, source in PARAMS:
        if name == "LOOP_OIL_MASS":
            values.append(np.maximum(rig.loop_oil_mass_kg, LOOP_OIL_MIN_KG))
        elif name == "COOLER_ALWAYS":
            values.append(1.0 if rig.cooler_fan == "always" else 0.0)
        else:
            values.append(parts[source] if source in parts else getattr(rig, source))
    n = max(int(np.size(v)) for v in values)
    oil = rig.oil.params
    out = np.empty((n, OIL_FIRST + oil.size))
    for j, value in enumerate(values):
        out[:, j] = np.ravel(value)
    out[:, OIL_FIRST:] = oil
    return out


def take_designs(rig: Rig, index) -> Rig:
    """The rig restricted (or repeated) to the designs in `index`; scalar fields are shared. What
    the rig has already worked out (its constants, its packed rows) is taken along, design by
    design, not worked out again for every part taken: the same values as pack and constant_parts
    give the part."""
    changes = {}
    for field in fields(rig):
        value = getattr(rig, field.name)
        if isinstance(value, np.ndarray) and value.ndim == 1 and value.size > 1:
            changes[field.name] = value[index]
    taken = rig.with_changes(**changes)
    packed, n = rig.params, rig.params.shape[0]        # worked out once on the whole rig (cached)
    vars(taken)["params"] = packed if n == 1 else packed[index]
    vars(taken)["constants"] = {key: value[..., index] if n > 1 and np.ndim(value) and np.shape(value)[-1] == n
                                else value for key, value in rig.constants.items()}
    return taken
