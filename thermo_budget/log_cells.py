"""The cells of a log: a number, a time (seconds from the session start or ISO 8601 timestamps),
and a plain numeric log read column by column at once. Every refusal names the line, the column and
the value (measured_log reads the rest of the log)."""
from __future__ import annotations

import math
from datetime import datetime

import numpy as np

from .errors import ScenarioError

MAX_LOG_SPAN_S = 12 * 3600.0   # a test day; the fit integrates every logged second (found by the fuzz test)
MISSING_CELLS = {"", "nan", "na", "n/a", "null", "none", "-"}


def cell_number(cell: str, source: str, line_no: int, column: str) -> float:
    text = cell.strip()
    if text.lower() in MISSING_CELLS:
        return math.nan
    try:
        value = float(text)
    except ValueError:
        raise ScenarioError(f"{source} line {line_no}, column {column}", text,
                            "a number, or a blank or NaN cell to skip") from None
    if math.isinf(value):
        raise ScenarioError(f"{source} line {line_no}, column {column}", text, "a finite number")
    return value


def cell_times_s(times: list, column: str, source: str) -> np.ndarray:
    """Seconds from the session start: time_s as given, ISO timestamps from the earliest one."""
    if column.lower() == "time_s":
        values = []
        for line_no, cell in times:
            try:
                value = float(cell)
            except ValueError:
                raise ScenarioError(f"{source} line {line_no}, column {column}", cell,
                                    "seconds from the session start as a number (for clock times name the column time)") from None
            if not math.isfinite(value) or value < 0 or value > MAX_LOG_SPAN_S:
                raise ScenarioError(f"{source} line {line_no}, column {column}", cell,
                                    f"seconds from the session start, zero or more and at most {MAX_LOG_SPAN_S:.0f} (12 h)")
            values.append(value)
        return np.array(values)
    stamps = []
    for line_no, cell in times:
        try:
            float(cell)
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


def plain_rows(rows: list, line_numbers: list, columns: dict, width: int):
    """A log of plain finite numbers in seconds read column by column: (line numbers, time_s,
    {role: values}); None where any row needs the row-by-row reading (blank or missing cells, words,
    infinities, clock times, times out of range), which then reads it or names the cell."""
    if columns["time"][0].lower() != "time_s" or not rows or any(len(row) < width for row in rows):
        return None
    roles = (("oil", "temperature"), ("ambient", "ambient"), ("power", "power"), ("pull", "pull"))
    try:
        time_s = np.array([float(row[columns["time"][1]]) for row in rows])
        values = {key: np.array([float(row[columns[role][1]]) for row in rows]) if role in columns else []
                  for key, role in roles}
    except ValueError:
        return None
    plain = (np.all(np.isfinite(time_s)) and time_s.min() >= 0 and time_s.max() <= MAX_LOG_SPAN_S
             and not any(len(v) and np.any(np.isinf(v)) for v in values.values()))
    return (line_numbers, time_s, values) if plain else None
