"""Head room for the oil's expansion: how high the oil stands in the tank when hot, and what is left.

The oil volume is given at 15 degC; it grows as V(T) = V15 (1 + beta (T - 15 degC)) with the fluid's
expansion coefficient beta (1/K). The tank is a prism (a box, or a vertical cylinder), so the level
is the volume over the footprint. The tank's inside is taken as its outside dimensions, as the
scenario's own fit check does (a thin-wall approximation).
"""
from __future__ import annotations

from dataclasses import dataclass

REFERENCE_K = 288.15            # 15 degC, the temperature the oil volume is measured at


def hot_oil_volume_m3(volume_15C_m3, expansion_per_K: float, T_K):
    """Oil volume at T_K (m^3) of a volume measured at 15 degC."""
    return volume_15C_m3 * (1.0 + expansion_per_K * (T_K - REFERENCE_K))


@dataclass(frozen=True)
class Headroom:
    """The oil in its tank at one temperature. Lengths m, volumes m^3."""
    temperature_K: float
    oil_volume_m3: float        # expanded
    oil_level_m: float
    tank_height_m: float
    headroom_m: float           # tank height less the oil level
    headroom_m3: float

    @property
    def fraction(self) -> float:
        """Head room as a fraction of the tank's volume."""
        return self.headroom_m / self.tank_height_m


def headroom_at(scenario, T_K: float, oil_volume_15C_m3: float | None = None) -> Headroom:
    """The oil level and head room of the scenario's tank at T_K. With oil_volume_15C_m3 the tank
    is scaled geometrically to that volume, as the minimum-oil-volume search scales it."""
    res = scenario.reservoir
    volume = res.oil_volume_m3 if oil_volume_15C_m3 is None else oil_volume_15C_m3
    scale = (volume / res.oil_volume_m3) ** (1.0 / 3.0)
    footprint, height = res.footprint_m2 * scale**2, res.height_m * scale
    hot = hot_oil_volume_m3(volume, scenario.oil.expansion_per_K, T_K)
    level = hot / footprint
    return Headroom(temperature_K=T_K, oil_volume_m3=hot, oil_level_m=level, tank_height_m=height,
                    headroom_m=height - level, headroom_m3=(height - level) * footprint)
