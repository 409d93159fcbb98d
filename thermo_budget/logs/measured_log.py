"""A measured temperature log: read a CSV, validate it, and return it in SI (s, K, W).

Columns (header names are matched without regard to case; other columns are ignored and listed):
    time_s                 seconds from the start of the scenario's session, or
    time                   ISO 8601 timestamps; the earliest is the session start
    oil_C | oil_F | oil_K  the sensor's oil temperature (exactly one of them)
    ambient_C | ambient_F  optional, air temperature near the rig
    power_W                optional, absorbed power: the mean over the interval that ends at the row
    pull                   optional, 1 while a pull runs in the interval that ends at the row, else 0
The trace CSV that `run --csv` writes (time_s, oil_C, return_C, wall_C, hardware_C, power_W, hose_C) is a
valid log; with the sensor "return" its return_C column is read in place of oil_C.

Lines starting with "#" are comments. Rows are sorted by time; rows with the same time are merged
(their readings averaged); blank or NaN cells are skipped and counted. A row whose time is blank is
dropped. Anything else that cannot be read raises ScenarioError naming the line, column and value.
"""
from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass, replace
from datetime import datetime
from pathlib import Path

import numpy as np

from ..errors import ScenarioError
from .plain_log import plain_rows
from ..units import ZERO_CELSIUS_K, convert

MAX_LOG_BYTES = 20 * 1024 * 1024
MAX_LOG_ROWS = 200_000     # reading 200,000 rows takes about 2 s; a day logged every 0.5 s
MAX_CELL_CHARS = 1_000
MAX_LOG_SPAN_S = 12 * 3600.0   # a test day; the fit integrates every logged second (found by the fuzz test)
MAX_POWER_W = 1e6          # the plausible range of a pull's power (scenario_table.KEYS)
MIN_POINTS = 10            # readings needed to fit two or three parameters and judge the residual
MIN_REPORTED_GAP_S = 60.0  # a gap is noted when over this and ten times the median spacing
MIN_RISE_K = 1.0           # the oil must rise this much above its first readings to count as heated
MISSING_CELLS = {"", "nan", "na", "n/a", "null", "none", "-"}
# A number cell: ASCII digits only (Python's float() would also read other scripts' digits, such
# as full-width or Arabic-Indic ones, and underscores between digits).
NUMBER_CELL = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?|[+-]?(?:inf|infinity|nan)",
                         re.IGNORECASE)
NUMBER_EXPECTED = "a number written with the digits 0-9 (a point for decimals, e.g. 20.5)"


def ascii_float(text: str) -> float:
    """A number cell as a float: ASCII digits, an optional point and exponent (NUMBER_CELL), else ValueError."""
    text = text.strip()
    if not NUMBER_CELL.fullmatch(text):
        raise ValueError(f"not a number in ASCII digits: {text!r}")
    return float(text)
# Readings outside this range are taken as a wrong unit or a broken sensor, not as oil (the upper
# bound is far above any hydraulic oil's flash point; common practice, no source).
OIL_RANGE_C = (-60.0, 300.0)
AMBIENT_RANGE_C = (-60.0, 70.0)

_TEMPERATURE_UNITS = {"C": "degC", "F": "degF", "K": "K"}   # by the last letter of the column name


@dataclass(frozen=True)
class MeasuredLog:
    """A validated log, sorted by time, one row per distinct time.

    time_s (M,) s from the session start, strictly increasing. oil_K (M,) K, NaN where the reading
    was blank. ambient_K (M,) K or None. power_W (M,) W (mean over the interval ending at the row)
    or None. pull (M,) bool or None; NaN-free after reading (blank marker cells are counted and the
    interval takes the next row's value).
    """
    time_s: np.ndarray
    oil_K: np.ndarray
    ambient_K: np.ndarray | None
    power_W: np.ndarray | None
    pull: np.ndarray | None
    temperature_column: str
    n_rows: int
    n_skipped_cells: int
    n_merged_rows: int
    rows_reordered: bool
    largest_gap_s: float
    notes: tuple

    @property
    def n_points(self) -> int:
        """Rows with an oil temperature."""
        return int(np.count_nonzero(np.isfinite(self.oil_K)))

    @property
    def mean_ambient_K(self) -> float | None:
        if self.ambient_K is None or not np.any(np.isfinite(self.ambient_K)):
            return None
        return float(np.nanmean(self.ambient_K))

    @property
    def has_heat_input(self) -> bool:
        """True when the log itself defines the heat input (a power_W or pull column)."""
        return self.power_W is not None or self.pull is not None


