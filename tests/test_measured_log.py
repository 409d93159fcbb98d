"""Reading a measured log: columns, units, sorting, duplicates, blanks, gaps, and every bad input.

Temperature conversions are checked against the definitions of the scales: T/K = t/degC + 273.15
and t/degF = 1.8 t/degC + 32 (NIST SP 811, 2008, section B.9, the defining relations).
"""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.cli import main
from thermo_budget.errors import ScenarioError
from thermo_budget.logs.measured_log import MAX_LOG_BYTES, MIN_POINTS, read_log, read_log_file
from thermo_budget.planning.answers import simulate, trace_csv
from thermo_budget.inputs.scenario import load_scenario

from conftest import SCENARIO_DIR


def rising(n=20, start=20.0, step=1.0, dt=10.0):
    """Rows (time_s, oil) of a log rising by `step` per row."""
    return [(i * dt, start + i * step) for i in range(n)]


def text(header, rows, comment=None):
    lines = ([comment] if comment else []) + [header] + [",".join(str(c) for c in row) for row in rows]
    return "\n".join(lines) + "\n"


# --- columns and units ----------------------------------------------------------------------

def test_seconds_and_celsius():
    log = read_log(text("time_s,oil_C", rising()))
    assert log.n_points == 20 and log.temperature_column == "oil_C"
    assert np.allclose(log.time_s, np.arange(20) * 10.0)
    assert np.allclose(log.oil_K, 293.15 + np.arange(20))          # NIST SP 811 B.9: K = degC + 273.15
    assert log.power_W is None and log.pull is None and log.ambient_K is None


def test_fahrenheit_and_kelvin_columns():
    # NIST SP 811 B.9: 32 degF = 273.15 K, 212 degF = 373.15 K
    rows = [(0, 32.0)] + [(10 * i, 32.0 + 10 * i) for i in range(1, 18)] + [(180, 212.0)]
    log = read_log(text("time_s,oil_F", rows))
    assert log.oil_K[0] == pytest.approx(273.15) and log.oil_K[-1] == pytest.approx(373.15)
    log_K = read_log(text("Time_S,Oil_K", [(t, T + 273.15) for t, T in rising()]))   # header case ignored
    assert np.allclose(log_K.oil_K, 293.15 + np.arange(20))


def test_ambient_power_and_pull_columns():
    rows = [(t, T, 18.0 + (i % 2) * 0.4, 5000 if i % 4 == 1 else 0, int(i % 4 == 1))
            for i, (t, T) in enumerate(rising())]
    log = read_log(text("time_s,oil_C,ambient_F,power_W,pull", [(t, T, a * 1.8 + 32, p, f) for t, T, a, p, f in rows]))
    assert log.mean_ambient_K == pytest.approx(18.2 + 273.15)
    assert log.power_W[1] == 5000 and log.pull[1] and not log.pull[2]
    assert log.has_heat_input


def test_iso_timestamps_count_from_the_earliest():
    rows = [(f"2025-06-03T08:{i // 6:02d}:{(i % 6) * 10:02d}", 20 + i) for i in range(20)]
    log = read_log(text("time,oil_C", rows))
    assert np.allclose(log.time_s, np.arange(20) * 10.0)
    zoned = [(f"2025-06-03T08:{i // 6:02d}:{(i % 6) * 10:02d}+02:00", 20 + i) for i in range(20)]
    assert np.allclose(read_log(text("time,oil_C", zoned)).time_s, np.arange(20) * 10.0)


def test_the_trace_csv_of_run_is_a_log_for_either_sensor():
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    trace = simulate(scenario)
    csv = trace_csv(trace)
    bulk, ret = read_log(csv, "bulk"), read_log(csv, "return")
    assert bulk.temperature_column == "oil_C" and ret.temperature_column == "return_C"
    assert np.allclose(bulk.oil_K, trace.T_K[:, 0, 0], atol=1e-3)
    assert np.allclose(ret.oil_K, trace.return_K[:, 0], atol=1e-3)
    assert np.allclose(bulk.power_W[1:], trace.power_W[1:, 0], rtol=1e-5)
    assert "wall_C" in " ".join(bulk.notes)                         # unused columns are listed


def test_comment_lines_semicolons_and_tabs():
    rows = rising()
    base = read_log(text("time_s,oil_C", rows))
    commented = read_log(text("time_s,oil_C", rows, comment="# SYNTHETIC: made up for a test"))
    semicolon = read_log("time_s;oil_C\n" + "".join(f"{t};{T}\n" for t, T in rows))
    tab = read_log("time_s\toil_C\n" + "".join(f"{t}\t{T}\n" for t, T in rows))
    for other in (commented, semicolon, tab):
        assert np.array_equal(other.oil_K, base.oil_K) and np.array_equal(other.time_s, base.time_s)


