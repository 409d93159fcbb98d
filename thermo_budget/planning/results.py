"""The answers of report() as small frozen result objects, each with named fields (units in the
names, as in `run --json`) and a `to_json()` that writes the keys `run --json` prints, in their order.

The page and the command line read attributes (`report.peak_C`, `report.pump.flow_L_min`,
`report.band.plan_at_confidence`); the JSON view is for the file and for readers outside Python.
The words a report carries (its notes, cautions and advice) are made in the text layer
(band_text.py, report_text.py) and travel here as finished strings.
"""
from __future__ import annotations

from dataclasses import dataclass, fields

from .verdict import Verdict


def _plain(value):
    """A field's value in the JSON view: result objects by their to_json(), tuples as lists."""
    if hasattr(value, "to_json"):
        return value.to_json()
    if isinstance(value, tuple):
        return [_plain(v) for v in value]
    return value


class _Keys:
    """to_json() by field order; a dataclass of fields named as its JSON keys."""

    def to_json(self) -> dict:
        return {f.name: _plain(getattr(self, f.name)) for f in fields(self)}

    @classmethod
    def from_json(cls, keys: dict):
        """The object from its JSON keys (every field; nested objects are built by the caller)."""
        return cls(**{f.name: keys[f.name] for f in fields(cls)})


@dataclass(frozen=True)
class Pump(_Keys):
    """The pump at the pull with the highest absorbed power."""
    flow_L_min: float
    pressure_bar: float
    rpm: float


@dataclass(frozen=True)
class OilGrade(_Keys):
    """The oil's viscosity grade as the model reads it."""
    viscosity_40C_cSt: float
    viscosity_100C_cSt: float
    viscosity_index: float


@dataclass(frozen=True)
class HeatCapacities:
    """Heat capacity of each body at the start temperature, J/K (the hose: both rings of its wall; the
    loop's oil, standing in the hoses and bodies, written "loop oil" in the JSON as the node is named)."""
    oil: float
    wall: float
    hardware: float
    loop_oil: float
    hose: float

    def to_json(self) -> dict:
        return {"oil": self.oil, "wall": self.wall, "hardware": self.hardware, "loop oil": self.loop_oil,
                "hose": self.hose}

    @classmethod
    def from_json(cls, keys: dict) -> "HeatCapacities":
        return cls(oil=keys["oil"], wall=keys["wall"], hardware=keys["hardware"], loop_oil=keys["loop oil"],
                   hose=keys["hose"])


@dataclass(frozen=True)
class SchedulePull(_Keys):
    """One pull of the ready-to-pull schedule: when it starts, its temperatures, the wait before it."""
    index: int
    start_s: float
    start_C: float
    peak_C: float
    peak_return_C: float
    wait_before_s: float
    planned_wait_s: float
    extra_wait_s: float


@dataclass(frozen=True)
class Band:
    """The uncertainty band of the answers (bands.py): P10/P50/P90 of each answer (`bands`), the plan
    at the chosen confidence, what moves the answers most (the ranking, and its advice in words),
    the P10-P90 envelope of the bulk oil over the session, and the uncertainty model used."""
    bands: dict
    confidence: float
    plan_at_confidence: dict
    ranking: tuple = ()
    advice: str = ""
    envelope: dict | None = None
    uncertainty: dict | None = None
    sustainable_share: float | None = None    # of the samples, where the point answer is sustainable

    def to_json(self) -> dict:
        return {"bands": self.bands, "confidence": self.confidence, "plan_at_confidence": self.plan_at_confidence,
                "sustainable_share": self.sustainable_share, "band_ranking": list(self.ranking), "band_advice": self.advice, "band_envelope": self.envelope,
                "uncertainty": self.uncertainty}

    @classmethod
    def from_json(cls, keys: dict) -> "Band":
        return cls(bands=keys["bands"], confidence=keys["confidence"], plan_at_confidence=keys["plan_at_confidence"],
                   ranking=tuple(keys["band_ranking"]), advice=keys["band_advice"], envelope=keys["band_envelope"],
                   uncertainty=keys["uncertainty"], sustainable_share=keys.get("sustainable_share"))


