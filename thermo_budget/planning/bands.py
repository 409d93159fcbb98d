"""The band on every planning answer: the uncertainty model's samples carried through the batched
integrator (one design per sample), the P10/P50/P90 of each answer, the plan at the scenario's
confidence, the ranking of the uncertain inputs, and the P10-P90 envelope of the oil temperature.

Cost: the session answers and the pull count take one batched session (N_SAMPLES designs) and the
counting chunk after it; the three sizing answers take one batched search, per sample, over
N_SIZING_SAMPLES samples x 3 answers, a bracketed secant on the session's peak (a few rounds of one
integration each). docs/method.md ("The uncertainty band") has the convergence figures behind the
counts.
"""
from __future__ import annotations

import numpy as np

from ..physics.network import OIL
from ..engine.outcome import first_crossing_s, peak_oil_K, pulls_completed_under
from .planning import (LINEAR, LOG, RECIPROCAL, from_coordinate, round_up, runs_before_limit, time_constant_s,
                       to_coordinate)
from .session_runs import SEARCH_MARGIN_K, PeriodicStarts, limits_K, session_peak_K, session_trace, sustainability
from ..physics.rig import take_designs
from ..inputs.rig_build import build_rig
from ..inputs.uncertainty import factor_values, sample_rig, standard_normals
from ..units import ZERO_CELSIUS_K

N_SAMPLES = 128            # pull count, peak, time to limit, envelope (convergence: docs/method.md)
N_SIZING_SAMPLES = 32      # wait, cooler and oil volume (the first points of the same Sobol sequence)
BAND_KEYS = ("pulls_under_limit", "runs_before_limit", "peak_C", "time_to_limit_s", "min_wait_s",
             "cooler_required_W_per_K", "min_oil_volume_L")
COUNT_KEYS = ("pulls_under_limit", "runs_before_limit")
SIZING_KEYS = ("min_wait_s", "cooler_required_W_per_K", "min_oil_volume_L")
SECANT_ROUNDS = 4          # after the first; 3 gave the same quantiles on the default rig asked for 30 pulls
PEAK_TOLERANCE_K = 0.2     # a sample's sizing answer is done when a size keeps the peak within this under the target
RELATIVE_TOLERANCE = 0.03   # bracket width at which the interpolated root is taken
# Each new size aims at this much margin, the middle of the tolerance, not at the target itself: aimed at
# the target, about half of the secant's guesses land a little over it and cost another round.
AIM_MARGIN_K = 0.5 * PEAK_TOLERANCE_K
ROUND_DIGITS = {"peak_C": 2, "time_to_limit_s": 1, "min_wait_s": 1, "cooler_required_W_per_K": 2,
                "min_oil_volume_L": 2}


def band_report(scenario, point: dict, n_samples: int = N_SAMPLES, n_sizing: int = N_SIZING_SAMPLES,
                shared_out: dict | None = None) -> dict:
    """The band keys of `run --json` for a scenario whose point answers are `point` (report()), all
    but its advice in words (band_text.advice_sentence, from the ranking). shared_out : optional dict
    that receives what the verdict reuses: the per-sample sizing answers ({SIZING_KEYS key:
    (n_sizing,) array, inf where no size suffices}) and "session", the samples' planned session (a
    Trace of n_samples designs at the planning resolution)."""
    model = scenario.uncertainty
    if not model.spreads:
        bands = {key: _collapsed(point.get(key)) for key in BAND_KEYS}
        return {"bands": bands, "confidence": model.confidence, "plan_at_confidence": _plan_of_point(point),
                "sustainable_share": None,
                "band_ranking": [], "band_envelope": None,
                "uncertainty": {"enabled": model.enabled, "samples": 0, "factors": model.table()}}
    samples = sample_answers(scenario, point, n_samples, n_sizing)
    if shared_out is not None:
        shared_out.update({key: samples[key] for key in SIZING_KEYS if key in samples}, session=samples["session"])
    bands = {key: _band(key, samples.get(key), point.get(key)) for key in BAND_KEYS}
    ranking = spread_ranking(samples["z"], samples["runs_for_ranking" if point.get("runs_before_limit") is not None
                                                  else "pulls_under_limit"], model.active)
    of_what = "the pull count"
    if not ranking:       # the count does not move (e.g. every sample finishes the session): rank the peak
        ranking, of_what = spread_ranking(samples["z"], samples["peak_C"], model.active), "the session's peak"
    for row in ranking:
        row["of"] = of_what
    return {"bands": bands, "confidence": model.confidence,
            "plan_at_confidence": plan_at_confidence(samples, point, model.confidence),
            "sustainable_share": samples.get("sustainable_share"),
            "band_ranking": ranking,
            "band_envelope": samples["envelope"],
            "uncertainty": {"enabled": True, "samples": n_samples, "sizing_samples": n_sizing,
                            "factors": model.table()}}


