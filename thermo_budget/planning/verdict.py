"""The verdict: does the planned day fit at the chosen confidence, and if not, which single changes
make it fit.

Numerics only (the words are in verdict_text.py). The day is judged on the uncertainty model's
samples (one design per sample, the band's samples), or on the point rig alone where the band is
off: it fits when at least the chosen fraction of samples finish every planned pull with neither
oil over its limit. Each fix changes one thing (the waits, the oil volume with its tank, the cooler,
the number of pulls, the length of the pulls), is found per sample by a bracketed secant on the
session's peak (the band's search), taken at the chosen confidence, and then re-run on every sample
with that change alone: a fix is listed only if that re-run finishes the day at the confidence.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .bands import N_SAMPLES, N_SIZING_SAMPLES, SECANT_ROUNDS, _Search, order_statistic
from ..physics.network import OIL
from ..engine.outcome import first_crossing_s, limiting_peak_K, pulls_completed_under
from .planning import time_constant_s
from .session_runs import SEARCH_MARGIN_K, finishes_under_limit, limits_K, session_peak_K
from ..inputs.rig_build import build_rig
from ..inputs.scenario import limit_K
from ..engine.session import PLAN_RESOLUTION
from ..engine.solver import integrate
from ..inputs.uncertainty import factor_values, sample_rig, standard_normals

FIX_KINDS = ("wait", "oil_volume", "cooler", "fewer_pulls", "shorter_pulls")
UNIT_KEYS = {"wait": "value_s", "oil_volume": "value_L", "cooler": "value_W_per_K", "shorter_pulls": "value_s"}
VERIFY_ROUNDS = 5          # re-runs of a fix that fell short of the confidence, each one step larger
STEP_UP = 1.08             # the step: x 1.08 on the change (wait, oil, cooler), x 0.92 on the pull time
LONGEST_PULL_CUT = 0.98    # shorter pulls keep at least 2 % of their length


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


@dataclass(frozen=True)
class Verdict:
    """Whether the planned day fits at `confidence`.

    first_pull_over_limit : the first pull (counted from 1) that crosses a limit at the confidence,
    None when the day fits. governing_limit : "max_temperature" or "min_viscosity" (the bulk oil's
    limit and why it is where it is) or "return_line"; the one with the least margin at the
    confidence. limit_C : that limit; peak_C : the peak of the oil it applies to, at the confidence
    (the value that the chosen fraction of samples stays at or under). fixes : ranked, smallest
    change first.
    """
    fits: bool
    first_pull_over_limit: int | None
    limit_C: float
    governing_limit: str
    peak_C: float | None
    confidence: float
    fixes: tuple = ()

    def to_json(self) -> dict:
        return {"fits": self.fits, "first_pull_over_limit": self.first_pull_over_limit, "limit_C": self.limit_C,
                "governing_limit": self.governing_limit, "peak_C": self.peak_C, "confidence": self.confidence,
                "fixes": [fix.to_json() for fix in self.fixes]}

    @classmethod
    def from_json(cls, data: dict) -> "Verdict":
        return cls(fits=data["fits"], first_pull_over_limit=data["first_pull_over_limit"], limit_C=data["limit_C"],
                   governing_limit=data["governing_limit"], peak_C=data["peak_C"], confidence=data["confidence"],
                   fixes=tuple(Fix.from_json(f) for f in data["fixes"]))


# --- the day on the samples ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Samples:
    """The rig's samples: `values` for uncertainty.sample_rig ({} where the band is off), n of them."""
    values: dict
    n: int


def samples_of(scenario, n: int = N_SAMPLES) -> Samples:
    """The band's first n samples (the same Sobol points), or the point rig alone where the band is off."""
    model = scenario.uncertainty
    if not model.spreads:
        return Samples({}, 1)
    values = factor_values(model, standard_normals(model, n))
    return Samples({key: v[:n] for key, v in values.items()}, n)


def _head(samples: Samples, n: int) -> Samples:
    n = min(n, samples.n)
    return Samples({key: v[:n] for key, v in samples.values.items()}, n)


