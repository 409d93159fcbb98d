"""Named parameter sets in one place: solid materials of tanks and loop hardware.

Values are room-temperature handbook values recalled from memory of Incropera, Fundamentals of
Heat and Mass Transfer, Tables A.1 (metals) and A.3 (polymers); treat them as +-10 %.
"""

MATERIALS = {
    # name: density kg/m^3, specific heat J/(kg K), thermal conductivity W/(m K)
    "steel": {"density_kg_m3": 7850.0, "specific_heat_J_kgK": 470.0, "conductivity_W_mK": 50.0},
    "stainless": {"density_kg_m3": 7900.0, "specific_heat_J_kgK": 477.0, "conductivity_W_mK": 15.0},
    "aluminium": {"density_kg_m3": 2700.0, "specific_heat_J_kgK": 900.0, "conductivity_W_mK": 200.0},
    "cast_iron": {"density_kg_m3": 7200.0, "specific_heat_J_kgK": 460.0, "conductivity_W_mK": 50.0},
    "polyethylene": {"density_kg_m3": 950.0, "specific_heat_J_kgK": 1900.0, "conductivity_W_mK": 0.4},
}

# The wall of a braided hydraulic hose (rubber tube and cover with one or two steel-wire braids),
# taken as one composite. Recalled from memory, not from a source; treat as +-30 %:
# - conductivity: the rubber's, 0.2-0.3 W/(m K) (the braid does not conduct across the wall);
# - density: two-wire-braid hose of 19 mm bore weighs about 0.8-1 kg/m over a wall of about
#   3.3e-4 m^2, i.e. 2,500-3,000 kg/m^3 of wall; one-wire hose is lighter;
# - specific heat: about 70 % rubber by mass at ~1,700 J/(kg K) and 30 % steel at 470 J/(kg K).
HOSE_WALL = {"density_kg_m3": 2500.0, "specific_heat_J_kgK": 1330.0, "conductivity_W_mK": 0.25}