def read_log_file(path, sensor: str = "bulk") -> MeasuredLog:
    """Read a log from a file (at most 20 MB)."""
    return read_log(log_file_text(path), sensor, source=str(path))


def log_file_text(path) -> str:
    """The text of a log file, after checking it exists and is at most 20 MB.
    UTF-8 (with or without a byte-order mark); other bytes are read as Latin-1, which keeps digits."""
    path = Path(path)
    if not path.is_file():
        raise ScenarioError("log", str(path), "an existing CSV file")
    size = path.stat().st_size
    if size > MAX_LOG_BYTES:
        raise ScenarioError("log", f"{size} bytes", f"a file of at most {MAX_LOG_BYTES} bytes (20 MB)")
    data = path.read_bytes()
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def read_log(text: str, sensor: str = "bulk", source: str = "log", require_heating: bool = True) -> MeasuredLog:
    """Parse and validate the CSV text of a log for a sensor ("bulk" or "return").

    require_heating : False for a log still being written (the live forecast): one reading is
    enough and no heating is required yet; every other check still holds.
    """
    if sensor not in ("bulk", "return"):
        raise ScenarioError("sensor", sensor, 'one of "bulk", "return"')
    size = len(text.encode("utf-8"))
    if size > MAX_LOG_BYTES:
        raise ScenarioError(source, f"{size} bytes", f"a file of at most {MAX_LOG_BYTES} bytes (20 MB)")
    numbered = [(n, line) for n, line in enumerate(text.lstrip("\ufeff").splitlines(), start=1)
                if line.strip() and not line.lstrip().startswith("#")]
    if not numbered:
        raise ScenarioError(source, "no header", "a CSV header line such as time_s,oil_C")
    if len(numbered) > MAX_LOG_ROWS + 1:
        raise ScenarioError(source, f"{len(numbered) - 1} rows", f"a log of at most {MAX_LOG_ROWS} rows "
                            "(log less often, or cut the log to the session)")
    _, header = numbered[0]
    delimiter = _delimiter(header)
    try:
        rows = list(csv.reader(io.StringIO("\n".join(line for _, line in numbered)), delimiter=delimiter))
    except csv.Error as error:
        raise ScenarioError(source, "a CSV it cannot read", f"a CSV with cells of at most {MAX_CELL_CHARS} "
                            f"characters and balanced quotes ({error})") from None
    too_long = next((i for i, row in enumerate(rows) if any(len(cell) > MAX_CELL_CHARS for cell in row)), None)
    if too_long is not None:
        raise ScenarioError(f"{source} line {numbered[too_long][0]}", "a cell of "
                            f"{max(len(c) for c in rows[too_long])} characters", f"cells of at most {MAX_CELL_CHARS} characters")
    names = [name.strip() for name in rows[0]]
    columns = _columns(names, sensor, source)
    notes = []
    used = {index for _, index in columns.values()}
    ignored = [name for i, name in enumerate(names) if i not in used and name]
    if ignored:
        notes.append("columns not used: " + ", ".join(ignored))
    if sensor == "return" and columns["temperature"][0].lower().startswith("return"):
        notes.append(f"sensor return: read column {columns['temperature'][0]}")

    skipped = 0
    times, values = [], {key: [] for key in ("oil", "ambient", "power", "pull")}
    fast = plain_rows(rows[1:], [n for n, _ in numbered[1:]], columns, len(names), MAX_LOG_SPAN_S)
    for (line_no, _), cells in zip(numbered[1:], rows[1:] if fast is None else []):
        cells = cells + [""] * (len(names) - len(cells))
        time_cell = cells[columns["time"][1]].strip()
        if time_cell.lower() in MISSING_CELLS:
            skipped += 1
            continue
        times.append((line_no, time_cell))
        name, index = columns["temperature"]
        values["oil"].append(_number(cells[index], source, line_no, name))
        for key in ("ambient", "power", "pull"):
            if key in columns:
                name, index = columns[key]
                values[key].append(_number(cells[index], source, line_no, name))
    if fast is not None:
        line_numbers, time_s, values = fast
    else:
        line_numbers = [n for n, _ in times]
    skipped += sum(int(np.count_nonzero(np.isnan(v))) for v in values.values() if len(v))
    if not line_numbers:
        raise ScenarioError(source, "no data rows", f"at least {MIN_POINTS} rows with a time and an oil temperature")

    if fast is None:
        time_s = _times_s(times, columns["time"][0], source)
    oil_K = _to_kelvin(np.array(values["oil"]), columns["temperature"][0])
    _check_range(oil_K, OIL_RANGE_C, columns["temperature"][0], source, line_numbers)
    ambient_K = None
    if "ambient" in columns:
        ambient_K = _to_kelvin(np.array(values["ambient"]), columns["ambient"][0])
        _check_range(ambient_K, AMBIENT_RANGE_C, columns["ambient"][0], source, line_numbers)
    power_W = np.array(values["power"]) if "power" in columns else None
    pull = np.array(values["pull"]) if "pull" in columns else None
    if power_W is not None:
        bad = np.nonzero((power_W < 0) | (power_W > MAX_POWER_W))[0]
        if bad.size:
            raise ScenarioError(f"{source} line {line_numbers[bad[0]]}, column {columns['power'][0]}",
                                float(power_W[bad[0]]), f"an absorbed power of zero or more and at most {MAX_POWER_W:g} W")
    if pull is not None:
        bad = np.nonzero(np.isfinite(pull) & (pull != 0) & (pull != 1))[0]
        if bad.size:
            raise ScenarioError(f"{source} line {line_numbers[bad[0]]}, column {columns['pull'][0]}",
                                float(pull[bad[0]]), "1 during a pull, else 0")

    order = np.argsort(time_s, kind="stable")
    reordered = bool(np.any(order != np.arange(order.size)))
    if reordered:
        notes.append("rows were not in time order; sorted")
    series = {"oil": oil_K, "ambient": ambient_K, "power": power_W, "pull": pull}
    time_s = time_s[order]
    series = {key: None if v is None else v[order] for key, v in series.items()}
    time_s, series, merged = _merge_equal_times(time_s, series)
    if merged:
        notes.append(f"{merged} rows shared a time with another row; their readings were averaged")
    for key in ("power", "pull"):
        if series[key] is not None:
            series[key] = _fill_inputs(series[key], key, source)
    if series["pull"] is not None:
        series["pull"] = np.asarray(series["pull"], dtype=float) > 0.5
    if skipped:
        notes.append(f"{skipped} blank or NaN cells skipped")

    gaps = np.diff(time_s)
    largest_gap = float(gaps.max()) if gaps.size else 0.0
    log = MeasuredLog(time_s=time_s, oil_K=series["oil"], ambient_K=series["ambient"], power_W=series["power"],
                      pull=series["pull"], temperature_column=columns["temperature"][0], n_rows=len(line_numbers),
                      n_skipped_cells=skipped, n_merged_rows=merged, rows_reordered=reordered,
                      largest_gap_s=largest_gap, notes=tuple(notes))
    if require_heating:
        _check_usable(log, source)
    if gaps.size >= 2 and largest_gap > max(10.0 * float(np.median(gaps)), MIN_REPORTED_GAP_S):
        at = float(time_s[np.argmax(gaps)])
        extra = (" The heat input over it is the power_W or pull of the row after it."
                 if log.has_heat_input else "")
        log = _with_note(log, f"gap of {largest_gap:.0f} s in the log after t = {at:.0f} s.{extra}")
    return log


