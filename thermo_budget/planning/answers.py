"""The answers for one scenario (`report()`), as the dict that `run --json` prints."""
from __future__ import annotations


import numpy as np

from .band_text import advice_sentence
from .report_text import COOLER_RATING_MODEL, beyond_range_caution, cautions, note_words
from ..physics.network import (HARDWARE, HOSE_RINGS, N_NODES, NODE_NAMES, OIL, WALL, heat_capacities_J_K, passive_paths_W,
                      passive_rejection_W)
from ..physics.headroom import headroom_at
from ..engine.long_session import integrate_session
from ..physics.oil_life import AGEING_REFERENCE_C, AGEING_RULE, ageing_equivalent_h
from ..output_files import check_finite  # noqa: F401 (re-exported: answers.check_finite)
from ..engine.outcome import first_crossing_s, limit_crossed_first, limiting_peak_K, peak_oil_K, pulls_completed_under
from .planning import MAX_PULLS, minimum_oil_volume_L, minimum_wait_s, required_cooler_W_K, runs_before_limit
from .session_runs import limits_K, periodic_state, session_trace, sustainability
from .ready_schedule import ready_schedule
from ..inputs.scenario import Scenario, limit_K
from .results import Report
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION, Resolution, pump_flow_m3_s, pump_pressure_Pa
from ..engine.solver import Trace, integrate
from ..units import ZERO_CELSIUS_K

TRACE_RESOLUTION = Resolution(pull_substeps=3, curve_substeps=12, max_substep_s=45.0)
# Cragoe's oil correlations hold to 400 degF (NBS Misc. Publ. 97); ASTM D341's simple form down to
# 2 cSt. Past the lower of the two the model's temperatures are not shown as answers.
CRAGOE_MAX_K = (400.0 - 32.0) / 1.8 + ZERO_CELSIUS_K
D341_MIN_CST = 2.0
BEYOND_RANGE_KEYS = ("peak_C", "end_C", "end_wall_C", "end_hardware_C", "peak_return_C")


def model_range_max_K(scenario: Scenario) -> float:
    """The highest bulk oil temperature at which the model's oil data hold, K."""
    return min(CRAGOE_MAX_K, scenario.oil.temperature_at_viscosity_K(D341_MIN_CST))


def simulate(scenario: Scenario, resolution: Resolution = TRACE_RESOLUTION) -> Trace:
    """Integrate the planned session of a scenario (one design)."""
    return integrate_session(build_rig(scenario), scenario, scenario.start_K, resolution=resolution)


def _celsius(T_K) -> float:
    return round(float(T_K) - ZERO_CELSIUS_K, 3)


def pump_operating_point(scenario: Scenario) -> dict:
    """Flow and pressure of the pull with the highest absorbed power."""
    pulls = [step for step in scenario.cycle if step.is_pull]
    peak_step = max(pulls, key=lambda step: step.peak_power_W())
    peak_power = peak_step.peak_power_W()
    if peak_step.curve is not None:
        speeds = np.linspace(peak_step.rpm_start, peak_step.rpm_end, 201)
        rpm = float(speeds[np.argmax(peak_step.curve.power_at(speeds))])
    else:
        rpm = peak_step.rpm
    flow = float(pump_flow_m3_s(scenario.displacement_m3, rpm, scenario.volumetric_efficiency))
    return {"peak_pull_power_W": round(peak_power, 3), "rpm": rpm,
            "flow_L_min": round(flow * 60000.0, 4), "pressure_bar": round(float(pump_pressure_Pa(peak_power, flow)) / 1e5, 3)}


