"""The verdict: does the planned day fit at the chosen confidence, and if not, which single changes
make it fit (fixes.py).

Numerics only (the words are in verdict_text.py). The day is judged on the uncertainty model's
samples (verdict_day.py), or on the point rig alone where the band is off: it fits when at least
the chosen fraction of samples finish every planned pull with neither oil over its limit.
"""
from __future__ import annotations

from dataclasses import dataclass


from .bands import N_SAMPLES, N_SIZING_SAMPLES, order_statistic
from .fixes import Fix, find_fixes
from .session_runs import limits_K
from .verdict_day import DayOutcome, count_at_confidence, day_outcome, planned_day, samples_of, share_fits
from ..inputs.scenario import limit_K


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


def verdict(scenario, point: dict, n_samples: int = N_SAMPLES, n_sizing: int = N_SIZING_SAMPLES,
            band_shared: dict | None = None) -> Verdict:
    """The verdict on the planned day of a scenario whose point answers are `point` (report()).
    band_shared : optional, the band's work on the same samples (bands.band_report's shared_out):
    its samples' planned session is the day as planned (not integrated again), and the fixes that
    its per-sample sizing answers answer are taken from them, not searched again (fixes.py)."""
    confidence = scenario.uncertainty.confidence
    samples = samples_of(scenario, n_samples)
    session = (band_shared or {}).get("session")
    if session is None or session.T_K.shape[1] != samples.n:
        session = planned_day(scenario, samples)
    base = day_outcome(session, limits_K(scenario))
    fits = share_fits(base.clean, confidence)
    planned = int(point["pulls_planned"])
    governing, limit, peak = _governing(scenario, base, confidence)
    first_over = None if fits else min(count_at_confidence(base.pulls, confidence) + 1, planned)
    fixes = () if fits else find_fixes(scenario, point, samples, base, confidence, session, n_sizing, band_shared)
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