def sample_answers(scenario, point: dict, n_samples: int = N_SAMPLES, n_sizing: int = N_SIZING_SAMPLES) -> dict:
    """Every answer per sample: {key: (n,) array (inf where there is no finite answer: never crosses,
    no size suffices), "z": (n, k) standard normals, "envelope": ..., "session": the samples' planned
    session (a Trace)}."""
    model = scenario.uncertainty
    z_all = standard_normals(model, max(n_samples, n_sizing))
    all_values = factor_values(model, z_all)
    z, values = z_all[:n_samples], {key: v[:n_samples] for key, v in all_values.items()}
    rig = sample_rig(build_rig(scenario), values)
    limits = limits_K(scenario)      # the bulk limit, and the return line's where one is set
    session = session_trace(scenario, rig, n_samples)
    crossing = first_crossing_s(session, *limits)
    out = {"z": z, "session": session, "pulls_under_limit": pulls_completed_under(session, *limits).astype(float),
           "peak_C": peak_oil_K(session) - ZERO_CELSIUS_K, "time_to_limit_s": np.where(np.isnan(crossing), np.inf, crossing)}
    if point.get("runs_before_limit") is not None:
        out["runs_before_limit"], out["runs_for_ranking"] = _sample_runs(scenario, rig, n_samples, session,
                                                                         int(point["runs_before_limit"]),
                                                                         model.confidence)
    elif point.get("sustainable"):
        out["runs_before_limit"], out["sustainable_share"] = _sample_runs_of_sustainable(scenario, rig, n_samples, session,
                                                                                         model.confidence)
    oil = session.T_K[:, :, OIL] - ZERO_CELSIUS_K
    out["envelope"] = {"time_s": np.round(session.time_s[:, 0], 2).tolist(),
                       "p10_C": np.round(np.quantile(oil, 0.1, axis=1), 3).tolist(),
                       "p50_C": np.round(np.quantile(oil, 0.5, axis=1), 3).tolist(),
                       "p90_C": np.round(np.quantile(oil, 0.9, axis=1), 3).tolist()}
    small = {key: v[:n_sizing] for key, v in all_values.items()}
    out.update(sizing_thresholds(scenario, small, n_sizing, point))
    return out