def session_report(scenario: Scenario, trace: Trace | None = None) -> dict:
    """The thermal answers of the planned session (no sizing)."""
    trace = simulate(scenario) if trace is None else trace
    rig = build_rig(scenario)
    limit, reason = limit_K(scenario)
    return_limit = scenario.return_line_max_temperature_K
    crossing = float(first_crossing_s(trace, limit, return_limit)[0])
    energy_in = float(trace.energy_in_J[0])
    lost, stored = float(trace.energy_lost_J[0]), float(trace.energy_stored_J[0])
    capacities = heat_capacities_J_K(rig, np.full((1, N_NODES), scenario.start_K))[0]
    pump = pump_operating_point(scenario)
    return {
        "name": scenario.name,
        "units": scenario.units,
        "limit_C": _celsius(limit),
        "limit_reason": reason,
        "max_temperature_C": _celsius(scenario.max_temperature_K),
        "min_viscosity_temperature_C": _celsius(scenario.oil.temperature_at_viscosity_K(scenario.min_viscosity_cSt)),
        "ambient_C": _celsius(scenario.ambient_K),
        "ambient_pressure_Pa": round(scenario.ambient_pressure_Pa, 1),
        "relative_humidity": scenario.relative_humidity,
        "start_C": _celsius(trace.T_K[0, 0, OIL]),
        "peak_C": _celsius(peak_oil_K(trace)[0]),
        "end_C": _celsius(trace.T_K[-1, 0, OIL]),
        "end_wall_C": _celsius(trace.T_K[-1, 0, WALL]),
        "end_hardware_C": _celsius(trace.T_K[-1, 0, HARDWARE]),
        "end_hose_C": _celsius(trace.hose_K[-1, 0]),     # the rubber's mean (both rings, by capacity)
        "peak_return_C": _celsius(trace.return_K[:, 0].max()),
        "pulls_planned": int(trace.pull_end_s.shape[0]),
        "return_line_limit_C": None if return_limit is None else _celsius(return_limit),
        "pulls_under_limit": int(pulls_completed_under(trace, limit, return_limit)[0]),
        "session_stopped_by": limit_crossed_first(trace, limit, return_limit)[0],
        "time_to_limit_s": None if np.isnan(crossing) else round(crossing, 2),
        "session_duration_s": round(float(trace.time_s[-1, 0]), 2),
        "energy_in_J": energy_in,
        "energy_lost_J": lost,
        "energy_stored_J": stored,
        "energy_balance_rel_error": energy_balance_rel_error(energy_in, lost, stored),
        "heat_capacity_J_per_K": capacity_by_body(capacities),
        "passive_rejection_at_limit_W": round(float(passive_rejection_W(rig, limit)[0]), 2),
        **_passive_shares(rig, limit),
        "peak_pull_power_W": pump["peak_pull_power_W"],
        "pump": {"flow_L_min": pump["flow_L_min"], "pressure_bar": pump["pressure_bar"], "rpm": pump["rpm"]},
        "oil_ageing_equivalent_h": round(ageing_equivalent_h(trace.time_s[:, 0], trace.T_K[:, 0, OIL]), 4),
        "oil_ageing_reference_C": AGEING_REFERENCE_C,
        "oil_ageing_rule": AGEING_RULE,
        **_headroom_answers(scenario, limit, float(peak_oil_K(trace)[0])),
        "flash_point_C": _celsius(scenario.flash_point_K),
        "flash_point_given": scenario.flash_point_given,
        "oil": {"viscosity_40C_cSt": round(scenario.oil.nu40_cSt, 3), "viscosity_100C_cSt": round(scenario.oil.nu100_cSt, 3),
                "viscosity_index": round(scenario.oil.viscosity_index, 1)},
        "beyond_model_range": False,
    }


def _headroom_answers(scenario: Scenario, limit: float, peak: float) -> dict:
    at_limit = headroom_at(scenario, limit)
    at_peak = headroom_at(scenario, max(peak, scenario.start_K))
    return {"oil_level_at_limit_m": round(at_limit.oil_level_m, 5), "tank_height_m": round(at_limit.tank_height_m, 5),
            "headroom_at_limit_m": round(at_limit.headroom_m, 5),
            "headroom_at_limit_L": round(at_limit.headroom_m3 * 1000.0, 4),
            "headroom_at_peak_L": round(at_peak.headroom_m3 * 1000.0, 4)}


