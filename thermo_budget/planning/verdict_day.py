"""The planned day on the uncertainty model's samples (one design per sample, the band's samples),
each design with one change (a wait, an oil volume, a cooler, the pulls' length), and whether the
day fits at a confidence: what the verdict and its fixes are judged on."""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .bands import N_SAMPLES
from ..physics.network import OIL
from ..engine.outcome import first_crossing_s, limiting_peak_K, pulls_completed_under
from .session_runs import limits_K, session_trace
from ..inputs.rig_build import build_rig
from ..engine.session import PLAN_RESOLUTION
from ..engine.solver import Trace, integrate
from ..inputs.uncertainty import factor_values, sample_rig, standard_normals


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


def first_samples(samples: Samples, n: int) -> Samples:
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


def changed_designs(scenario, samples: Samples, sample_index, change: Change):
    """(the rig of designs that each take one sample (sample_index (M,)) and one change (M,), the
    per-step durations of one cycle with the change, each float or (M,) s)."""
    volume = np.where(np.isnan(change.oil_m3), scenario.reservoir.oil_volume_m3, change.oil_m3)
    cooler = np.where(np.isnan(change.cooler_W_K), scenario.cooler_W_K, change.cooler_W_K)
    rig = sample_rig(build_rig(scenario, oil_volume_m3=volume, cooler_W_K=cooler), samples.values, index=sample_index)
    cycle_s = [step.duration_s * change.pull_fraction if step.is_pull
               else np.where(np.isnan(change.wait_s), step.duration_s, change.wait_s) for step in scenario.cycle]
    return rig, cycle_s


def planned_day(scenario, samples: Samples) -> Trace:
    """The planned day on every sample, as planned: the samples' planned session (as the band's,
    session_runs.session_trace)."""
    rig = sample_rig(build_rig(scenario), samples.values) if samples.values else build_rig(scenario)
    return session_trace(scenario, rig, samples.n)


def day_outcome(trace: Trace, limits: tuple, until_step: int | None = None) -> DayOutcome:
    """The DayOutcome of a day's trace against limits (bulk, return line or None), or of its first
    until_step steps only: the day cut there is that trace's beginning (the same sub-steps from the
    same start), so a shorter day is read off the whole one, not integrated again."""
    if until_step is not None:
        points = int(np.searchsorted(trace.step_index, until_step, side="left"))   # the start point is -1
        begun = trace.pull_start_s[:, 0] < trace.time_s[points - 1, 0]      # the pulls begun before the cut
        trace = replace(trace, time_s=trace.time_s[:points], T_K=trace.T_K[:points], return_K=trace.return_K[:points],
                        power_W=trace.power_W[:points], step_index=trace.step_index[:points],
                        pull_start_s=trace.pull_start_s[begun], pull_end_s=trace.pull_end_s[begun],
                        energy_in_J=np.full_like(trace.energy_in_J, np.nan),     # not kept for a part
                        energy_lost_J=np.full_like(trace.energy_lost_J, np.nan),
                        energy_stored_J=np.full_like(trace.energy_stored_J, np.nan))
    return DayOutcome(trace.T_K[:, :, OIL].max(axis=0), trace.return_K.max(axis=0), limiting_peak_K(trace, *limits),
                      pulls_completed_under(trace, *limits), np.isnan(first_crossing_s(trace, *limits)))


def run_day(scenario, samples: Samples, sample_index, change: Change, steps=None) -> DayOutcome:
    """The planned day (or `steps`, the first steps of it) on designs that each take one sample
    (sample_index (M,)) and one change (M,), as one batched integration to its end."""
    steps = list(scenario.steps if steps is None else steps)
    rig, cycle_s = changed_designs(scenario, samples, sample_index, change)
    durations = (cycle_s * (len(steps) // len(cycle_s) + 1))[:len(steps)]
    trace = integrate(rig, steps, scenario.start_K, n_designs=len(sample_index), durations_s=durations,
                      resolution=PLAN_RESOLUTION)
    return day_outcome(trace, limits_K(scenario))


def share_fits(clean: np.ndarray, confidence: float) -> bool:
    """True when at least the fraction `confidence` of the samples finish the day under the limits."""
    return bool(np.count_nonzero(clean) >= confidence * clean.size - 1e-9)


def count_at_confidence(pulls: np.ndarray, confidence: float) -> int:
    """The most pulls that at least the fraction `confidence` of the samples complete under the limits
    (the band's plan_at_confidence rule)."""
    return int(np.sort(pulls)[int(np.floor((1.0 - confidence) * pulls.size))])
