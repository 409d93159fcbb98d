"""The default rules for the loop's metal bodies where a scenario does not give them: their outside
area, their wetted inside and the pump's gears, from the metal's mass and the pump's displacement
(engineering judgement, stated so it can be checked)."""
from __future__ import annotations

import numpy as np

# The default rules for the loop's metal bodies (engineering judgement, stated so it can be checked):
# - They are three compact castings (pump, valve, manifold with fittings) with ribs, flanges, ports
#   and bolt heads: their outside area is taken as 3 times that of one cube of the whole metal mass
#   (a review of real pumps, valves and manifolds put it at 2-4 times; the middle of that band).
BODY_AREA_PER_CUBE_AREA = 3.0
# - Inside, the oil wets the pump's working chamber and the passages through the bodies. The pump
#   is taken as an external gear pump, the usual pump of small stands, with two gears of
#   GEAR_TEETH teeth and a face width of half the pitch diameter; its displacement is then about
#   V_d = 2 pi m^2 z b = pi d_p^3 / z (the usual approximation for external gear pumps, m the module,
#   b the face width). A 14 cm^3/rev pump so has gears of about 38 mm pitch diameter and 19 mm
#   width, and wets about 0.02 m^2 (tooth flanks and faces of both gears, the housing bores, the
#   ports), i.e. about 35 V_d^(2/3); geometrically similar pumps scale with V_d^(2/3).
GEAR_TEETH = 12
PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3 = 35.0
# - The passages through the valve, the manifold and the fittings have the hose's bore; the oil
#   crosses the bodies four times (into and out of the pump, into and out of the valve), each time
#   one side of the cube of the bodies' metal, s = (m / rho)^(1/3).
PASSAGES_PER_LOOP = 4


def body_cube_side_m(mass_kg: float, density_kg_m3: float) -> float:
    """Side of one cube holding the bodies' metal, m."""
    return (mass_kg / density_kg_m3) ** (1.0 / 3.0)


def default_body_area_m2(mass_kg: float, density_kg_m3: float) -> float:
    """The bodies' outside area when not given, m^2: BODY_AREA_PER_CUBE_AREA cubes' worth."""
    return BODY_AREA_PER_CUBE_AREA * 6.0 * body_cube_side_m(mass_kg, density_kg_m3) ** 2


def gear_pitch_diameter_m(displacement_m3):
    """Pitch diameter of the gears of an external gear pump of this displacement, m:
    d_p = (z V_d / pi)^(1/3) (see GEAR_TEETH).

    >>> round(gear_pitch_diameter_m(14e-6) * 1000, 1)
    37.7
    """
    return (GEAR_TEETH * displacement_m3 / np.pi) ** (1.0 / 3.0)


def pump_wetted_area_m2(displacement_m3):
    """Wetted area of a gear pump's working chamber, m^2 (see PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3)."""
    return PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3 * displacement_m3 ** (2.0 / 3.0)


def default_internal_area_m2(mass_kg: float, density_kg_m3: float, displacement_m3: float,
                             bore_m: float) -> float:
    """The bodies' wetted inside when not given, m^2: the pump's working chamber
    (PUMP_WETTED_AREA_PER_DISPLACEMENT_2_3 V_d^(2/3)) plus PASSAGES_PER_LOOP passages of the hose's
    bore, each one cube side long. 12 kg of steel with a 16 cm^3 pump and 17.8 mm bore: 0.048 m^2.

    >>> round(default_internal_area_m2(12.0, 7850.0, 16e-6, 0.0178), 4)
    0.048
    """
    return pump_wetted_area_m2(displacement_m3) + PASSAGES_PER_LOOP * np.pi * bore_m * body_cube_side_m(mass_kg, density_kg_m3)