def _sample_runs(scenario, rig, n: int, session, point_runs: int, confidence: float = 0.9):
    """Pulls before the limit per sample: (for the band, inf where uncounted; for the ranking, an
    uncounted sample at its lower bound). Counted only as far as the quantiles need: until the
    samples that decide P90 (order_statistic) have crossed, the later ones lying above P90 whatever
    their count. First to 1.5 x the point answer. Where P90 is not decided by then, the samples left
    are checked for a cadence that never crosses (planning.sustainability): if those make P90
    unbounded, counting stops there (P10, P50 and the plan are decided); else the others are counted
    on from where they are, to 3 x the point answer."""
    per_cycle = sum(step.is_pull for step in scenario.cycle)
    needed = int(np.ceil(0.9 * n))
    decided = max(int(np.ceil(0.5 * n)), int(np.floor((1.0 - confidence) * n)) + 1)   # P10, P50, the plan
    first_cap, cap = int(np.ceil(1.5 * point_runs)) + per_cycle, 3 * point_runs + per_cycle
    reached: dict = {}
    runs = runs_before_limit(scenario, rig, n, np.zeros(n, bool), max_pulls=first_cap, session=session,
                             enough=needed, state_out=reached)
    left = np.flatnonzero(np.isnan(runs))
    counted_to = first_cap
    if left.size and n - left.size < needed and reached["pulls"] < cap:
        never = np.zeros(left.size, bool)
        if n - left.size >= decided:
            never, _ = sustainability(scenario, take_designs(rig, left), left.size)
        if np.count_nonzero(never) <= n - needed:      # P90 may still be a count: count the others on
            on = left[~never]
            runs[on] = runs_before_limit(scenario, take_designs(rig, on), on.size, np.zeros(on.size, bool),
                                         max_pulls=cap, enough=needed - (n - left.size),
                                         resume=(reached["state"][on], reached["pulls"]))
            counted_to = cap
    uncounted = np.isnan(runs)
    if not uncounted.all():
        counted_to = min(counted_to, int(np.nanmax(runs)))   # every uncounted sample lasts at least this
    return np.where(uncounted, np.inf, runs), np.where(uncounted, counted_to + 1, runs)


def _sample_runs_of_sustainable(scenario, rig, n: int, session, confidence: float = 0.9):
    """Pulls before the limit per sample where the point answer is a cadence that never crosses: each
    sample's own cadence checked (planning.sustainability), the others counted until they cross (up to
    MAX_PULLS), but only as far as the quantiles need: the k earliest to cross, k the largest rank of
    P10, P50, P90 or the plan that a crossing sample can fill (the later ranks are sustainable samples,
    inf whatever the counts). Returns (runs (n,), inf where sustainable or uncounted; the share of
    sustainable samples)."""
    never, _ = sustainability(scenario, rig, n)
    runs = np.full(n, np.inf)
    index = np.flatnonzero(~never)
    ranks = [max(int(np.ceil(q * n)) - 1, 0) for q in (0.1, 0.5, 0.9)] + [int(np.floor((1.0 - confidence) * n))]
    enough = max((r + 1 for r in ranks if r < index.size), default=0)
    if enough:
        counted = runs_before_limit(scenario, take_designs(rig, index), index.size, np.zeros(index.size, bool),
                                    session=session.designs(index), enough=enough)
        runs[index] = np.where(np.isnan(counted), np.inf, counted)
    return runs, round(float(np.mean(never)), 4)


# --- the sizing answers, per sample ------------------------------------------------------------------

