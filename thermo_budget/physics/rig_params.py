"""A rig as the compiled network reads it: one row of floats per design (rig.pack), each column named
by an index constant here, the oil's coefficients (oil.OIL_PARAMS) at the end from OIL_FIRST on.

A rig whose fields are floats packs to one row that serves any number of states; one whose fields
hold N designs packs to N rows. Geometry-only parts of the conductances (rig.constant_parts)
are worked out once per rig, not at every evaluation.
"""
from __future__ import annotations

# A floor under the loop oil's mass, so that a rig built without loop oil keeps a finite node.
LOOP_OIL_MIN_KG = 1e-4

# (column, where its value comes from: a Rig field, or a key of rig.constant_parts)
PARAMS = (
    ("OIL_NODE_MASS", "oil_mass_kg"),        # kg: the reservoir's oil (the OIL node)
    ("LOOP_OIL_MASS", None),                 # kg: the loop's oil (the LOOP_OIL node, network.loop_oil_node_mass_kg)
    ("SIDE_HEIGHT", "side_height_m"),
    ("TOP_AREA", "top_area_m2"),
    ("TOP_LENGTH", "top_length_m"),
    ("BOTTOM_AREA", "bottom_area_m2"),
    ("PLATE_LENGTH", "plate_length_m"),
    ("FILL_HEIGHT", "fill_height_m"),
    ("TANK_CROSS_SECTION", "tank_cross_section_m2"),
    ("WALL_CAPACITY", "wall_capacity_J_K"),
    ("WALL_EMISSIVITY", "wall_emissivity"),
    ("HARDWARE_CAPACITY", "hardware_capacity_J_K"),
    ("HOSE_LENGTH", "hose_length_m"),
    ("HOSE_OUTER_D", "hose_outer_diameter_m"),
    ("HOSE_INNER_D", "hose_inner_diameter_m"),
    ("BODY_AREA", "body_area_m2"),
    ("BODY_LENGTH", "body_length_m"),
    ("HARDWARE_EMISSIVITY", "hardware_emissivity"),
    ("DISPLACEMENT", "displacement_m3"),
    ("VOLUMETRIC_EFFICIENCY", "volumetric_efficiency"),
    ("AMBIENT", "ambient_K"),
    ("AIR_SPEED", "air_speed_m_s"),
    ("CONVECTION_MULT", "convection_multiplier"),
    ("CAPACITY_MULT", "capacity_multiplier"),
    ("OIL_SIDE_MULT", "oil_side_multiplier"),
    ("COUPLING_MULT", "hardware_coupling_multiplier"),
    ("COOLER", "cooler_W_K"),
    ("COOLER_ALWAYS", None),                 # 1 where the cooler's fan runs with the engine off too
    ("HOSE_CAPACITY", "hose_capacity_J_K"),
    ("INTERNAL_AREA", "internal_area_m2"),
    ("PUMP_WETTED_AREA", "pump_wetted_area_m2"),
    ("GEAR_PITCH_D", "gear_pitch_diameter_m"),
    ("PASSAGE_D", "passage_diameter_m"),
    ("PASSAGE_LENGTH", "passage_length_m"),
    ("WETTED_SIDE_AREA", "wetted_side_area_m2"),
    ("WETTED_BOTTOM_AREA", "wetted_bottom_area_m2"),
    ("DRY_SIDE_AREA", "dry_side_area_m2"),
    ("DRY_FIN_LENGTH", "dry_fin_length_m"),
    ("JET_SECTION", "jet_section_m2"),
    ("ENGINE_OFF_G", "engine_off_coupling_W_K"),
    ("ENGINE_OFF_MULT", "engine_off_multiplier"),
    ("FLOOR_AREA", "floor_area_m2"),
    ("FLOOR_H", "floor_h_W_m2K"),
    ("FLOOR_MULT", "floor_multiplier"),
    ("DRY_SHELL_MULT", "dry_shell_multiplier"),
    ("HEAD_SPACE", "head_space_m"),
    ("HALF_WALL", "half_wall_m2K_W"),        # constant_parts from here on
    ("BOTTOM_RA_RATIO", "bottom_ra_per_side_ra"),
    ("DRY_AREA", "dry_area_m2"),
    ("WALL_KT", "wall_kt_W_K"),
    ("HOSE_AREA", "hose_area_m2"),
    ("HOSE_INNER_G", "hose_inner_W_K"),
    ("HOSE_LINK_G", "hose_link_W_K"),
    ("HOSE_OUTER_G", "hose_outer_W_K"),
    ("HOSE_LINER_SHARE", "hose_liner_share"),
)
(OIL_NODE_MASS, LOOP_OIL_MASS, SIDE_HEIGHT, TOP_AREA, TOP_LENGTH, BOTTOM_AREA, PLATE_LENGTH, FILL_HEIGHT,
 TANK_CROSS_SECTION, WALL_CAPACITY, WALL_EMISSIVITY, HARDWARE_CAPACITY, HOSE_LENGTH, HOSE_OUTER_D, HOSE_INNER_D,
 BODY_AREA, BODY_LENGTH, HARDWARE_EMISSIVITY, DISPLACEMENT, VOLUMETRIC_EFFICIENCY, AMBIENT, AIR_SPEED,
 CONVECTION_MULT, CAPACITY_MULT, OIL_SIDE_MULT, COUPLING_MULT, COOLER, COOLER_ALWAYS, HOSE_CAPACITY, INTERNAL_AREA,
 PUMP_WETTED_AREA, GEAR_PITCH_D, PASSAGE_D, PASSAGE_LENGTH, WETTED_SIDE_AREA, WETTED_BOTTOM_AREA, DRY_SIDE_AREA,
 DRY_FIN_LENGTH, JET_SECTION, ENGINE_OFF_G, ENGINE_OFF_MULT, FLOOR_AREA, FLOOR_H, FLOOR_MULT, DRY_SHELL_MULT,
 HEAD_SPACE, HALF_WALL, BOTTOM_RA_RATIO, DRY_AREA, WALL_KT, HOSE_AREA, HOSE_INNER_G, HOSE_LINK_G, HOSE_OUTER_G,
 HOSE_LINER_SHARE) = range(len(PARAMS))
OIL_FIRST = len(PARAMS)