@dataclass(frozen=True)
class Report(_Keys):
    """Everything `run --json` prints for one scenario. Temperatures in degC (None past the oil
    data's range, see beyond_model_range), times in s, energies in J, volumes in L, lengths in m."""
    # the scenario and its limits
    name: str
    units: str                                # "SI" or "US", the scenario file's system
    limit_C: float                            # the fluid limit: the lower of the two below
    limit_reason: str                         # "max_temperature" or "min_viscosity"
    max_temperature_C: float
    min_viscosity_temperature_C: float
    ambient_C: float
    ambient_pressure_Pa: float                # the stand's air: standard atmosphere at its altitude, or given
    relative_humidity: float                  # 0 to 1
    # the planned session
    start_C: float
    peak_C: float | None
    end_C: float | None
    end_wall_C: float | None
    end_hardware_C: float | None
    end_hose_C: float                         # the rubber's capacity-weighted mean
    peak_return_C: float | None
    pulls_planned: int
    return_line_limit_C: float | None
    pulls_under_limit: int
    session_stopped_by: str | None            # "bulk", "return_line" or None
    time_to_limit_s: float | None
    session_duration_s: float
    energy_in_J: float
    energy_lost_J: float
    energy_stored_J: float
    energy_balance_rel_error: float
    heat_capacity_J_per_K: HeatCapacities
    passive_rejection_at_limit_W: float
    passive_shares_at_limit: dict             # path -> share of the passive loss at the limit
    floor_share_of_tank_loss: float           # the floor's share of the tank's own loss (0 off the floor)
    peak_pull_power_W: float
    pump: Pump
    oil_ageing_equivalent_h: float
    oil_ageing_reference_C: float
    oil_ageing_rule: str
    oil_level_at_limit_m: float
    tank_height_m: float
    headroom_at_limit_m: float
    headroom_at_limit_L: float
    headroom_at_peak_L: float
    flash_point_C: float
    flash_point_given: bool
    oil: OilGrade
    beyond_model_range: bool
    # the planning answers
    runs_before_limit: int | None
    sustainable: bool
    steady_peak_C: float | None
    min_wait_s: float | None
    cooler_needed: bool
    cooler_required_W_per_K: float | None
    cooler_required_sustained_W_per_K: float | None
    cooler_rating_model: str
    min_oil_volume_L: float | None
    schedule: tuple[SchedulePull, ...] | None
    notes: tuple[str, ...]
    runs_stopped_by: str | None
    min_oil_volume_headroom_L: float | None
    cautions: tuple[str, ...]
    # the uncertainty band
    band: Band
    # the verdict (verdict.py) where one is given; None writes no key
    verdict: Verdict | None = None

    def to_json(self) -> dict:
        out = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name == "band":
                out.update(value.to_json())
            elif f.name == "verdict":
                if value is not None:
                    out["verdict"] = _plain(value)
            else:
                out[f.name] = _plain(value)
        return out

    @classmethod
    def from_json(cls, keys: dict) -> "Report":
        """The report from the keys report() assembles (see answers.report)."""
        special = {"heat_capacity_J_per_K": HeatCapacities.from_json(keys["heat_capacity_J_per_K"]),
                   "pump": Pump.from_json(keys["pump"]), "oil": OilGrade.from_json(keys["oil"]),
                   "schedule": None if keys["schedule"] is None
                   else tuple(SchedulePull.from_json(row) for row in keys["schedule"]),
                   "notes": tuple(keys["notes"]), "cautions": tuple(keys["cautions"]),
                   "band": Band.from_json(keys),
                   "verdict": None if keys.get("verdict") is None else Verdict.from_json(keys["verdict"])}
        return cls(**{f.name: special[f.name] if f.name in special else keys[f.name] for f in fields(cls)})