def sizing_thresholds(scenario, values: dict, n: int, point: dict) -> dict:
    """Per sample, the smallest wait (s), cooler (W/K) and oil volume (L) that keep the planned session
    under the limit (with the same margin as the point searches), searched together: one integration
    per round over (answers asked) x n designs. Returns {key: (n,) array, inf where none suffices}."""
    limits = limits_K(scenario)
    limit = limits[0]
    target = limit - SEARCH_MARGIN_K
    tau = time_constant_s(scenario)
    peak_power = max(step.peak_power_W() for step in scenario.cycle)
    largest_cooler = 20.0 * peak_power / (limit - scenario.ambient_K)
    V0_L = scenario.oil_volume_L
    waits = [s.duration_s for s in scenario.cycle if not s.is_pull]
    # (key, floor or None, first guess, lowest, highest, search coordinate)
    asked = []
    if point.get("min_wait_s") is not None:
        guess = point["min_wait_s"] or (waits[0] if waits else 60.0)
        asked.append(("min_wait_s", 0.0, guess, 0.0, 8.0 * tau if np.isfinite(tau) else 1e6, RECIPROCAL))
    if point.get("cooler_required_W_per_K") is not None:
        guess = point["cooler_required_W_per_K"] or 0.01 * largest_cooler
        asked.append(("cooler_required_W_per_K", 0.0, guess, 0.0, largest_cooler, LINEAR))
    if point.get("min_oil_volume_L") is not None:
        asked.append(("min_oil_volume_L", None, point["min_oil_volume_L"], 0.02 * V0_L, 200.0 * V0_L, LOG))
    if not asked:
        return {}
    kinds = np.repeat(np.arange(len(asked)), n)
    sample = np.tile(np.arange(n), len(asked))
    lows = np.array([a[3] for a in asked])[kinds]
    highs = np.array([a[4] for a in asked])[kinds]
    m = kinds.size

    starts = PeriodicStarts(m)

    def margins(x, items):
        return target - _session_peaks(scenario, values, [asked[k][0] for k in kinds[items]], sample[items], x,
                                       (starts, items))

    state = _Search(m, lows, highs, np.array([asked[k][5] for k in kinds]))
    # round 0: two first guesses near the point answer (or the floor and a fallback where it is 0)
    guess = np.array([a[2] for a in asked])[kinds]
    floor = np.array([np.nan if a[1] is None else a[1] for a in asked])[kinds]
    at_floor = np.array([a[1] is not None and point[a[0]] == a[1] for a in asked])[kinds]
    first = np.where(at_floor, floor, 0.95 * guess)
    second = np.where(at_floor, guess, 1.1 * guess)   # the guess is a fallback where the point is 0
    items = np.concatenate([np.arange(m), np.arange(m)])
    x = np.concatenate([first, second])
    state.record(x, margins(x, items), items)
    for _ in range(SECANT_ROUNDS):
        todo = np.flatnonzero(~state.done())
        if todo.size == 0:
            break
        x = state.next_guess(todo)
        stuck = np.isnan(x)                               # beyond the range: no size suffices
        state.stuck[todo[stuck]] = True
        todo, x = todo[~stuck], x[~stuck]
        if todo.size:
            state.record(x, margins(x, todo), todo)
    answer = state.answer()
    return {a[0]: answer[kinds == i] for i, a in enumerate(asked)}


