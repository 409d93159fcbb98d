"""Fuzz tests (issue 13): mutated scenario files through `run --json`, mutated logs through `fit`.
Any input gives either exit 0 with every number finite, or our one-line error with exit 2: no other
exception, and no example over 10 s (hypothesis's deadline).

The examples come from a fixed seed (derandomize), 500 per test by default; THERMO_FUZZ_EXAMPLES
sets another number for a longer local run.
"""
from __future__ import annotations

import contextlib
import io
import json
import math
import os
import tempfile
from datetime import timedelta
from pathlib import Path

import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from thermo_budget.cli import main
from thermo_budget.answers import simulate, trace_rows
from thermo_budget.scenario import load_scenario

from conftest import base_raw
from thermo_budget.units import ZERO_CELSIUS_K

FUZZ = settings(max_examples=int(os.environ.get("THERMO_FUZZ_EXAMPLES", "500")), derandomize=True,
                deadline=timedelta(seconds=10), database=None, print_blob=True,
                suppress_health_check=list(HealthCheck))

WORKDIR = Path(tempfile.mkdtemp(prefix="thermo_budget_fuzz_"))


def fuzz_base() -> dict:
    """A short session (2 cycles) without the uncertainty band (its dozens of sampled rigs are
    tested in tests/test_bands.py), so that a valid example costs a fraction of a second."""
    raw = base_raw()
    raw["session"]["repeat"] = 2
    raw["uncertainty"] = {"enabled": False}
    return raw


BASE = fuzz_base()

NASTY_TEXT = ["18 L*10**10**10", "18 L/0", "18 (L", "1" * 2000 + " L", "1e-300 cm^3", "1e300 m", "nan L",
              "inf kW", "-5 L", "0 s", "20 delta_degC", "300 K", "77 degF", "5 gal", "3 hp", "10 m^3", "15 kW",
              "20 degC", "", " ", "\x00", "L", "1e5000 L", "18 ((L))", "18 L^10", "9" * 70, "√2 L", "２０ L"]
NASTY_NUMBERS = [0, -1, 1, 1e-300, 1e300, -1e300, 1e277, 5e-324, 10**30, 2**63, -(2**63), 0.5, 2.5, 75, 1000,
                 float("nan"), float("inf"), float("-inf"), -0.0]
values = st.one_of(st.sampled_from(NASTY_TEXT), st.sampled_from(NASTY_NUMBERS), st.text(max_size=12),
                   st.floats(), st.integers(), st.booleans(), st.just([]), st.just({}),
                   st.lists(st.sampled_from(NASTY_NUMBERS + NASTY_TEXT[:6]), max_size=3))


def leaf_paths(node, prefix=()):
    if isinstance(node, dict):
        for key, value in node.items():
            yield from leaf_paths(value, prefix + (key,))
    elif isinstance(node, list) and node and isinstance(node[0], dict):
        for i, value in enumerate(node):
            yield from leaf_paths(value, prefix + (i,))
    else:
        yield prefix


PATHS = list(leaf_paths(BASE)) + [("reservoir",), ("session", "steps"), ("units",), ("cooler",)]


def _parent(raw, path):
    node = raw
    for part in path[:-1]:
        node = node[part]
    return node


@st.composite
def mutated_scenario_bytes(draw) -> bytes:
    raw = json.loads(json.dumps(BASE))
    for _ in range(draw(st.integers(1, 3))):
        path = draw(st.sampled_from(PATHS))
        try:
            parent = _parent(raw, path)
        except (KeyError, IndexError, TypeError):
            continue
        if not isinstance(parent, (dict, list)):
            continue
        action = draw(st.sampled_from(["set", "set", "set", "drop", "typo", "extra", "us"]))
        key = path[-1]
        if action == "set":
            parent[key] = draw(values)
        elif action == "drop" and isinstance(parent, dict):
            parent.pop(key, None)
        elif action == "typo" and isinstance(parent, dict) and key in parent:
            parent[str(key)[:-1] or "x"] = parent.pop(key)
        elif action == "extra" and isinstance(parent, dict):
            parent[draw(st.text(min_size=1, max_size=8))] = draw(values)
        elif action == "us":
            raw["units"] = "US"
    try:
        text = tomli_w.dumps(raw)
    except (TypeError, ValueError):
        text = tomli_w.dumps(BASE)
    data = text.encode("utf-8", "surrogatepass")
    if draw(st.integers(0, 4)) == 0:      # damage the text itself
        at = draw(st.integers(0, len(data)))
        data = data[:at] + draw(st.binary(max_size=8)) + data[at + draw(st.integers(0, 6)):]
    return data


def run_cli(argv) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(argv)
    return code, out.getvalue(), err.getvalue()


def _no_constant(name):
    raise AssertionError(f"non-finite number in the JSON output: {name}")


