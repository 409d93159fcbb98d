"""A long log of plain numbers, as a logger writes it, read column by column at once (the log
reader, measured_log.read_log, reads anything else row by row and names any cell it refuses)."""
from __future__ import annotations

import re

import numpy as np

# Cells of nothing but digits, signs, decimal points and exponents: read by float() exactly as the
# row-by-row reader reads them.
_PLAIN_CELL = re.compile(r"[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?")   # ASCII digits only


def plain_rows(rows: list, line_numbers: list, columns: dict, width: int, max_span_s: float):
    """(line numbers, time_s, {"oil", "ambient", "power", "pull": values}) of a log in seconds
    whose used cells are all plain finite numbers and whose times lie in [0, max_span_s]; None
    for anything else (a blank, a word, NaN, clock times, a missing cell), which the row-by-row
    reader then reads."""
    if columns["time"][0].lower() != "time_s" or not rows or any(len(row) < width for row in rows):
        return None
    roles = (("oil", "temperature"), ("ambient", "ambient"), ("power", "power"), ("pull", "pull"))
    used = [columns["time"][1]] + [columns[role][1] for _, role in roles if role in columns]
    match = _PLAIN_CELL.fullmatch
    if not all(match(row[i].strip()) for row in rows for i in used):
        return None
    time_s = np.array([float(row[columns["time"][1]]) for row in rows])
    values = {key: np.array([float(row[columns[role][1]]) for row in rows]) if role in columns else []
              for key, role in roles}
    plain = (np.all(np.isfinite(time_s)) and time_s.min() >= 0 and time_s.max() <= max_span_s
             and not any(len(v) and np.any(np.isinf(v)) for v in values.values()))
    return (line_numbers, time_s, values) if plain else None