@dataclass(frozen=True)
class Change:
    """One change of the planned day, per design: the uniform wait (s, NaN: as planned), the oil volume
    (m^3 at 15 degC, NaN: as planned), the cooler (W/K, NaN: as planned), the pulls' length as a
    fraction of the planned (1: as planned). Arrays (M,), one per design."""
    wait_s: np.ndarray
    oil_m3: np.ndarray
    cooler_W_K: np.ndarray
    pull_fraction: np.ndarray

    @classmethod
    def none(cls, m: int) -> "Change":
        nan = np.full(m, np.nan)
        return cls(nan, nan.copy(), nan.copy(), np.ones(m))

    @classmethod
    def of(cls, kinds, x) -> "Change":
        """The change of each design: kind kinds[i] to value x[i] (SI; the pull kind as a fraction)."""
        kinds, x = np.asarray(kinds), np.asarray(x, dtype=float)
        def pick(kind, other):
            return np.where(kinds == kind, x, other)
        return cls(pick("wait", np.nan), pick("oil_volume", np.nan), pick("cooler", np.nan),
                   pick("shorter_pulls", 1.0))


@dataclass(frozen=True)
class DayOutcome:
    """The day on every design: bulk peak (K), return-line peak (K), the peak held to the bulk limit
    (outcome.limiting_peak_K), pulls completed under the limits, and whether no limit was crossed."""
    bulk_peak_K: np.ndarray
    return_peak_K: np.ndarray
    limiting_peak_K: np.ndarray
    pulls: np.ndarray
    clean: np.ndarray


def _changed_designs(scenario, samples: Samples, sample_index, change: Change):
    """(the rig of designs that each take one sample (sample_index (M,)) and one change (M,), the
    per-step durations of one cycle with the change, each float or (M,) s)."""
    volume = np.where(np.isnan(change.oil_m3), scenario.reservoir.oil_volume_m3, change.oil_m3)
    cooler = np.where(np.isnan(change.cooler_W_K), scenario.cooler_W_K, change.cooler_W_K)
    rig = sample_rig(build_rig(scenario, oil_volume_m3=volume, cooler_W_K=cooler), samples.values, index=sample_index)
    cycle_s = [step.duration_s * change.pull_fraction if step.is_pull
               else np.where(np.isnan(change.wait_s), step.duration_s, change.wait_s) for step in scenario.cycle]
    return rig, cycle_s