def _with_note(log: MeasuredLog, note: str) -> MeasuredLog:
    return replace(log, notes=log.notes + (note,))


def _delimiter(header: str) -> str:
    for candidate in (",", ";", "\t"):
        if candidate in header:
            return candidate
    return ","


def _columns(names: list, sensor: str, source: str) -> dict:
    """Map each role to (header name, column index)."""
    lower = {name.lower(): i for i, name in reversed(list(enumerate(names)))}
    found = {}
    for role, options in (("time", ("time_s", "time")),):
        present = [o for o in options if o in lower]
        if not present:
            raise ScenarioError(f"{source} header", ",".join(names), "a time column named time_s (seconds) or time (ISO timestamps)")
        if len(present) > 1:
            raise ScenarioError(f"{source} header", ",".join(names), "one time column, time_s or time, not both")
        found[role] = (names[lower[present[0]]], lower[present[0]])
    oil = [f"oil_{u}" for u in "ckf" if f"oil_{u}" in lower]
    returns = [f"return_{u}" for u in "ckf" if f"return_{u}" in lower]
    chosen = returns if sensor == "return" and returns else oil
    if not chosen:
        raise ScenarioError(f"{source} header", ",".join(names), "an oil temperature column: oil_C, oil_F or oil_K")
    if len(chosen) > 1:
        raise ScenarioError(f"{source} header", ",".join(names), "exactly one oil temperature column, not "
                            + " and ".join(names[lower[c]] for c in chosen))
    found["temperature"] = (names[lower[chosen[0]]], lower[chosen[0]])
    ambient = [f"ambient_{u}" for u in "cf" if f"ambient_{u}" in lower]
    if len(ambient) > 1:
        raise ScenarioError(f"{source} header", ",".join(names), "at most one ambient column, ambient_C or ambient_F")
    if ambient:
        found["ambient"] = (names[lower[ambient[0]]], lower[ambient[0]])
    for role, name in (("power", "power_w"), ("pull", "pull")):
        if name in lower:
            found[role] = (names[lower[name]], lower[name])
    return found


