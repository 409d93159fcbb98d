"""The verdict's fixes: each single change (the waits, the oil volume with its tank, the cooler, the
number of pulls, the length of the pulls) that finishes the planned day at the confidence. Each is
found per sample (by the band's sizing answers where they answer it, else by a bracketed secant on
the session's peak, the band's search), taken at the confidence, and then re-run on every sample
with that change alone: a fix is listed only if that re-run finishes the day at the confidence."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .bands import N_SIZING_SAMPLES, SECANT_ROUNDS, _Search, order_statistic
from ..engine.long_session import COMPARISON_SLACK_K
from .planning import LINEAR, LOG, RECIPROCAL, time_constant_s
from .session_runs import SEARCH_MARGIN_K, PeriodicStarts, day_peak_bound_K, limits_K, session_peak_K
from .verdict_day import (Change, DayOutcome, Samples, changed_designs, count_at_confidence, day_outcome, first_samples,
                          share_fits)
from ..inputs.rig_build import build_rig
from ..physics.network import passive_rejection_W
from ..inputs.scenario import limit_K
from ..inputs.uncertainty import sample_rig
from ..units import round_up

FIX_KINDS = ("wait", "oil_volume", "cooler", "fewer_pulls", "shorter_pulls")
UNIT_KEYS = {"wait": "value_s", "oil_volume": "value_L", "cooler": "value_W_per_K", "shorter_pulls": "value_s"}
VERIFY_ROUNDS = 5          # re-runs of a fix that fell short of the confidence, each one step larger
STEP_UP = 1.08             # the step: x 1.08 on the change (wait, oil, cooler), x 0.92 on the pull time
LONGEST_PULL_CUT = 0.98    # shorter pulls keep at least 2 % of their length
# The day as planned (the band's session) and a fix's re-run agree to about 1e-3 K (the same resolution;
# a long day is integrated in chunks there): a sample that finishes as planned with this much more to
# spare than a fix needs is not re-run for a monotone fix.
RERUN_AGREEMENT_K = 0.05


@dataclass(frozen=True)
class Fix:
    """One change that alone finishes the planned day at `confidence`.

    kind : one of FIX_KINDS. value : the new uniform wait after every pull (s), the oil volume at
    15 degC (L), the cooler's total rating (W/K of ETD, in place of the rig's own), the pulls of
    the day (a count), or the new length of the longest pull (s; every pull cut by the same
    fraction). tank_L : for oil_volume, the tank of the rig's shape scaled to hold it (L).
    """
    kind: str
    value: float
    confidence: float
    tank_L: float | None = None

    def to_json(self) -> dict:
        out = {"kind": self.kind, "value": self.value}
        if self.kind in UNIT_KEYS:
            out[UNIT_KEYS[self.kind]] = self.value
        if self.tank_L is not None:
            out["tank_L"] = self.tank_L
        out["confidence"] = self.confidence
        return out

    @classmethod
    def from_json(cls, data: dict) -> "Fix":
        return cls(kind=data["kind"], value=data["value"], confidence=data["confidence"], tank_L=data.get("tank_L"))


def find_fixes(scenario, point: dict, samples: Samples, base: DayOutcome, confidence: float,
               session, n_sizing: int = N_SIZING_SAMPLES, band_shared: dict | None = None) -> tuple:
    """Every single change that finishes the day at the confidence, re-run before it is listed,
    smallest change first (fix_change). session : the samples' planned day (a Trace), which `base`
    was read from."""
    searched = _searched_values(scenario, point, first_samples(samples, n_sizing), base, confidence, band_shared)
    fixes = _verified(scenario, samples, searched, confidence, base)
    fewer = _fewer_pulls(scenario, base, confidence, session)
    if fewer is not None:
        fixes.append(fewer)
    fixes.sort(key=lambda fix: fix_change(scenario, fix))
    return tuple(fixes)


def _pull_seconds(scenario) -> np.ndarray:
    return np.array([step.duration_s for step in scenario.steps if step.is_pull])


def fix_change(scenario, fix: Fix) -> float:
    """How much a fix changes, as a fraction of what it changes: the day's length added (waits), the
    oil added, the rig's heat loss at the limit added (a cooler's W/K over the rig's passive W/K at
    the limit, no cooler), the pulls dropped, the pull time cut."""
    steps = list(scenario.steps)
    if fix.kind == "wait":
        day = sum(step.duration_s for step in steps)
        added = sum(max(fix.value - step.duration_s, 0.0) for step in steps if not step.is_pull)
        return added / day
    if fix.kind == "oil_volume":
        return fix.value / scenario.oil_volume_L - 1.0
    if fix.kind == "cooler":
        limit, _ = limit_K(scenario)
        passive = float(passive_rejection_W(build_rig(scenario, cooler_W_K=0.0), limit)[0]) / (limit - scenario.ambient_K)
        return (fix.value - scenario.cooler_W_K) / max(passive, 1e-9)
    if fix.kind == "fewer_pulls":
        return 1.0 - fix.value / _pull_seconds(scenario).size
    return 1.0 - fix.value / _pull_seconds(scenario).max()


# The band's per-sample sizing answers that are a fix's per-sample value, and their unit in the fix's SI.
# The band changes one thing at a time: the cooler in place of the rig's own (the fix's change), and
# the wait or the oil on a rig with no cooler (the fix's change only where the scenario has none).
FROM_BAND = {"wait": ("min_wait_s", 1.0), "oil_volume": ("min_oil_volume_L", 1e-3),
             "cooler": ("cooler_required_W_per_K", 1.0)}


def _from_band(scenario, samples: Samples, band_shared: dict | None, confidence: float) -> dict:
    """Per fix kind that the band's sizing answers (band_shared, per sample of the same samples, at the
    same target as the fixes' search) answer: the value at the confidence, the sample's own setting
    where it already finishes (the band's answer lies under it there). Only the cooler where the
    scenario has a cooler of its own; nothing where the samples differ."""
    if not band_shared:
        return {}
    planned = {"wait": max([step.duration_s for step in scenario.cycle if not step.is_pull], default=np.nan),
               "oil_volume": scenario.reservoir.oil_volume_m3, "cooler": scenario.cooler_W_K}
    found = {}
    for kind, (key, to_si) in FROM_BAND.items():
        per_sample = band_shared.get(key)
        if (per_sample is None or per_sample.size != samples.n or np.isnan(planned[kind])
                or (kind != "cooler" and scenario.cooler_W_K > 0)):
            continue
        value = order_statistic(np.maximum(per_sample * to_si, planned[kind]), confidence)
        found[kind] = value if np.isfinite(value) else None
    return found


def band_sizes_from_fixes(scenario, fixes) -> dict:
    """The band's sizing answers at the confidence (bands.SIZING_KEYS, in the band's units) that the
    verdict's verified fixes answer, the same question (FROM_BAND: the cooler always, the wait and the
    oil only on a rig with no cooler of its own): {key: the fix's value}. The band takes its sizes from
    its first N_SIZING_SAMPLES samples; a fix is re-run on every sample of the whole day, and stepped
    up where it fell short, so where both exist the fix's is the figure to plan with."""
    sizes = {}
    for fix in fixes:
        if fix.kind in FROM_BAND and (fix.kind == "cooler" or scenario.cooler_W_K <= 0):
            sizes[FROM_BAND[fix.kind][0]] = fix.value     # s, W/K and L: the band's own units
    return sizes


def _searched_values(scenario, point: dict, samples: Samples, base: DayOutcome, confidence: float,
                     band_shared: dict | None = None) -> dict:
    """Per fix kind (wait, oil_volume, cooler, shorter_pulls): the value at the confidence of the
    per-sample smallest change that keeps the day's peak SEARCH_MARGIN_K under the limit (SI; the pull
    kind as the fraction of the planned length kept). Samples that already finish need no change.
    A kind that the band's sizing answers (_from_band) is taken from it, not searched again."""
    banded = _from_band(scenario, samples, band_shared, confidence)
    limit, _ = limit_K(scenario)
    target = limit - SEARCH_MARGIN_K
    n = samples.n
    failing = np.flatnonzero(base.limiting_peak_K[:n] > target)
    waits = [step.duration_s for step in scenario.cycle if not step.is_pull]
    tau = time_constant_s(scenario)
    peak_power = max(step.peak_power_W() for step in scenario.cycle)
    largest_cooler = 20.0 * peak_power / (limit - scenario.ambient_K)
    V0 = scenario.reservoir.oil_volume_m3
    share_done = float(np.mean(base.pulls[:n])) / max(_pull_seconds(scenario).size, 1)
    # (kind, as planned, first guess, highest, search coordinate); the pull kind searches the cut 1 - fraction
    asked = []
    if waits:
        guess = point.get("min_wait_s") or 2.0 * max(waits)
        asked.append(("wait", max(waits), max(guess, 1.2 * max(waits)), 8.0 * tau if np.isfinite(tau) else 1e6,
                      RECIPROCAL))
    guess = point.get("min_oil_volume_L")
    asked.append(("oil_volume", V0, 2.0 * V0 if guess is None else max(guess / 1000.0, 1.1 * V0), 200.0 * V0, LOG))
    if largest_cooler > scenario.cooler_W_K:
        guess = point.get("cooler_required_W_per_K") or 0.01 * largest_cooler
        asked.append(("cooler", scenario.cooler_W_K, max(guess, scenario.cooler_W_K + 0.01 * largest_cooler),
                      largest_cooler, LINEAR))
    asked.append(("shorter_pulls", 0.0, min(max(1.0 - share_done, 0.05), 0.9), LONGEST_PULL_CUT, LINEAR))
    asked = [a for a in asked if a[0] not in banded]
    found = {kind: value for kind, value in banded.items() if value is not None}
    thresholds = _per_sample_thresholds(scenario, samples, failing, asked, target, base.limiting_peak_K)
    for (kind, planned, *_), values in zip(asked, thresholds):
        per_sample = np.full(n, planned, dtype=float)
        per_sample[failing] = values
        value = order_statistic(per_sample, confidence)
        if np.isfinite(value):
            found[kind] = 1.0 - value if kind == "shorter_pulls" else value
    return found


def _per_sample_thresholds(scenario, samples: Samples, failing, asked: list, target: float,
                           base_peak_K: np.ndarray) -> list:
    """For each asked kind, per failing sample, the smallest value that keeps the day's peak at or under
    target (inf where none in range suffices): one integration per round over kinds x samples. The day
    as planned (base_peak_K, per sample) is the first point known to fail."""
    if not failing.size:
        return [np.zeros(0) for _ in asked]
    kinds = np.repeat(np.arange(len(asked)), failing.size)
    sample = np.tile(failing, len(asked))
    names = np.array([asked[k][0] for k in kinds])
    lows = np.array([a[1] for a in asked])[kinds]
    highs = np.array([a[3] for a in asked])[kinds]
    m = kinds.size

    starts = PeriodicStarts(m)

    def margins(x, items):
        value = np.where(names[items] == "shorter_pulls", 1.0 - x, x)
        rig, cycle_s = changed_designs(scenario, samples, sample[items], Change.of(names[items], value))
        return target - session_peak_K(scenario, rig, items.size, cycle_s, threshold_K=target, starts=(starts, items))

    state = _Search(m, lows, highs, np.array([asked[k][4] for k in kinds]))
    state.record(lows, target - base_peak_K[sample], np.arange(m))
    guess = np.array([a[2] for a in asked])[kinds]
    items = np.concatenate([np.arange(m), np.arange(m)])
    x = np.concatenate([np.maximum(0.95 * guess, lows), np.minimum(1.1 * guess, highs)])
    state.record(x, margins(x, items), items)
    for _ in range(SECANT_ROUNDS + 2):
        todo = np.flatnonzero(~state.done())
        if todo.size == 0:
            break
        x = state.next_guess(todo)
        stuck = np.isnan(x)
        state.stuck[todo[stuck]] = True
        todo, x = todo[~stuck], x[~stuck]
        if todo.size:
            state.record(x, margins(x, todo), todo)
    answer = state.answer()
    return [answer[kinds == i] for i in range(len(asked))]


def _peak_bounds(scenario, samples: Samples, sample_index, change: Change, starts=None) -> np.ndarray:
    """Per design, the day with its change as far as finishing it needs (session_runs.day_peak_bound_K:
    an upper bound of the peak where it finishes SEARCH_MARGIN_K under the limit, else a peak above
    that; a long day is followed only until that is decided). starts : optional (PeriodicStarts, the
    items that the designs are)."""
    rig, cycle_s = changed_designs(scenario, samples, sample_index, change)
    return day_peak_bound_K(scenario, rig, len(sample_index), cycle_s=cycle_s, starts=starts)


def _with_margin(scenario, outcome: DayOutcome) -> np.ndarray:
    """Per design, the day finished with SEARCH_MARGIN_K to spare: a fix is held to it, so that a re-run
    at another resolution (agreeing to about 0.03 K) still finishes the day."""
    return outcome.limiting_peak_K <= limit_K(scenario)[0] - SEARCH_MARGIN_K


def _monotone_kinds(scenario) -> set:
    """The fix kinds whose step up can only cool a day that starts no colder than its air: more
    cooler, more oil (in a larger tank of the same shape), longer waits where no wait heats the oil
    (an idling engine's parasitic load can make a longer wait warmer), and shorter pulls where no
    wait heats the oil or every pull heats it through its whole length (_pulls_heat_the_oil: a pull
    weaker than the rig's losses, between heating waits, would leave more of the day to the waits).
    On such a day the oil never falls below the air (the network is cooperative, its sources not
    negative), so every path to the air only takes heat out, and more of it cools. A day that starts
    colder than its air is warmed by a cooler or a longer wait while it is: see _spare_needed_K."""
    kinds = {"cooler", "oil_volume"}
    if all(step.power_W <= 0.0 for step in scenario.cycle if not step.is_pull):
        kinds |= {"wait", "shorter_pulls"}
    elif _pulls_heat_the_oil(scenario):
        kinds.add("shorter_pulls")
    return kinds


def _pulls_heat_the_oil(scenario) -> bool:
    """Whether the weakest moment of every pull absorbs at least twice what the rig loses with every
    node at the limit (passive paths and its cooler): then the oil gains heat all through a pull
    below the limit, whatever the band's samples do to the power and the losses."""
    limit, _ = limit_K(scenario)
    loss = float(passive_rejection_W(build_rig(scenario, cooler_W_K=0.0), limit)[0]) \
        + scenario.cooler_W_K * (limit - scenario.ambient_K)
    weakest = min(float(np.min(step.power_at(np.linspace(0.0, 1.0, 65)))) for step in scenario.cycle if step.is_pull)
    return weakest >= 2.0 * loss


def _spare_needed_K(scenario, samples: Samples) -> np.ndarray:
    """Per sample, how far under the searches' target (K) a day must have finished for a monotone
    fix's step up to be sure to finish it too: 0 where the day starts at or above the sample's air
    (the ambient is one of the band's uncertain inputs). Where it starts colder, by d = air - start:
    the day from the air itself is no cooler (starts ordered stay ordered on a cooperative network),
    a step up cools that day (_monotone_kinds), and two days whose starts differ by d everywhere
    never differ by more than d (the network only pulls temperatures together and towards the air).
    So the stepped-up day's peak lies at most d (+ COMPARISON_SLACK_K) over the smaller step's."""
    rig = build_rig(scenario)
    air = np.asarray(sample_rig(rig, samples.values).ambient_K if samples.values else rig.ambient_K, dtype=float)
    colder_by = np.broadcast_to(air - np.min(scenario.start_K), (samples.n,))
    return np.where(colder_by > 0.0, colder_by + COMPARISON_SLACK_K, 0.0)


def _verified(scenario, samples: Samples, searched: dict, confidence: float, base: DayOutcome) -> list:
    """The searched fixes re-run on every sample, each alone; one that falls short is stepped up
    (STEP_UP) and re-run, up to VERIFY_ROUNDS times, and dropped if it never finishes the day. A fix of
    a monotone kind (_monotone_kinds) is not re-run on the samples that finish the day as planned
    (base) with RERUN_AGREEMENT_K more to spare than _spare_needed_K, nor, after a step up, on
    those that finished it at the smaller step with that spare."""
    values = dict(searched)
    passed = {}
    planned_oil = scenario.reservoir.oil_volume_m3
    monotone = _monotone_kinds(scenario)
    target = limit_K(scenario)[0] - SEARCH_MARGIN_K
    needed = _spare_needed_K(scenario, samples)
    clear = base.limiting_peak_K[:samples.n] <= target - RERUN_AGREEMENT_K - needed
    known = {kind: clear.copy() for kind in values}    # samples known to finish the day with the fix
    starts = PeriodicStarts(len(FIX_KINDS) * samples.n)     # item: a kind's sample, round after round
    for _ in range(VERIFY_ROUNDS):
        kinds = [k for k in values if k not in passed]
        if not kinds:
            break
        runs = {k: np.flatnonzero(~known[k]) if k in monotone else np.arange(samples.n) for k in kinds}
        index = np.concatenate([runs[k] for k in kinds])
        names = np.concatenate([np.repeat(k, runs[k].size) for k in kinds])
        x = np.concatenate([np.repeat(values[k], runs[k].size) for k in kinds])
        items = np.concatenate([FIX_KINDS.index(k) * samples.n + runs[k] for k in kinds])
        bounds = _peak_bounds(scenario, samples, index, Change.of(names, x), (starts, items))
        done = 0
        for kind in kinds:
            finished = known[kind].copy()
            spare = target - bounds[done:done + runs[kind].size]
            finished[runs[kind]] = spare >= 0.0
            done += runs[kind].size
            spare_all = np.full(samples.n, np.inf)       # the known ones keep theirs from before
            spare_all[runs[kind]] = spare
            known[kind] = finished & (spare_all >= needed) & (kind in monotone)   # what a step up cannot undo
            if share_fits(finished, confidence):
                passed[kind] = values[kind]
            elif kind == "shorter_pulls":
                values[kind] *= 2.0 - STEP_UP
            elif kind == "cooler":
                values[kind] = scenario.cooler_W_K + STEP_UP * (values[kind] - scenario.cooler_W_K)
            else:
                values[kind] *= STEP_UP
    fixes = []
    for kind, value in passed.items():
        if kind == "shorter_pulls":
            fixes.append(Fix(kind, _round_down(value * _pull_seconds(scenario).max(), 1), confidence))
        elif kind == "oil_volume":
            litres = round_up(value * 1000.0, 2)
            # the tank that holds the oil as listed (the plan's card scales the same), kept to the mL so that
            # another unit's rounding starts from the figure, not from a figure already rounded up
            tank = scenario.reservoir.footprint_m2 * scenario.reservoir.height_m * (litres / 1000.0) / planned_oil
            fixes.append(Fix(kind, litres, confidence, tank_L=round_up(tank * 1000.0, 3)))
        else:
            fixes.append(Fix(kind, round_up(value, 1 if kind == "wait" else 2), confidence))
    return fixes


def _fewer_pulls(scenario, base: DayOutcome, confidence: float, session) -> Fix | None:
    """The most pulls (the planned day cut after a pull, with the waits that follow it) that finish at
    the confidence, read off `session`, the samples' planned day, whose beginning the cut day is;
    None where not even one pull does."""
    count = count_at_confidence(base.pulls, confidence)
    steps = list(scenario.steps)
    pull_at = [i for i, step in enumerate(steps) if step.is_pull]
    while count >= 1:
        end = pull_at[count] if count < len(pull_at) else len(steps)
        if share_fits(_with_margin(scenario, day_outcome(session, limits_K(scenario), until_step=end)), confidence):
            return Fix("fewer_pulls", count, confidence)
        count -= 1
    return None


def _round_down(value: float, digits: int) -> float:
    return float(np.floor(value * 10**digits + 1e-9) / 10**digits)