def run_day(scenario, samples: Samples, sample_index, change: Change, steps=None) -> DayOutcome:
    """The planned day (or `steps`, the first steps of it) on designs that each take one sample
    (sample_index (M,)) and one change (M,), as one batched integration to its end."""
    steps = list(scenario.steps if steps is None else steps)
    rig, cycle_s = _changed_designs(scenario, samples, sample_index, change)
    durations = (cycle_s * (len(steps) // len(cycle_s) + 1))[:len(steps)]
    trace = integrate(rig, steps, scenario.start_K, n_designs=len(sample_index), durations_s=durations,
                      resolution=PLAN_RESOLUTION)
    limits = limits_K(scenario)
    return DayOutcome(trace.T_K[:, :, OIL].max(axis=0), trace.return_K.max(axis=0), limiting_peak_K(trace, *limits),
                      pulls_completed_under(trace, *limits), np.isnan(first_crossing_s(trace, *limits)))


def share_fits(clean: np.ndarray, confidence: float) -> bool:
    """True when at least the fraction `confidence` of the samples finish the day under the limits."""
    return bool(np.count_nonzero(clean) >= confidence * clean.size - 1e-9)


def count_at_confidence(pulls: np.ndarray, confidence: float) -> int:
    """The most pulls that at least the fraction `confidence` of the samples complete under the limits
    (the band's plan_at_confidence rule)."""
    return int(np.sort(pulls)[int(np.floor((1.0 - confidence) * pulls.size))])


# --- the verdict ----------------------------------------------------------------------------------------

def verdict(scenario, point: dict, n_samples: int = N_SAMPLES, n_sizing: int = N_SIZING_SAMPLES,
            band_sizing: dict | None = None) -> Verdict:
    """The verdict on the planned day of a scenario whose point answers are `point` (report()).
    band_sizing : optional per-sample sizing answers of the band on the same first n_sizing samples
    (bands.band_report's sizing_out); the fixes that they answer are taken from them, not searched
    again (_searched_values)."""
    confidence = scenario.uncertainty.confidence
    samples = samples_of(scenario, n_samples)
    base = run_day(scenario, samples, np.arange(samples.n), Change.none(samples.n))
    fits = share_fits(base.clean, confidence)
    planned = int(point["pulls_planned"])
    governing, limit, peak = _governing(scenario, base, confidence)
    first_over = None if fits else min(count_at_confidence(base.pulls, confidence) + 1, planned)
    fixes = () if fits else find_fixes(scenario, point, samples, base, confidence, n_sizing, band_sizing)
    shown_peak = None if point.get("beyond_model_range") else round(peak - 273.15, 2)   # past the oil data
    return Verdict(fits=fits, first_pull_over_limit=first_over, limit_C=round(limit - 273.15, 3),
                   governing_limit=governing, peak_C=shown_peak, confidence=confidence, fixes=fixes)


def _governing(scenario, base: DayOutcome, confidence: float) -> tuple[str, float, float]:
    """(the governing limit's name, the limit K, the peak of its oil at the confidence K): the limit
    whose oil comes closest to it (or goes furthest over) at the confidence."""
    limit, reason = limit_K(scenario)
    bulk_peak = order_statistic(base.bulk_peak_K, confidence)
    return_limit = scenario.return_line_max_temperature_K
    if return_limit is not None:
        return_peak = order_statistic(base.return_peak_K, confidence)
        if return_peak - return_limit > bulk_peak - limit:
            return "return_line", return_limit, return_peak
    return reason, limit, bulk_peak


# --- the fixes ------------------------------------------------------------------------------------------

def find_fixes(scenario, point: dict, samples: Samples, base: DayOutcome, confidence: float,
               n_sizing: int = N_SIZING_SAMPLES, band_sizing: dict | None = None) -> tuple:
    """Every single change that finishes the day at the confidence, re-run before it is listed,
    smallest change first (fix_change)."""
    searched = _searched_values(scenario, point, _head(samples, n_sizing), base, confidence, band_sizing)
    fixes = _verified(scenario, samples, searched, confidence)
    fewer = _fewer_pulls(scenario, samples, base, confidence)
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
        from ..physics.network import passive_rejection_W
        limit, _ = limit_K(scenario)
        passive = float(passive_rejection_W(build_rig(scenario, cooler_W_K=0.0), limit)[0]) / (limit - scenario.ambient_K)
        return (fix.value - scenario.cooler_W_K) / max(passive, 1e-9)
    if fix.kind == "fewer_pulls":
        return 1.0 - fix.value / _pull_seconds(scenario).size
    return 1.0 - fix.value / _pull_seconds(scenario).max()


# The band's per-sample sizing answers that are a fix's per-sample value, and their unit in the fix's SI.
# The band changes one thing at a time on a rig with no cooler: the same change as the fix's where the
# scenario has no cooler of its own (its wait and oil answers are for no cooler).
FROM_BAND = {"wait": ("min_wait_s", 1.0), "oil_volume": ("min_oil_volume_L", 1e-3),
             "cooler": ("cooler_required_W_per_K", 1.0)}


def _from_band(scenario, samples: Samples, band_sizing: dict | None, confidence: float) -> dict:
    """Per fix kind that the band's sizing answers (band_sizing, per sample of the same samples, at the
    same target as the fixes' search) answer: the value at the confidence, the sample's own setting
    where it already finishes (the band's answer lies under it there). Empty where the scenario has a
    cooler or the samples differ."""
    if not band_sizing or scenario.cooler_W_K > 0:
        return {}
    planned = {"wait": max([step.duration_s for step in scenario.cycle if not step.is_pull], default=np.nan),
               "oil_volume": scenario.reservoir.oil_volume_m3, "cooler": 0.0}
    found = {}
    for kind, (key, to_si) in FROM_BAND.items():
        per_sample = band_sizing.get(key)
        if per_sample is None or per_sample.size != samples.n or np.isnan(planned[kind]):
            continue
        value = order_statistic(np.maximum(per_sample * to_si, planned[kind]), confidence)
        found[kind] = value if np.isfinite(value) else None
    return found


def _searched_values(scenario, point: dict, samples: Samples, base: DayOutcome, confidence: float,
                     band_sizing: dict | None = None) -> dict:
    """Per fix kind (wait, oil_volume, cooler, shorter_pulls): the value at the confidence of the
    per-sample smallest change that keeps the day's peak SEARCH_MARGIN_K under the limit (SI; the pull
    kind as the fraction of the planned length kept). Samples that already finish need no change.
    A kind that the band's sizing answers (_from_band) is taken from it, not searched again."""
    banded = _from_band(scenario, samples, band_sizing, confidence)
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
    # (kind, as planned, first guess, highest, search in ln x); the pull kind searches the cut 1 - fraction
    asked = []
    if waits:
        guess = point.get("min_wait_s") or 2.0 * max(waits)
        asked.append(("wait", max(waits), max(guess, 1.2 * max(waits)), 8.0 * tau if np.isfinite(tau) else 1e6, False))
    guess = point.get("min_oil_volume_L")
    asked.append(("oil_volume", V0, 2.0 * V0 if guess is None else max(guess / 1000.0, 1.1 * V0), 200.0 * V0, True))
    if largest_cooler > scenario.cooler_W_K:
        guess = point.get("cooler_required_W_per_K") or 0.01 * largest_cooler
        asked.append(("cooler", scenario.cooler_W_K, max(guess, scenario.cooler_W_K + 0.01 * largest_cooler),
                      largest_cooler, False))
    asked.append(("shorter_pulls", 0.0, min(max(1.0 - share_done, 0.05), 0.9), LONGEST_PULL_CUT, False))
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

    def margins(x, items):
        value = np.where(names[items] == "shorter_pulls", 1.0 - x, x)
        rig, cycle_s = _changed_designs(scenario, samples, sample[items], Change.of(names[items], value))
        return target - session_peak_K(scenario, rig, items.size, cycle_s, threshold_K=target)

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


def _finishes(scenario, samples: Samples, sample_index, change: Change) -> np.ndarray:
    """Per design, whether the day with its change finishes with SEARCH_MARGIN_K to spare
    (session_runs.finishes_under_limit: a long day is followed only until that is decided)."""
    rig, cycle_s = _changed_designs(scenario, samples, sample_index, change)
    return finishes_under_limit(scenario, rig, len(sample_index), cycle_s=cycle_s)


def _with_margin(scenario, outcome: DayOutcome) -> np.ndarray:
    """Per design, the day finished with SEARCH_MARGIN_K to spare: a fix is held to it, so that a re-run
    at another resolution (agreeing to about 0.03 K) still finishes the day."""
    return outcome.limiting_peak_K <= limit_K(scenario)[0] - SEARCH_MARGIN_K


def _verified(scenario, samples: Samples, searched: dict, confidence: float) -> list:
    """The searched fixes re-run on every sample, each alone; one that falls short is stepped up
    (STEP_UP) and re-run, up to VERIFY_ROUNDS times, and dropped if it never finishes the day."""
    values = dict(searched)
    passed = {}
    planned_oil = scenario.reservoir.oil_volume_m3
    for _ in range(VERIFY_ROUNDS):
        kinds = [k for k in values if k not in passed]
        if not kinds:
            break
        x = np.array([values[k] for k in kinds])
        names = np.repeat(kinds, samples.n)
        finishes = _finishes(scenario, samples, np.tile(np.arange(samples.n), len(kinds)),
                             Change.of(names, np.repeat(x, samples.n)))
        for i, kind in enumerate(kinds):
            if share_fits(finishes[i * samples.n:(i + 1) * samples.n], confidence):
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
            litres = _round_up(value * 1000.0, 2)
            tank = scenario.reservoir.footprint_m2 * scenario.reservoir.height_m * value / planned_oil
            fixes.append(Fix(kind, litres, confidence, tank_L=_round_up(tank * 1000.0, 1)))
        else:
            fixes.append(Fix(kind, _round_up(value, 1 if kind == "wait" else 2), confidence))
    return fixes


def _fewer_pulls(scenario, samples: Samples, base: DayOutcome, confidence: float) -> Fix | None:
    """The most pulls (the planned day cut after a pull, with the waits that follow it) that finish at
    the confidence, re-run; None where not even one pull does."""
    count = count_at_confidence(base.pulls, confidence)
    steps = list(scenario.steps)
    pull_at = [i for i, step in enumerate(steps) if step.is_pull]
    while count >= 1:
        end = pull_at[count] if count < len(pull_at) else len(steps)
        outcome = run_day(scenario, samples, np.arange(samples.n), Change.none(samples.n), steps=steps[:end])
        if share_fits(_with_margin(scenario, outcome), confidence):
            return Fix("fewer_pulls", count, confidence)
        count -= 1
    return None


def _round_up(value: float, digits: int) -> float:
    return float(np.ceil(value * 10**digits - 1e-9) / 10**digits)


def _round_down(value: float, digits: int) -> float:
    return float(np.floor(value * 10**digits + 1e-9) / 10**digits)