# --- robustness -------------------------------------------------------------------------------

def test_unsorted_rows_are_sorted():
    rows = rising()
    shuffled = [rows[i] for i in np.random.default_rng(3).permutation(len(rows))]
    log = read_log(text("time_s,oil_C", shuffled))
    assert np.allclose(log.time_s, np.arange(20) * 10.0) and np.allclose(log.oil_K, 293.15 + np.arange(20))
    assert log.rows_reordered and "sorted" in " ".join(log.notes)


def test_duplicate_times_are_merged_by_averaging():
    rows = rising() + [(50.0, 26.0), (50.0, 24.0)]     # 50 s already reads 25
    log = read_log(text("time_s,oil_C", rows))
    assert log.n_merged_rows == 2 and log.time_s.size == 20
    assert log.oil_K[5] == pytest.approx(25.0 + 273.15)
    assert "averaged" in " ".join(log.notes)


def test_blank_and_nan_cells_are_skipped_and_counted():
    rows = rising(24)
    rows[3] = (30.0, "")
    rows[7] = (70.0, "NaN")
    rows[9] = ("", 29.0)           # no time: the row is dropped
    log = read_log(text("time_s,oil_C", rows))
    assert log.n_skipped_cells == 3
    assert log.n_points == 21 and log.time_s.size == 23
    assert np.isnan(log.oil_K[3]) and np.isnan(log.oil_K[7])
    assert "3 blank or NaN cells" in " ".join(log.notes)


def test_a_blank_power_cell_leaves_its_interval_to_the_next_row():
    rows = [(t, T, 1000.0 * i) for i, (t, T) in enumerate(rising())]
    rows[4] = (40.0, 24.0, "")
    log = read_log(text("time_s,oil_C,power_W", rows))
    assert log.power_W[4] == 5000.0 and log.n_skipped_cells == 1


def test_gaps_are_tolerated_and_reported():
    rows = rising(12) + [(600.0 + 10 * i, 35.0 + i) for i in range(10)]
    log = read_log(text("time_s,oil_C", rows))
    assert log.largest_gap_s == pytest.approx(490.0)
    assert "gap of 490 s" in " ".join(log.notes)


# --- bad input: every case names what is wrong ------------------------------------------------

def _rows_text(header, cells):
    return header + "\n" + "".join(f"{a},{b}\n" for a, b in cells)


BAD_LOGS = [
    ("too few points", "time_s,oil_C\n0,20\n10,22\n20,24\n", "3 points", f"at least {MIN_POINTS}"),
    ("too few after blanks", _rows_text("time_s,oil_C", [(10 * i, "" if i > 3 else 20 + i) for i in range(20)]),
     "4 points", "rows with a time and an oil temperature"),
    ("no heating, flat", _rows_text("time_s,oil_C", [(10 * i, 40.0 + 0.1 * (i % 3)) for i in range(30)]),
     "rise of", "heating in it"),
    ("no heating, cooling only", _rows_text("time_s,oil_C", [(10 * i, 60.0 - i) for i in range(30)]),
     "rise of", "heating in it"),
    ("no heating, zero power", "time_s,oil_C,power_W\n" + "".join(f"{10 * i},{20 + i},0\n" for i in range(20)),
     "no power and no pull", "heating in it"),
    ("clock times in time_s", _rows_text("time_s,oil_C", [(f"08:00:{i:02d}", 20 + i) for i in range(20)]),
     "line 2, column time_s", "seconds from the session start as a number"),
    ("numbers in time", _rows_text("time,oil_C", [(i, 20 + i) for i in range(20)]),
     "column time", "ISO 8601 timestamp"),
    ("words in time", _rows_text("time,oil_C", [("yesterday", 20 + i) for i in range(20)]),
     "column time", "ISO 8601 timestamp"),
    ("mixed time zones", _rows_text("time,oil_C", [("2025-06-03T08:00:00" + ("Z" if i else ""), 20 + i)
                                                    for i in range(20)]), "column time", "all with a time zone"),
    ("negative seconds", _rows_text("time_s,oil_C", [(10 * i - 10, 20 + i) for i in range(20)]),
     "column time_s", "zero or more"),
    ("no time column", _rows_text("minutes,oil_C", [(i, 20 + i) for i in range(20)]),
     "header", "time_s (seconds) or time (ISO timestamps)"),
    ("two time columns", "time_s,time,oil_C\n0,2025-06-03T08:00:00,20\n", "header", "not both"),
    ("no oil column", _rows_text("time_s,temp", [(i, 20 + i) for i in range(20)]), "header", "oil_C, oil_F or oil_K"),
    ("two oil columns", "time_s,oil_C,oil_F\n0,20,68\n", "header", "exactly one oil temperature column"),
    ("text in a reading", _rows_text("time_s,oil_C", [(10 * i, "hot" if i == 5 else 20 + i) for i in range(20)]),
     "line 7, column oil_C", "a number"),
    ("reading in the wrong unit", _rows_text("time_s,oil_C", [(10 * i, 293.0 + 40 * i) for i in range(20)]),
     "column oil_C", "check the unit"),
    ("pull not 0 or 1", "time_s,oil_C,pull\n" + "".join(f"{10 * i},{20 + i},{2 if i == 3 else 0}\n" for i in range(20)),
     "column pull", "1 during a pull"),
    ("negative power", "time_s,oil_C,power_W\n" + "".join(f"{10 * i},{20 + i},{-5 if i == 3 else 100}\n" for i in range(20)),
     "column power_W", "zero or more"),
    ("only comments", "# nothing here\n", "no header", "CSV header"),
    ("header only", "time_s,oil_C\n", "no data rows", f"at least {MIN_POINTS}"),
]