def assert_finite_json(text: str):
    def walk(value):
        if isinstance(value, dict):
            for v in value.values():
                walk(v)
        elif isinstance(value, list):
            for v in value:
                walk(v)
        elif isinstance(value, float):
            assert math.isfinite(value)
    walk(json.loads(text, parse_constant=_no_constant))


OUTCOMES = {"scenario": {0: 0, 2: 0}, "log": {0: 0, 2: 0}}   # exit codes seen, for the record


def assert_result_or_our_error(code, out, err, kind="scenario"):
    OUTCOMES[kind][code] = OUTCOMES[kind].get(code, 0) + 1
    if code == 0:
        assert_finite_json(out)
        assert err == ""
    else:
        assert code == 2, (code, err)
        assert out == ""
        assert err.startswith("error: ") and err.count("\n") == 1, err
        assert len(err) < 1000


@FUZZ
@given(mutated_scenario_bytes())
def test_fuzz_scenario_loader_and_report(data):
    path = WORKDIR / "scenario.toml"
    path.write_bytes(data)
    assert_result_or_our_error(*run_cli(["run", str(path), "--json"]))


# ---------------------------------------------------------------- logs through fit

SCENARIO_PATH = WORKDIR / "fit_scenario.toml"
SCENARIO_PATH.write_text(tomli_w.dumps(BASE), encoding="utf-8")


def _base_log_rows():
    """time_s, oil_C, power_W, pull of the base scenario's trace, every other point (about 30 rows)."""
    rows = trace_rows(simulate(load_scenario(BASE)))[::2]
    return [[f"{r[0]:.2f}", f"{r[1]:.3f}", f"{r[5]:.1f}", "1" if r[5] > 1000 else "0"] for r in rows]


BASE_LOG = _base_log_rows()
HEADERS = ["time_s", "oil_C", "power_W", "pull"]
CELLS = st.one_of(st.sampled_from(["", "nan", "NaN", "-", "inf", "-inf", "1e308", "-1e308", "1e-300", "0", "-5",
                                   "2025-05-01T09:30:00", "9" * 400, "20,5", '"', "\x00", "1", "212", "293.15"]),
                  st.text(max_size=8), st.floats().map(repr), st.integers().map(str))


@st.composite
def mutated_log_text(draw) -> str:
    header = list(HEADERS)
    rows = [list(row) for row in BASE_LOG]
    columns = draw(st.sampled_from([[0, 1], [0, 1, 2], [0, 1, 3], [0, 1, 2, 3]]))
    for _ in range(draw(st.integers(1, 4))):
        action = draw(st.sampled_from(["cell", "cell", "cell", "header", "drop", "dup", "swap", "scale"]))
        i = draw(st.integers(0, len(rows) - 1)) if rows else 0
        if action == "cell" and rows:
            rows[i][draw(st.sampled_from(columns))] = draw(CELLS)
        elif action == "header":
            header[draw(st.sampled_from(columns))] = draw(st.sampled_from(
                ["oil_F", "oil_K", "time", "ambient_C", "return_C", "Time_S", "", "oil_C", "power_w", "x"]))
        elif action == "drop" and rows:
            del rows[i: i + draw(st.integers(1, 20))]
        elif action == "dup" and rows:
            rows.insert(i, list(rows[i]))
        elif action == "swap" and len(rows) > 1:
            j = draw(st.integers(0, len(rows) - 1))
            rows[i], rows[j] = rows[j], rows[i]
        elif action == "scale":   # the readings in another unit
            factor, offset = draw(st.sampled_from([(1.8, 32.0), (1.0, ZERO_CELSIUS_K), (1e6, 0.0), (-1.0, 0.0)]))
            for row in rows:
                try:
                    row[1] = f"{float(row[1]) * factor + offset:.3f}"
                except ValueError:
                    pass
    delimiter = draw(st.sampled_from([",", ",", ";", "\t"]))
    lines = [delimiter.join(header[c] for c in columns)]
    lines += [delimiter.join(row[c] for c in columns) for row in rows]
    text = "\n".join(lines) + "\n"
    if draw(st.integers(0, 5)) == 0:
        at = draw(st.integers(0, len(text)))
        text = text[:at] + draw(st.text(max_size=6)) + text[at:]
    return text


@FUZZ
@given(mutated_log_text(), st.sampled_from(["bulk", "return"]))
def test_fuzz_log_reader_and_fit(text, sensor):
    path = WORKDIR / "log.csv"
    path.write_bytes(text.encode("utf-8", "surrogatepass"))
    assert_result_or_our_error(*run_cli(["fit", str(SCENARIO_PATH), str(path), "--json", "--sensor", sensor]), kind="log")


def test_fuzz_outcomes_are_printed():
    print(f"fuzz exit codes (count by code): {OUTCOMES}")