def _number(cell: str, source: str, line_no: int, column: str) -> float:
    text = cell.strip()
    if text.lower() in MISSING_CELLS:
        return math.nan
    try:
        value = ascii_float(text)
    except ValueError:
        raise ScenarioError(f"{source} line {line_no}, column {column}", text,
                            f"{NUMBER_EXPECTED}, or a blank or NaN cell to skip") from None
    if math.isinf(value):
        raise ScenarioError(f"{source} line {line_no}, column {column}", text, "a finite number")
    return value


def _times_s(times: list, column: str, source: str) -> np.ndarray:
    """Seconds from the session start: time_s as given, ISO timestamps from the earliest one."""
    if column.lower() == "time_s":
        values = []
        for line_no, cell in times:
            try:
                value = ascii_float(cell)
            except ValueError:
                raise ScenarioError(f"{source} line {line_no}, column {column}", cell,
                                    f"seconds from the session start as {NUMBER_EXPECTED} "
                                    "(for clock times name the column time)") from None
            if not math.isfinite(value) or value < 0 or value > MAX_LOG_SPAN_S:
                raise ScenarioError(f"{source} line {line_no}, column {column}", cell,
                                    f"seconds from the session start, zero or more and at most {MAX_LOG_SPAN_S:.0f} (12 h)")
            values.append(value)
        return np.array(values)
    stamps = []
    for line_no, cell in times:
        try:
            ascii_float(cell)
            numeric = True
        except ValueError:
            numeric = False
        if numeric:
            raise ScenarioError(f"{source} line {line_no}, column {column}", cell,
                                "an ISO 8601 timestamp such as 2025-05-01T09:30:00 (for seconds name the column time_s)")
        try:
            stamps.append(datetime.fromisoformat(cell))
        except ValueError:
            raise ScenarioError(f"{source} line {line_no}, column {column}", cell,
                                "an ISO 8601 timestamp such as 2025-05-01T09:30:00") from None
    aware = {stamp.tzinfo is not None for stamp in stamps}
    if len(aware) > 1:
        raise ScenarioError(f"{source} column {column}", "mixed", "timestamps all with a time zone or all without")
    start = min(stamps)
    seconds = np.array([(stamp - start).total_seconds() for stamp in stamps])
    if seconds.max() > MAX_LOG_SPAN_S:
        raise ScenarioError(f"{source} column {column}", f"{seconds.max():.0f} s from the first timestamp",
                            f"a log spanning at most {MAX_LOG_SPAN_S:.0f} s (12 h)")
    return seconds


