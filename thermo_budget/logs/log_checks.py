"""A measured log before it is fitted: thinned to a bounded number of readings, and judged for
plausibility against the scenario (a reading far from the start temperature, or readings that
look like another unit than the header says).
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..errors import ScenarioError
from .measured_log import MeasuredLog
from ..units import convert, to_display, unit_label

# The fit integrates the model once per logged interval, so its cost grows with the rows: about
# 12 s of CPU per 1,000 rows on a 2-core machine. A longer log is thinned to this many
# readings, plus the rows where the heat input changes.
MAX_FIT_READINGS = 400
POWER_CHANGE_FRACTION = 0.1    # a change of power_W by this fraction of its largest value is kept
START_TOLERANCE_K = 10.0       # first reading this far from the scenario's start: warned
OTHER_UNIT_MATCH_K = 5.0       # ... and read in another unit it would be this close: that unit, likely
_UNIT_NAMES = {"C": ("degC", "°C"), "F": ("degF", "°F"), "K": ("K", "K")}


def ordinal(n: int) -> str:
    """'2nd', '3rd', '11th', '21st'."""
    n = int(n)
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def thin_for_fit(log: MeasuredLog, max_readings: int = MAX_FIT_READINGS) -> MeasuredLog:
    """The log with at most about max_readings rows: every k-th reading, the last one, and every
    row at which the heat input (pull marker, or power_W by more than POWER_CHANGE_FRACTION of its
    largest value) changes. Between the kept rows the power is the time-weighted mean of the rows
    merged (so the heat in is unchanged) and the pull marker is that of the majority of the time
    (exact where the change points are kept). A log short enough is returned as it is."""
    m = log.time_s.size
    if m <= max_readings:
        return log
    step = int(np.ceil(m / max_readings))
    keep = np.zeros(m, bool)
    keep[::step] = True
    keep[-1] = True
    changes = np.zeros(m, bool)
    if log.pull is not None:
        changes[:-1] |= log.pull[1:] != log.pull[:-1]
    if log.power_W is not None:
        scale = max(float(np.max(log.power_W)), 1e-9)
        changes[:-1] |= np.abs(np.diff(log.power_W)) > POWER_CHANGE_FRACTION * scale
    if np.count_nonzero(changes) <= 4 * max_readings:   # else the input changes too often to keep them all
        keep |= changes
    index = np.flatnonzero(keep)
    durations = np.diff(log.time_s, prepend=0.0)
    group = np.searchsorted(index, np.arange(m))          # the kept row that ends each row's interval
    seconds = np.bincount(group, durations, minlength=index.size)

    def time_mean(values):
        total = np.bincount(group, durations * values, minlength=index.size)
        return np.where(seconds > 0, total / np.where(seconds > 0, seconds, 1.0), values[index])
    power = None if log.power_W is None else time_mean(np.asarray(log.power_W, dtype=float))
    pull = None if log.pull is None else time_mean(log.pull.astype(float)) >= 0.5
    note = (f"the log's {m} readings were thinned to {index.size} for the fit (every {ordinal(step)} reading and every "
            f"row where the heat input changes; the heat input between them is the time-weighted mean)")
    return replace(log, time_s=log.time_s[index], oil_K=log.oil_K[index],
                   ambient_K=None if log.ambient_K is None else log.ambient_K[index],
                   power_W=power, pull=pull, notes=log.notes + (note,))


def plausibility_warnings(log: MeasuredLog, start_K: float, limit_K: float, system: str = "SI") -> list[str]:
    """Warnings for a log that looks wrong against the scenario: readings that would match the start
    temperature in another unit than the header's (°F under a °C header), a first reading far from
    the start temperature, readings far past the fluid limit."""
    def temp(T_K):
        return f"{to_display(T_K, 'temperature', system):.1f} {unit_label('temperature', system)}"
    readings = log.oil_K[np.isfinite(log.oil_K)]
    if not readings.size:
        return []
    header = log.temperature_column
    header_unit = header[-1].upper()
    first = float(readings[0])
    warnings = []
    if abs(first - start_K) > START_TOLERANCE_K:
        as_written = convert(first, "K", _UNIT_NAMES[header_unit][0])
        for other, (pint_unit, symbol) in _UNIT_NAMES.items():
            if other == header_unit:
                continue
            if abs(convert(as_written, pint_unit, "K") - start_K) < OTHER_UNIT_MATCH_K:
                warnings.append(f"the log's readings look like {symbol}, not the {_UNIT_NAMES[header_unit][1]} its header "
                                f"{header} says: its first reading, {as_written:g}, matches the scenario's start "
                                f"temperature ({temp(start_K)}) only when read as {symbol}. Fix the header "
                                f"(oil_{other}) and fit again.")
                break
        else:
            warnings.append(f"the log's first reading ({temp(first)}) is {abs(first - start_K):.0f} K from the scenario's "
                            f"start temperature ({temp(start_K)}): a log of another day or rig, a wrong unit in the "
                            f"header, or a start_temperature to correct")
    hottest = float(readings.max())
    if hottest > limit_K + 2.0 * START_TOLERANCE_K:
        warnings.append(f"the log reaches {temp(hottest)}, far past the fluid limit ({temp(limit_K)}): check the "
                        f"unit of its header ({header}) and the sensor")
    return warnings


def refuse_implausible(warnings: list[str], source: str) -> None:
    """With --strict: the first plausibility warning becomes an error (exit 2)."""
    if warnings:
        raise ScenarioError(source, "an implausible log", f"a plausible log (--strict): {warnings[0]}")