@pytest.mark.parametrize("case, log_text, names, expected", BAD_LOGS, ids=[c[0] for c in BAD_LOGS])
def test_bad_log_raises_a_clear_error(case, log_text, names, expected):
    with pytest.raises(ScenarioError) as info:
        read_log(log_text)
    message = str(info.value)
    assert names in message and expected in message and "\n" not in message


def test_text_over_20_MB_is_refused():
    big = "time_s,oil_C\n" + "0,20\n" * (MAX_LOG_BYTES // 5 + 1)
    with pytest.raises(ScenarioError, match="20 MB"):
        read_log(big)


def test_file_over_20_MB_and_missing_file_are_refused(tmp_path):
    path = tmp_path / "big.csv"
    with path.open("wb") as handle:
        handle.truncate(MAX_LOG_BYTES + 1)
    with pytest.raises(ScenarioError, match="20 MB"):
        read_log_file(path)
    with pytest.raises(ScenarioError, match="an existing CSV file"):
        read_log_file(tmp_path / "absent.csv")


def test_a_file_in_latin_1_is_read(tmp_path):
    path = tmp_path / "logger.csv"
    path.write_bytes(("# Öltemperatur in °C\n" + text("time_s,oil_C", rising())).encode("latin-1"))
    assert read_log_file(path).n_points == 20


def test_unknown_sensor_is_refused():
    with pytest.raises(ScenarioError, match='sensor: got "wall"'):
        read_log(text("time_s,oil_C", rising()), sensor="wall")


@pytest.mark.parametrize("case, log_text, names, expected", BAD_LOGS[:8], ids=[c[0] for c in BAD_LOGS[:8]])
def test_bad_log_through_the_cli_exits_2_without_traceback(tmp_path, capsys, case, log_text, names, expected):
    path = tmp_path / "log.csv"
    path.write_text(log_text, encoding="utf-8")
    code = main(["fit", str(SCENARIO_DIR / "default.toml"), str(path)])
    captured = capsys.readouterr()
    assert code == 2
    assert captured.err.startswith("error: ") and expected in captured.err
    assert captured.err.count("\n") == 1 and "Traceback" not in captured.err + captured.out


def test_a_plain_long_log_reads_as_the_careful_reader_reads_it():
    """A long log of plain numbers is read at once; the same log with one blank cell goes through
    the row-by-row reader. Both give the same rows (bar the blank) and the same row count."""
    rows = [f"{t},{20 + 0.01 * t:.3f},{int(t % 60 < 10)},{7000 if t % 60 < 10 else 0}" for t in range(0, 3000, 2)]
    plain = read_log("time_s,oil_C,pull,power_W\n" + "\n".join(rows))
    blank = list(rows)
    blank[7] = blank[7].replace(blank[7].split(",")[1], "")
    careful = read_log("time_s,oil_C,pull,power_W\n" + "\n".join(blank))
    assert plain.n_rows == careful.n_rows == len(rows)
    assert careful.n_skipped_cells == 1 and plain.n_skipped_cells == 0
    assert np.array_equal(plain.time_s, careful.time_s) and np.array_equal(plain.pull, careful.pull)
    assert np.array_equal(np.delete(plain.oil_K, 7), np.delete(careful.oil_K, 7))
    assert np.isnan(careful.oil_K[7]) and np.array_equal(plain.power_W, careful.power_W)