def _to_kelvin(values: np.ndarray, column: str) -> np.ndarray:
    return convert(values, _TEMPERATURE_UNITS[column[-1].upper()], "K")


def _check_range(values_K, range_C, column, source, line_numbers):
    low, high = range_C[0] + ZERO_CELSIUS_K, range_C[1] + ZERO_CELSIUS_K
    bad = np.nonzero(np.isfinite(values_K) & ((values_K < low) | (values_K > high)))[0]
    if bad.size:
        i = bad[0]
        raise ScenarioError(f"{source} line {line_numbers[i]}, column {column}", f"{values_K[i] - ZERO_CELSIUS_K:.2f} degC",
                            f"a temperature between {range_C[0]:g} and {range_C[1]:g} degC (check the unit in the header)")


def _merge_equal_times(time_s, series):
    """One row per distinct time: readings at the same time averaged (NaN ignored); a pull marker set
    if any merged row had it."""
    unique, first, counts = np.unique(time_s, return_index=True, return_counts=True)
    merged = int(time_s.size - unique.size)
    if not merged:
        return time_s, series, 0
    out = {}
    for key, values in series.items():
        if values is None:
            out[key] = None
            continue
        groups = np.split(values, first[1:])
        if key == "pull":
            out[key] = np.array([np.nanmax(g) if np.any(np.isfinite(g)) else np.nan for g in groups])
        else:
            out[key] = np.array([np.nanmean(g) if np.any(np.isfinite(g)) else np.nan for g in groups])
    return unique, out, merged


def _fill_inputs(values, key, source):
    """A blank power or pull cell leaves the interval to the next row that has a value (the value
    is the mean over the interval ending at its row); trailing blanks take the last value."""
    values = np.asarray(values, dtype=float)
    valid = np.isfinite(values)
    if not np.any(valid):
        raise ScenarioError(f"{source} column {key if key == 'pull' else 'power_W'}", "all blank",
                            "at least one value (or leave the column out)")
    index = np.arange(values.size)
    next_valid = np.minimum.accumulate(np.where(valid, index, values.size)[::-1])[::-1]
    last = index[valid][-1]
    return values[np.where(next_valid < values.size, next_valid, last)]


def _check_usable(log: MeasuredLog, source: str):
    """Enough readings, and heating in them."""
    if log.n_points < MIN_POINTS:
        raise ScenarioError(source, f"{log.n_points} points", f"at least {MIN_POINTS} rows with a time and an oil temperature")
    T = log.oil_K[np.isfinite(log.oil_K)]
    start = float(np.median(T[:3]))
    rise = float(T[3:].max()) - start
    if rise < MIN_RISE_K:
        raise ScenarioError(source, f"a rise of {rise:.2f} K above the first readings",
                            f"a log with heating in it: the oil rising at least {MIN_RISE_K:g} K")
    heat = []
    if log.power_W is not None:
        heat.append(np.any(log.power_W[1:] > 0) if log.time_s[0] == 0 else np.any(log.power_W > 0))
    if log.pull is not None:
        heat.append(np.any(log.pull))
    if heat and not any(heat):
        raise ScenarioError(source, "no power and no pull in the log",
                            "a log with heating in it: power_W above 0 or pull = 1 somewhere")