class _Search:
    """Per item, the bracket (largest x known to fail, smallest known to pass, with their margins =
    target - peak, >= 0 passes) and the last two points evaluated, for a secant on the margin."""

    def __init__(self, m, lows, highs, coordinate):
        self.lows, self.highs, self.coordinate = lows, highs, coordinate    # planning.LINEAR, LOG, RECIPROCAL
        self.lo, self.m_lo, self.hi, self.m_hi = (np.full(m, np.nan) for _ in range(4))
        self.last = np.full((m, 2, 2), np.nan)             # [item, newest/older, (x, margin)]
        self.stuck = np.zeros(m, bool)

    def record(self, x, margin, items):
        for xi, mi, i in zip(x, margin, items):
            self.last[i, 1] = self.last[i, 0]
            self.last[i, 0] = (xi, mi)
            if mi >= 0:
                if np.isnan(self.hi[i]) or xi < self.hi[i]:
                    self.hi[i], self.m_hi[i] = xi, mi
            elif np.isnan(self.lo[i]) or xi > self.lo[i]:
                self.lo[i], self.m_lo[i] = xi, mi

    def done(self):
        """Per item: a size keeps the peak within PEAK_TOLERANCE_K under the target, or the bracket is
        within RELATIVE_TOLERANCE, or the lowest size passes, or no size in range does (stuck)."""
        lo, hi = self.lo, self.hi
        with np.errstate(invalid="ignore"):
            close = ~np.isnan(hi) & (self.m_hi <= PEAK_TOLERANCE_K)
            narrow = ~np.isnan(lo) & ~np.isnan(hi) & (hi - lo <= RELATIVE_TOLERANCE * hi)
            return self.stuck | close | narrow | (hi <= self.lows)

    def answer(self):
        """Per item: the root interpolated inside the bracket (the bracket is narrow once done), the
        smallest passing value where there is no bracket (its peak within PEAK_TOLERANCE_K under the
        target), inf where nothing passed."""
        kind = self._kind(self.lo, self.coordinate)
        with np.errstate(invalid="ignore", divide="ignore"):
            u_lo, u_hi = to_coordinate(self.lo, kind), to_coordinate(self.hi, kind)
            u = u_hi - self.m_hi * (u_hi - u_lo) / (self.m_hi - self.m_lo)
            root = from_coordinate(np.clip(u, u_lo, u_hi), kind)
        bracketed = ~np.isnan(self.lo) & ~np.isnan(self.hi)
        return np.where(bracketed, root, np.where(np.isnan(self.hi), np.inf, self.hi))

    @staticmethod
    def _kind(x, coordinate):
        """The coordinate to step in between x and a larger value: linear where x is 0 (a floor of
        no wait or no cooler, which neither ln x nor -1/x reaches)."""
        return np.where(np.asarray(x) > 0, coordinate, LINEAR)

    def next_guess(self, i):
        """Inside the bracket where there is one, the secant through the last two points (kept just
        inside; regula falsi, kept 10 % in from its ends, where it has no slope); else that secant,
        taken at most x 4 outward (x 3 without a usable slope) and at least 1 %;
        both aimed at AIM_MARGIN_K of margin. NaN where the range is exhausted (no size suffices, or
        the lowest size already passes)."""
        lo, hi, m_lo, m_hi = self.lo[i], self.hi[i], self.m_lo[i], self.m_hi[i]
        (xa, ma), (xb, mb) = self.last[i, 0].T, self.last[i, 1].T
        with np.errstate(invalid="ignore", divide="ignore"):
            kind = self._kind(lo, self.coordinate[i])
            u_lo, u_hi = to_coordinate(lo, kind), to_coordinate(hi, kind)
            u = u_hi - (m_hi - AIM_MARGIN_K) * (u_hi - u_lo) / (m_hi - m_lo)
            inside = from_coordinate(np.clip(u, u_lo + 0.1 * (u_hi - u_lo), u_hi - 0.1 * (u_hi - u_lo)), kind)
            kind = self._kind(np.minimum(xa, xb), self.coordinate[i])
            ua, ub = to_coordinate(xa, kind), to_coordinate(xb, kind)
            slope = (ma - mb) / (ua - ub)
            aimed = ua - (ma - AIM_MARGIN_K) / slope
            # in -1/x a secant aimed at u >= 0 lies past any finite value: no usable step (the largest)
            outward = np.where((kind == RECIPROCAL) & ~(aimed < 0.0), np.nan, from_coordinate(aimed, kind))
            # inside a bracket, the secant through the last two points (it follows the curve near the
            # root), kept just inside; the ends' chord, kept 10 % in, only where it has no slope
            usable = np.isfinite(outward) & (slope > 0)
            inside = np.where(usable, np.clip(outward, lo + 1e-3 * (hi - lo), hi - 1e-3 * (hi - lo)), inside)
            up = np.clip(np.where(usable, outward, 3.0 * lo), 1.01 * lo, 4.0 * np.maximum(lo, 1e-9))
            down = np.clip(np.where(usable, outward, hi / 3.0), hi / 4.0, hi / 1.01)
            # a floor of 0 (no wait, no cooler) is tried at once when the secant points far down
            down = np.where((self.lows[i] == 0) & usable & (outward < hi / 4.0), 0.0, down)
        x = np.where(np.isnan(lo), np.maximum(down, self.lows[i]),
                     np.where(np.isnan(hi), np.minimum(up, self.highs[i]), inside))
        exhausted = np.isnan(hi) & (lo >= self.highs[i])
        return np.where(exhausted, np.nan, x)


def _session_peaks(scenario, values, keys, sample, x, starts=None) -> np.ndarray:
    """The peak (K) the searches hold to the limit (planning.session_outcome's: the bulk oil's, or
    outcome.limiting_peak_K with a return-line limit) of the planned session, for designs that each
    change one sizing input; on a long session, the periodic peak where it is under the searches'
    target and the session ends periodic (session_runs.session_peak_K)."""
    keys = np.asarray(keys)
    volume = np.where(keys == "min_oil_volume_L", x / 1000.0, scenario.reservoir.oil_volume_m3)
    cooler = np.where(keys == "cooler_required_W_per_K", x, 0.0)
    rig = sample_rig(build_rig(scenario, oil_volume_m3=volume, cooler_W_K=cooler), values, index=sample)
    cycle_s = [step.duration_s if step.is_pull else np.where(keys == "min_wait_s", x, step.duration_s)
               for step in scenario.cycle]
    return session_peak_K(scenario, rig, x.size, cycle_s, threshold_K=limits_K(scenario)[0] - SEARCH_MARGIN_K,
                          starts=starts)