def runs_stopped_by(scenario: Scenario, runs: int | None) -> str | None:
    """Which limit ends the repeated cycle's count of `runs` pulls: "bulk" or "return_line" (None
    where no limit is reached). Without a return-line limit, always the bulk one."""
    if runs is None:
        return None
    if scenario.return_line_max_temperature_K is None:
        return "bulk"
    per_cycle = sum(step.is_pull for step in scenario.cycle)
    cycles = -(-(runs + 1) // per_cycle)
    trace = integrate(build_rig(scenario), list(scenario.cycle) * cycles, scenario.start_K, resolution=PLAN_RESOLUTION)
    limit, _ = limit_K(scenario)
    return limit_crossed_first(trace, limit, scenario.return_line_max_temperature_K)[0]


def _caution_beyond_range(scenario: Scenario, trace: Trace, result: dict) -> None:
    """Where the bulk oil passes the range of the oil data, the session's temperatures become None
    and a caution (first of the cautions, in place of those that quote the peak) says why, in place
    of numbers that would look real."""
    ceiling = model_range_max_K(scenario)
    if float(peak_oil_K(trace)[0]) <= ceiling and np.all(np.isfinite(trace.T_K)):
        return
    result.update({key: None for key in BEYOND_RANGE_KEYS}, beyond_model_range=True)
    hottest = max(float(peak_oil_K(trace)[0]), float(np.nanmax(trace.return_K[:, 0])))
    caution = beyond_range_caution(scenario, ceiling, limit_K(scenario)[0], hottest >= scenario.flash_point_K)
    others = [c for c in result.get("cautions", []) if "peaks at" not in c and "flash point" not in c]
    result["cautions"] = [caution] + others


def energy_balance_rel_error(energy_in_J: float, energy_lost_J: float, energy_stored_J: float) -> float:
    """(heat in - heat lost - heat stored) relative to the largest of the three in magnitude: the
    heat in for a session that starts at ambient, the heat lost or stored for one that starts warm,
    so that it stays a round-off figure however little heat goes in (0 when nothing moves)."""
    scale = max(abs(energy_in_J), abs(energy_lost_J), abs(energy_stored_J))
    return (energy_in_J - energy_lost_J - energy_stored_J) / scale if scale > 0 else 0.0


def planning_answers(scenario: Scenario) -> dict:
    """The planning keys of `run --json`."""
    notes: list[tuple[str, dict]] = []   # (code, values), worded by report_text.note_words
    rig = build_rig(scenario)
    limit, reason = limit_K(scenario)
    session = session_trace(scenario, rig, 1)
    sustainable, steady_peak = sustainability(scenario, rig, 1)
    sustainable, steady_peak = bool(sustainable[0]), float(steady_peak[0])
    if sustainable and scenario.return_line_max_temperature_K is not None:
        # the periodic peak above is in the limits' terms; the bulk oil's own peak over that cycle:
        X, _, _ = periodic_state(scenario, rig, 1)
        steady_peak = float(peak_oil_K(integrate(rig, list(scenario.cycle), X, resolution=PLAN_RESOLUTION))[0])
    runs = runs_before_limit(scenario, rig, 1, np.array([sustainable]), session=session)[0]
    if sustainable:
        notes.append(("sustainable", {"steady_peak_C": steady_peak - ZERO_CELSIUS_K, "limit_C": limit - ZERO_CELSIUS_K}))
    elif np.isnan(runs):
        notes.append(("uncounted", {"max_pulls": MAX_PULLS}))
    # the planned session without a cooler: the session already run, where the scenario has none
    uncooled = session_trace(scenario, build_rig(scenario, cooler_W_K=0.0), 1) if scenario.cooler_W_K > 0 else session
    cooler_needed = bool(limiting_peak_K(uncooled, *limits_K(scenario))[0] > limit)
    cooler = required_cooler_W_K(scenario, notes, sustained=False) if cooler_needed else 0.0
    if not cooler_needed:
        notes.append(("no_cooler_needed", {}))
    cooler_sustained = required_cooler_W_K(scenario, notes, sustained=True)
    if cooler_sustained == 0.0:
        notes.append(("no_cooler_needed_all_day", {}))
    if scenario.cooler_W_K > 0:
        notes.append(("cooler_fitted", {"cooler_W_K": scenario.cooler_W_K}))
    return {
        "runs_before_limit": None if sustainable or np.isnan(runs) else int(runs),
        "sustainable": sustainable,
        "steady_peak_C": round(steady_peak - ZERO_CELSIUS_K, 3) if sustainable else None,
        "min_wait_s": minimum_wait_s(scenario, notes),
        "cooler_needed": cooler_needed,
        "cooler_required_W_per_K": cooler,
        "cooler_required_sustained_W_per_K": cooler_sustained,
        "cooler_rating_model": COOLER_RATING_MODEL,
        "min_oil_volume_L": minimum_oil_volume_L(scenario, notes),
        "schedule": ready_schedule(scenario, notes, session),
        "notes": [note_words(code, values) for code, values in notes],
    }


def report(scenario: Scenario, trace: Trace | None = None) -> Report:
    """Everything `run --json` prints (`Report.to_json()`): the session's thermal answers, the planning answers and the band.
    trace : optional simulate(scenario) already computed."""
    trace = simulate(scenario) if trace is None else trace
    result = session_report(scenario, trace)
    result.update(planning_answers(scenario))
    result["runs_stopped_by"] = runs_stopped_by(scenario, result["runs_before_limit"])
    if result["min_oil_volume_L"] is not None:
        smallest = headroom_at(scenario, limit_K(scenario)[0], result["min_oil_volume_L"] / 1000.0)
        result["min_oil_volume_headroom_L"] = round(smallest.headroom_m3 * 1000.0, 4)
    else:
        result["min_oil_volume_headroom_L"] = None
    result["cautions"] = cautions(scenario, result)
    from .bands import band_report
    shared: dict = {}       # what the verdict reuses of the band's work
    result.update(band_report(scenario, result, shared_out=shared))
    ranking = result["band_ranking"]
    result["band_advice"] = advice_sentence(ranking, ranking[0]["of"]) if ranking else ""
    _caution_beyond_range(scenario, trace, result)
    from .verdict import verdict
    from .fixes import band_sizes_from_fixes
    judged = verdict(scenario, result, band_shared=shared)
    result["verdict"] = judged.to_json()
    _plan_sizes_from_fixes(result, band_sizes_from_fixes(scenario, judged.fixes))
    check_finite(result)
    return Report.from_json(result)


def _plan_sizes_from_fixes(result: dict, sizes: dict):
    """One figure per question: where a verified fix answers a band size at the confidence, the band
    shows the fix's value, with a note naming the sizes that moved. Not where the band is off: the
    plan is then the point answers, and the fixes were run on the point rig alone."""
    if not (result.get("uncertainty") or {}).get("samples"):
        return
    plan = result.get("plan_at_confidence") or {}
    moved = {key: value for key, value in sizes.items() if plan.get(key) is not None and plan[key] != value}
    if not moved:
        return
    plan.update(moved)
    result["notes"].append(note_words("sizes_from_fixes", {"confidence": result["confidence"], "keys": list(moved),
                                                        "sizing_samples": result["uncertainty"].get("sizing_samples")}))


def _passive_shares(rig, limit_K: float) -> dict:
    """The passive loss at the limit by path, as shares of the whole (passive_shares_at_limit), and the
    floor's share of the tank's own loss (walls, floor and head space; floor_share_of_tank_loss,
    0 for a tank that does not stand on the floor)."""
    paths = passive_paths_W(rig, limit_K)
    total = sum(paths.values())
    tank = paths["tank_to_air"] + paths["floor"] + paths["head_space"]
    return {"passive_shares_at_limit": {k: round(v / total, 4) if total > 0 else 0.0 for k, v in paths.items()},
            "floor_share_of_tank_loss": round(paths["floor"] / tank, 4) if tank > 0 else 0.0}


def capacity_by_body(capacities) -> dict:
    """Node capacities (N_NODES,) as the report's heat_capacity_J_per_K, J/K, one per body: oil, wall,
    hardware, hose (the rubber and braid, its two rings summed, as the one hose node was)."""
    out = {name: round(float(c), 2) for i, (name, c) in enumerate(zip(NODE_NAMES, capacities)) if i not in HOSE_RINGS}
    out["hose"] = round(float(sum(capacities[i] for i in HOSE_RINGS)), 2)
    return out


def trace_rows(trace: Trace, design: int = 0):
    """Rows of the trace CSV: time_s, oil_C, return_C, wall_C, hardware_C, power_W, hose_C.
    power_W is the mean absorbed power over the interval that ends at the row; hose_C (the hose
    rubber's capacity-weighted mean over its two rings, Trace.hose_K) comes last so that readers of
    the older six columns keep working."""
    T = trace.T_K[:, design, :] - ZERO_CELSIUS_K
    return np.column_stack([trace.time_s[:, design], T[:, OIL], trace.return_K[:, design] - ZERO_CELSIUS_K,
                            T[:, WALL], T[:, HARDWARE], trace.power_W[:, design], trace.hose_K[:, design] - ZERO_CELSIUS_K])


TRACE_COLUMNS = ("time_s", "oil_C", "return_C", "wall_C", "hardware_C", "power_W", "hose_C")


def trace_csv(trace: Trace) -> str:
    lines = [",".join(TRACE_COLUMNS)]
    lines += [",".join(f"{v:.6g}" if i else f"{v:.3f}" for i, v in enumerate(row)) for row in trace_rows(trace)]
    return "\n".join(lines) + "\n"