# --- quantiles, plan, ranking -----------------------------------------------------------------------

def _collapsed(value) -> dict | None:
    return None if value is None else {"p10": value, "p50": value, "p90": value}


def order_statistic(values: np.ndarray, q: float):
    """The smallest sample value with at least a fraction q of the samples at or below it."""
    ordered = np.sort(values)
    return float(ordered[max(int(np.ceil(q * ordered.size)) - 1, 0)])


def _band(key: str, values, point_value) -> dict | None:
    """P10, P50 and P90 of an answer over the samples; a count's band also where the point answer is a
    cadence that never crosses (its samples were counted all the same)."""
    if values is None or (point_value is None and key not in COUNT_KEYS):
        return None
    if key in COUNT_KEYS:
        q = [order_statistic(values, p) for p in (0.1, 0.5, 0.9)]
        return {f"p{p}": None if not np.isfinite(v) else int(v) for p, v in zip((10, 50, 90), q)}
    q = np.quantile(np.where(np.isfinite(values), values, 1e300), [0.1, 0.5, 0.9])
    return {f"p{p}": None if v > 1e299 else round(float(v), ROUND_DIGITS[key]) for p, v in zip((10, 50, 90), q)}


def _plan_of_point(point: dict) -> dict:
    return {key: point.get(key) for key in ("pulls_under_limit", "runs_before_limit", "time_to_limit_s") + SIZING_KEYS}


def plan_at_confidence(samples: dict, point: dict, confidence: float) -> dict:
    """What to plan for at the confidence: the most pulls that stay under the limit in that fraction of
    the samples, the time to the limit that that fraction reach no sooner (None: that fraction never
    reach it in the planned session), and the smallest wait, cooler and oil volume that keep the
    planned session under it in that fraction (None where the point answer is None, or where nothing
    suffices)."""
    plan = {}
    for key in COUNT_KEYS + ("time_to_limit_s",):
        values = samples.get(key)
        if values is None:
            plan[key] = None
            continue
        ordered = np.sort(values)
        k = ordered[int(np.floor((1.0 - confidence) * ordered.size))]     # fewer or sooner is worse
        plan[key] = None if not np.isfinite(k) else int(k) if key in COUNT_KEYS else round(float(k), 1)
    for key in SIZING_KEYS:
        values = samples.get(key)
        if point.get(key) is None or values is None:
            plan[key] = None
            continue
        v = order_statistic(values, confidence)
        digits = ROUND_DIGITS[key]      # rounded up, so that the planned size still suffices
        plan[key] = max(0.0, round_up(v, digits)) if np.isfinite(v) else None
    return plan


def spread_ranking(z: np.ndarray, answer: np.ndarray, factors) -> list[dict]:
    """Each uncertain input's share of the spread (variance) of an answer: the squared standardized
    regression coefficients of the answer on the inputs' standard normal scores, normalised to 100 %.
    r2 says how much of the variance the linear fit explains (near 1: the shares can be trusted)."""
    finite = np.isfinite(answer)
    y = answer[finite]
    if y.size < z.shape[1] + 3 or np.var(y) == 0:
        return []
    X = np.column_stack([np.ones(y.size), z[finite]])
    beta, *_ = np.linalg.lstsq(X, y, rcond=None)
    explained = beta[1:] ** 2 * np.var(z[finite], axis=0)
    r2 = float(min(explained.sum() / np.var(y), 1.0))
    shares = explained / explained.sum()
    rows = [{"factor": f.key, "what": f.label, "share": round(float(s), 4), "measure": f.measure}
            for f, s in zip(factors, shares)]
    rows.sort(key=lambda row: -row["share"])
    for row in rows:
        row["r2"] = round(r2, 3)
    return rows
