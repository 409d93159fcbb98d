"""Edges of the model (issue 13): states far outside the rig's range never crash the integrator,
a peak past the oil data gets a caution instead of a number, every answer is finite, and random
plausible rigs keep the invariants and give a report (20 and 6 here; 500 with THERMO_HEAVY=1). Speed
is measured in the benchmark, not here."""
from __future__ import annotations

import math

import numpy as np
import pytest

from thermo_budget import report
from thermo_budget.errors import ScenarioError
from thermo_budget.physics.network import N_NODES, OIL
from thermo_budget.engine.outcome import pulls_completed_under
from thermo_budget.planning.answers import BEYOND_RANGE_KEYS, check_finite, model_range_max_K, simulate
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.inputs.scenario import limit_K, load_scenario
from thermo_budget.engine.session import PLAN_RESOLUTION
from thermo_budget.engine.solver import GIVE_UP_ABOVE_K, integrate, propagate_linear

from conftest import SCENARIO_DIR, base_raw, set_path
from thermo_budget.units import ZERO_CELSIUS_K


def all_finite(value) -> bool:
    if isinstance(value, dict):
        return all(all_finite(v) for v in value.values())
    if isinstance(value, list):
        return all(all_finite(v) for v in value)
    return not isinstance(value, float) or math.isfinite(value)


def plastic_tank_40kW():
    """The reproducer: the plastic drum with 10 L of oil and pulls of 40 kW for 50 s, where the
    model's oil passes 400 degC and the eigen-solve used to fail."""
    scenario = load_scenario(SCENARIO_DIR / "plastic_tank_cylinder.toml")
    steps = [{"kind": "pull", "duration": "50 s", "power": "40 kW", "rpm": 3000}] + scenario.raw["session"]["steps"][1:]
    return scenario.changed(**{"reservoir.oil_volume": "10 L", "session.steps": steps})


def test_40kW_into_a_10L_plastic_tank_reports_with_a_caution():
    result = report(plastic_tank_40kW()).to_json()
    assert all_finite(result)
    assert result["beyond_model_range"] is True
    assert all(result[key] is None for key in BEYOND_RANGE_KEYS)
    assert "beyond the range" in result["cautions"][0]
    assert result["pulls_under_limit"] == 0
    assert result["min_oil_volume_L"] is None or result["min_oil_volume_L"] > 10.0


def test_a_30000_s_pull_on_the_default_scenario_reports():
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    steps = [dict(step, duration="30000 s") if step["kind"] == "pull" else step
             for step in scenario.raw["session"]["steps"]]
    result = report(scenario.changed(**{"session.steps": steps})).to_json()
    assert all_finite(result) and result["beyond_model_range"] and result["pulls_under_limit"] == 0


def test_a_design_far_past_the_limit_is_held_and_counted_as_over():
    scenario = plastic_tank_40kW()
    rig = build_rig(scenario, oil_volume_m3=np.array([0.0002, 0.01, 0.5]))   # 0.2 L, 10 L, 500 L
    trace = integrate(rig, scenario.steps, scenario.start_K, n_designs=3)
    oil = trace.T_K[:, :, OIL]
    assert np.all(np.isfinite(trace.T_K))
    assert oil[:, 0].max() > GIVE_UP_ABOVE_K > limit_K(scenario)[0]
    first = int(np.argmax(oil[:, 0] > GIVE_UP_ABOVE_K))
    assert np.all(oil[first:, 0] == oil[first, 0])        # held once past, not integrated on
    assert oil[:, 2].max() < limit_K(scenario)[0]          # 500 L stays cool
    # the energy balance still closes for every design (a held design gains nothing more)
    closure = trace.energy_in_J - trace.energy_lost_J - trace.energy_stored_J
    assert np.all(np.abs(closure) <= 1e-9 * trace.energy_in_J)


def test_the_eigen_solve_is_guarded_against_a_non_finite_system():
    C = np.array([[1e4, 2e3, 3e3], [1e4, 2e3, 3e3]])
    L = np.array([np.diag([1.0, 1.0, 1.0]), np.full((3, 3), np.nan)])
    b = np.zeros((2, 3))
    T0 = np.full((2, 3), 300.0)
    T1, T_int = propagate_linear(C, L, b, T0, np.array([10.0, 10.0]))
    assert np.all(np.isfinite(T1)) and np.all(np.isfinite(T_int))
    np.testing.assert_allclose(T1[1], T0[1])     # the bad design keeps its state


def test_a_peak_within_the_oil_data_is_a_number(default_report, default_scenario):
    assert default_report["beyond_model_range"] is False
    assert default_report["peak_C"] + ZERO_CELSIUS_K < model_range_max_K(default_scenario)


def test_a_non_finite_answer_is_refused_naming_it():
    with pytest.raises(ScenarioError, match=r"pump\.pressure_bar"):
        check_finite({"pump": {"pressure_bar": float("inf")}})


# ---------------------------------------------------------------- 500 random plausible rigs

def random_rig(rng) -> dict:
    """A plausible rig: tank 2-200 L, pulls of 1-40 kW for 5-60 s, waits of 0-20 min, ambient
    -10 to 45 degC, a steel, aluminium or plastic tank (invented ranges of the trade)."""
    raw = base_raw()
    raw["uncertainty"] = {"enabled": False}     # the band's sampled rigs are tested in tests/test_bands.py
    volume_L = float(rng.uniform(2.0, 200.0))
    side = (volume_L / 1000.0 / 0.7) ** (1.0 / 3.0)          # a cube-ish box, 70 % full
    material = str(rng.choice(["steel", "aluminium", "polyethylene"]))
    ambient = float(rng.uniform(-10.0, 45.0))
    wait = float(rng.uniform(0.0, 20.0 * 60.0))
    steps = [{"kind": "pull", "duration": f"{rng.uniform(5.0, 60.0):.3f} s",
              "power": f"{rng.uniform(1.0, 40.0):.3f} kW", "rpm": float(rng.uniform(1500, 6000))}]
    if wait >= 0.1:
        steps.append({"kind": "wait", "duration": f"{wait:.1f} s", "engine": str(rng.choice(["off", "idle"]))})
        if steps[-1]["engine"] == "idle":
            steps[-1].update(power=f"{rng.uniform(0, 500):.0f} W", rpm=1200)
    for path, value in (("ambient", f"{ambient:.2f} degC"), ("session.start_temperature", f"{ambient:.2f} degC"),
                        ("reservoir.oil_volume", f"{volume_L:.3f} L"), ("reservoir.length", f"{side:.4f} m"),
                        ("reservoir.width", f"{side:.4f} m"), ("reservoir.height", f"{side:.4f} m"),
                        ("reservoir.wall_material", material),
                        ("reservoir.wall_thickness", "6 mm" if material == "polyethylene" else "2 mm"),
                        ("fluid.max_temperature", f"{rng.uniform(max(ambient + 15, 50), 110):.1f} degC"),
                        ("fluid.min_viscosity", "8 cSt"), ("session.repeat", int(rng.integers(1, 4))),
                        ("session.steps", steps)):
        set_path(raw, path, value)
    return raw


def _random_scenarios(count, seed=13):
    """(raw, scenario) of `count` random rigs, and how many were refused."""
    rng = np.random.default_rng(seed)
    scenarios, refused = [], 0
    for _ in range(count):
        raw = random_rig(rng)
        try:
            scenarios.append((raw, load_scenario(raw)))
        except ScenarioError:
            refused += 1     # e.g. a limit the oil's viscosity sets below a hot ambient
    return scenarios, refused


TOL_K = 1e-6


def test_20_random_rigs_keep_the_invariants_over_a_long_day():
    """20 random rigs, each with three designs in one integration over 40 of its cycles: the rig,
    the rig with 1.5 x the oil (the tank scaled with it), the rig with a 40 W/K cooler running
    always (each integration stops once all three are over the limit, which leaves the counts as they
    are, tests/test_solver.py). More oil never means fewer pulls or a hotter peak; a cooler never makes the oil hotter
    at any moment; the energy balance closes for every design (conservation, to round-off)."""
    scenarios, refused = _random_scenarios(20)
    assert refused <= 3
    crossed = 0
    for raw, scenario in scenarios:
        V = scenario.reservoir.oil_volume_m3
        cooled = scenario.changed(cooler={"specific_dissipation": "40 W/K", "fan": "always"})
        rig = build_rig(cooled, oil_volume_m3=np.array([V, 1.5 * V, V]), cooler_W_K=np.array([0.0, 0.0, 40.0]))
        limit, _ = limit_K(scenario)
        trace = integrate(rig, list(scenario.cycle) * 40, scenario.start_K, n_designs=3,
                          resolution=PLAN_RESOLUTION, stop_above_K=limit)
        closure = trace.energy_in_J - trace.energy_lost_J - trace.energy_stored_J
        assert np.all(np.abs(closure) <= 1e-9 * trace.energy_in_J), raw
        oil = trace.T_K[:, :, OIL]
        assert oil[:, 1].max() <= oil[:, 0].max() + TOL_K, raw
        assert np.all(oil[:, 2] <= oil[:, 0] + TOL_K), raw
        assert np.all(oil >= scenario.ambient_K - 1e-6), raw    # heated from ambient, never below it
        pulls = pulls_completed_under(trace, limit)
        assert pulls[1] >= pulls[0] and pulls[2] >= pulls[0], (raw, pulls)
        crossed += pulls[0] < 40
    print(f"{crossed} of {len(scenarios)} rigs crossed their limit within 40 cycles")
    assert crossed >= 5     # the invariants are tested where the limit binds, not only on idle rigs


def test_6_random_rigs_report_finite_answers_that_agree_with_their_trace():
    """report() with every planning search on 6 random rigs (band off): every number finite, the
    energy balance closed, and the pulls under the limit those of its own session trace."""
    scenarios, _ = _random_scenarios(6, seed=17)
    assert len(scenarios) >= 5
    for raw, scenario in scenarios:
        trace = simulate(scenario)
        result = report(scenario, trace).to_json()
        assert all_finite(result), raw
        assert abs(result["energy_balance_rel_error"]) < 1e-6, raw
        limit, _ = limit_K(scenario)
        assert result["pulls_under_limit"] == int(pulls_completed_under(trace, limit)[0]), raw


@pytest.mark.heavy
def test_500_random_plausible_rigs_report_without_an_exception():
    scenarios, refused = _random_scenarios(500)
    for raw, scenario in scenarios:
        trace = simulate(scenario)
        result = report(scenario, trace).to_json()
        assert all_finite(result), raw
    assert refused < 50


# ---------------------------------------------------------------- hardening II: the ten edges (issue 22)
# Each case is refused with our one-line ScenarioError naming the key or option, or handled, and
# nothing is lost. Whole-process timings are in the report's benchmark figures, not asserted here.

import ast                        # noqa: E402
import contextlib                 # noqa: E402
import io                         # noqa: E402
import json                       # noqa: E402
import os                         # noqa: E402
import tracemalloc                # noqa: E402
from pathlib import Path          # noqa: E402

from thermo_budget.cli import main                                            # noqa: E402
from thermo_budget.logs.measured_log import read_log                               # noqa: E402
from thermo_budget.output_files import json_text, write_atomically            # noqa: E402
from thermo_budget.page.page_live import resolve_log_path                          # noqa: E402
from thermo_budget.planning.answers import energy_balance_rel_error, session_report     # noqa: E402
from thermo_budget.inputs.scenario_table import MAX_NESTING                          # noqa: E402

from conftest import REPO, write_toml                                         # noqa: E402

DEFAULT = str(SCENARIO_DIR / "default.toml")


def cli(argv) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(argv)
    return code, out.getvalue(), err.getvalue()


def assert_refused(result, name: str):
    code, out, err = result
    assert code == 2 and out == "", (code, err)
    assert err.startswith("error: ") and err.count("\n") == 1 and name in err, err


# 1. hard links: compared by device and inode; every output written whole, then renamed into place

def test_an_output_hard_linked_to_an_input_is_refused_and_the_input_kept(tmp_path):
    scenario = write_toml(tmp_path, base_raw())
    log = tmp_path / "log.csv"
    log.write_bytes((SCENARIO_DIR / "demo_log.csv").read_bytes())
    scenario_before, log_before = scenario.read_bytes(), log.read_bytes()
    os.link(scenario, tmp_path / "trace.csv")
    os.link(log, tmp_path / "calibrated.toml")
    os.link(scenario, tmp_path / "fit.png")
    assert_refused(cli(["run", str(scenario), "--csv", str(tmp_path / "trace.csv")]), "--csv")
    assert_refused(cli(["fit", str(scenario), str(log), "--write", str(tmp_path / "calibrated.toml")]), "--write")
    assert_refused(cli(["fit", str(scenario), str(log), "--plot", str(tmp_path / "fit.png")]), "--plot")
    assert scenario.read_bytes() == scenario_before and log.read_bytes() == log_before


def test_an_output_replaces_a_link_instead_of_writing_through_it(tmp_path):
    kept = tmp_path / "kept.txt"
    kept.write_text("the other file's contents")
    os.link(kept, tmp_path / "out.csv")
    write_atomically(tmp_path / "out.csv", "new contents\n")
    assert kept.read_text() == "the other file's contents"
    assert (tmp_path / "out.csv").read_text() == "new contents\n"
    assert not os.path.samefile(kept, tmp_path / "out.csv")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["kept.txt", "out.csv"]     # no temporary left


def test_a_failed_write_leaves_the_old_file_and_no_temporary(tmp_path, monkeypatch):
    import errno
    target = tmp_path / "trace.csv"
    target.write_text("old\n")

    def full_disk(fd):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(os, "fsync", full_disk)        # the disk fills while the new file is written
    with pytest.raises(OSError):
        write_atomically(target, "new\n" * 1000)
    assert target.read_text() == "old\n" and [p.name for p in tmp_path.iterdir()] == ["trace.csv"]


def test_every_writer_of_the_package_goes_through_the_one_helper():
    """No module writes an output file itself (write_text, write_bytes, savefig to a path, open for
    writing); only output_files does (the table makers in make_*.py write the package's own data)."""
    offenders = []
    for path in sorted((REPO / "thermo_budget").glob("*.py")):
        if path.name in ("output_files.py",) or path.name.startswith("make_"):
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
                name = node.func.attr
                if name in ("write_text", "write_bytes") or (
                        name == "savefig" and not any(k.arg == "format" for k in node.keywords)):
                    offenders.append(f"{path.name}:{node.lineno} {name}")
    assert offenders == []


def test_a_plot_in_a_format_we_cannot_write_is_refused_before_any_work(tmp_path):
    assert_refused(cli(["run", DEFAULT, "--csv", str(tmp_path / "t.csv"), "--plot", str(tmp_path / "t.xyz")]), "--plot")
    assert list(tmp_path.iterdir()) == []


# 2. a huge sweep grid: the count is checked before anything is built

@pytest.mark.parametrize("grid", ["5:40:1000000000000", "5:40:100000000"])
def test_a_huge_sweep_grid_is_refused_before_any_array_is_built(grid):
    tracemalloc.start()
    try:
        result = cli(["sweep", DEFAULT, "--oil-volumes", grid, "--coolers", "0:5:3"])
        _, peak_bytes = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert_refused(result, "designs")
    assert peak_bytes < 20 * 2**20          # the grid alone would be 0.8 GB to 8 TB


# 3. watch --interval has a range

@pytest.mark.parametrize("interval", ["inf", "nan", "-1", "0", "1e9", "1e-9"])
def test_watch_interval_outside_its_range_is_refused(tmp_path, interval):
    log = tmp_path / "log.csv"
    log.write_text("time_s,oil_C\n0,20\n")
    assert_refused(cli(["watch", DEFAULT, str(log), "--interval", interval]), "--interval")


# 4. the live page: a file name the system cannot take

@pytest.mark.parametrize("typed", ["a\x00b.csv", "log\n.csv", "\x1b[2Jlog.csv", "x" * 5000 + ".csv"])
def test_a_log_name_with_a_nul_byte_or_control_character_is_refused(tmp_path, typed):
    with pytest.raises(ScenarioError, match="log file"):
        resolve_log_path(tmp_path, typed)


def test_the_live_page_shows_our_message_for_a_nul_byte(tmp_path):
    from streamlit.testing.v1 import AppTest

    def app(folder_name):
        from pathlib import Path  # noqa: F811 (the app runs as a script of its own: its imports are its own)

        from thermo_budget.page.page_live import live_section
        from thermo_budget.inputs.scenario import DEFAULT_SCENARIO
        live_section(Path(DEFAULT_SCENARIO).read_text(), "SI", Path(folder_name))

    at = AppTest.from_function(app, args=(str(tmp_path),), default_timeout=60).run()
    at.text_input(key="live_log").set_value("today\x00.csv").run()
    assert not at.exception
    assert any("log file" in e.value and "NUL" in e.value for e in at.error)


# 5. a pull power below the floor; the energy balance for little heat in

@pytest.mark.parametrize("power", ["1e-300 hp", "0.5 W", "1e-30 kW", 0.2])
def test_a_pull_power_below_one_watt_is_refused_naming_the_key(power):
    raw = base_raw()
    raw["session"]["steps"][0]["power"] = power
    with pytest.raises(ScenarioError, match=r"session\.steps\[0\]\.power"):
        load_scenario(raw)


def test_a_curve_pull_absorbing_under_one_watt_is_refused():
    raw = base_raw()
    raw["session"]["steps"][0] = {"kind": "pull", "duration": "10 s", "curve_rpm": [2000, 4000],
                                  "curve_power": ["1e-6 W", "1e-6 W"], "rpm_start": 2000, "rpm_end": 4000}
    with pytest.raises(ScenarioError, match=r"session\.steps\[0\]\.curve_power"):
        load_scenario(raw)


def test_the_energy_balance_is_relative_to_the_largest_term():
    # the usual case: a session from ambient, where the heat in is the largest term
    assert energy_balance_rel_error(100.0, 60.0, 39.0) == pytest.approx(0.01)
    # almost no heat in and a warm start: relative to the heat lost, not to the heat in
    assert energy_balance_rel_error(1e-296, 5000.0, -5000.0 + 1e-9) == pytest.approx(-2e-13, rel=1e-3)
    assert energy_balance_rel_error(0.0, 0.0, 0.0) == 0.0


def test_a_one_watt_pull_from_a_warm_start_closes_its_balance():
    raw = base_raw()
    raw["uncertainty"] = {"enabled": False}
    raw["session"]["steps"][0]["power"] = "1 W"
    raw["session"]["start_temperature"] = "50 degC"
    scenario = load_scenario(raw)
    result = session_report(scenario, simulate(scenario))
    assert abs(result["energy_balance_rel_error"]) < 1e-9     # round-off, not 1e287


# 6. load_scenario(dict) refuses deep nesting as the TOML path does

def _nested(depth: int) -> dict:
    raw = base_raw()
    node = raw["losses"]
    for _ in range(depth):
        node["deeper"] = {}
        node = node["deeper"]
    return raw


@pytest.mark.parametrize("depth", [MAX_NESTING, 100_000])
def test_a_deeply_nested_dict_is_refused_cleanly(depth):
    with pytest.raises(ScenarioError, match="nested"):
        load_scenario(_nested(depth))


def test_a_dict_that_contains_itself_is_refused_cleanly():
    raw = base_raw()
    raw["losses"]["again"] = raw
    with pytest.raises(ScenarioError, match="nested"):
        load_scenario(raw)


def test_a_dict_nested_within_the_limit_gets_the_usual_message():
    with pytest.raises(ScenarioError, match=r"losses\.deeper: .*no such key"):
        load_scenario(_nested(MAX_NESTING - 2))


# 7. non-ASCII digits in a log

@pytest.mark.parametrize("text, column", [("time_s,oil_C\n0,20\n5,２０.5\n10,22\n", "oil_C"),
                                          ("time_s,oil_C\n0,20\n١٢,21\n20,22\n", "time_s"),
                                          ("time_s,oil_C\n0,20\n5,2_1\n10,22\n", "oil_C"),
                                          ("time_s,oil_C,power_W\n0,20,0\n5,21,٩٠٠٠\n10,22,0\n", "power_W")])
def test_non_ascii_digits_in_a_log_are_refused_naming_row_and_column(text, column):
    with pytest.raises(ScenarioError, match=rf"line 3, column {column}.*digits 0-9"):
        read_log(text, require_heating=False)


def test_ascii_numbers_in_every_usual_form_are_still_read():
    log = read_log("time_s,oil_C\n0,20\n5,+20.5\n10,2.1e1\n15,.5e2\n20, 23 \n", require_heating=False)
    np.testing.assert_allclose(log.oil_K - 273.15, [20, 20.5, 21, 50, 23])


# 8. every JSON writer is strict: non-finite numbers refused, or written as null on purpose

def test_json_text_refuses_a_non_finite_number_naming_it_or_writes_null():
    with pytest.raises(ScenarioError, match=r"peak_C\[1\]"):
        json_text({"peak_C": [20.0, float("nan")]})
    assert json.loads(json_text({"a": [1.0, float("inf")], "b": {"c": float("-inf")}}, non_finite="null")) == \
        {"a": [1.0, None], "b": {"c": None}}


def test_every_json_dumps_in_the_package_passes_allow_nan_false():
    calls = []
    for path in sorted((REPO / "thermo_budget").glob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr in ("dumps", "dump")
                    and isinstance(node.func.value, ast.Name) and node.func.value.id == "json"):
                strict = any(k.arg == "allow_nan" and isinstance(k.value, ast.Constant) and k.value.value is False
                             for k in node.keywords)
                calls.append((f"{path.name}:{node.lineno}", strict))
    assert calls and all(strict for _, strict in calls), calls


def test_sweep_json_is_strict_json(capsys):
    code, out, err = cli(["sweep", DEFAULT, "--oil-volumes", "10:20:2", "--coolers", "0:2:2", "--json"])
    assert code == 0 and err == ""
    json.loads(out, parse_constant=lambda name: pytest.fail(f"non-finite {name} in the JSON"))


# 9. a bare number under a temperature key that looks like the other unit: accepted, warned about

def test_a_temperature_that_looks_like_fahrenheit_in_an_si_file_is_warned_about(tmp_path):
    raw = base_raw()
    raw["uncertainty"] = {"enabled": False}
    raw["fluid"]["max_temperature"] = 176        # 176 degF is 80 degC; 176 degC is an unusual limit
    scenario = load_scenario(raw)
    assert scenario.max_temperature_K == pytest.approx(176 + 273.15)       # accepted as written
    assert len(scenario.warnings) == 1 and "fluid.max_temperature" in scenario.warnings[0]
    assert '"176 degF"' in scenario.warnings[0]
    code, out, err = cli(["run", str(write_toml(tmp_path, raw))])
    assert code == 0 and err.startswith("warning: fluid.max_temperature") and err.count("\n") == 1


def test_a_temperature_that_looks_like_celsius_in_a_us_file_is_warned_about():
    raw = base_raw()
    raw["units"] = "US"
    raw["fluid"]["max_temperature"] = 80         # 80 degF is 26.7 degC; meant 80 degC
    scenario = load_scenario(raw)
    assert any("fluid.max_temperature" in w and '"80 degC"' in w for w in scenario.warnings)


def test_usual_temperatures_and_strings_with_units_give_no_warning():
    raw = base_raw()
    raw["ambient"], raw["session"]["start_temperature"], raw["fluid"]["max_temperature"] = 25, 25, 85
    assert load_scenario(raw).warnings == ()
    raw["fluid"]["max_temperature"] = "176 degF"
    assert load_scenario(raw).warnings == ()


def test_an_ambient_refused_by_its_range_says_what_the_other_unit_would_mean():
    raw = base_raw()
    raw["ambient"] = 104                          # 104 degC ambient: out of range; 104 degF is 40 degC
    with pytest.raises(ScenarioError, match=r'ambient: got 104, .*as degF it would be 40 degC.*"104 degF"'):
        load_scenario(raw)


def test_the_page_shows_the_warning():
    from streamlit.testing.v1 import AppTest

    def app():
        from types import SimpleNamespace

        from thermo_budget.page import page_sections
        page_sections.errors(SimpleNamespace(upload_error=None, draft_error=None,
                                             scenario=SimpleNamespace(warnings=("fluid.max_temperature = 176 ...",))))

    at = AppTest.from_function(app, default_timeout=30).run()
    assert not at.exception and [w.value for w in at.warning] == ["fluid.max_temperature = 176 ..."]
# 10. a long planned day: accepted up to a bound on its work, integrated only until it is periodic

def test_a_planned_day_of_1000_pulls_is_accepted():
    raw = base_raw()
    raw["session"]["repeat"] = 1000
    scenario = load_scenario(raw)
    assert sum(step.is_pull for step in scenario.steps) == 1000


def test_a_session_past_its_work_bound_is_refused_naming_repeat():
    raw = base_raw()
    raw["session"]["steps"] = raw["session"]["steps"] * 6      # 6 x (1 + 2) sub-steps a cycle
    raw["session"]["repeat"] = 1000
    with pytest.raises(ScenarioError, match=r"session\.repeat: .*at most 15000 sub-steps.*at most 833 repeats"):
        load_scenario(raw)


@pytest.fixture(scope="module")
def long_day():
    """The base rig's cycle 400 times, integrated whole and as a long session."""
    from thermo_budget.engine import long_session
    from thermo_budget.engine.session import PLAN_RESOLUTION
    raw = base_raw()
    raw["session"]["repeat"] = 400
    scenario = load_scenario(raw)
    rig = build_rig(scenario)
    whole = integrate(rig, scenario.steps, scenario.start_K, resolution=PLAN_RESOLUTION)
    integrated_steps = []

    def counting(rig, steps, *args, **kwargs):
        integrated_steps.append(len(steps))
        return integrate(rig, steps, *args, **kwargs)

    original = long_session.integrate
    long_session.integrate = counting
    try:
        settled = long_session.integrate_session(rig, scenario, scenario.start_K, resolution=PLAN_RESOLUTION)
    finally:
        long_session.integrate = original
    return scenario, whole, settled, sum(integrated_steps)


def test_a_long_session_is_the_whole_integration_to_a_millikelvin(long_day):
    from thermo_budget.engine.outcome import first_crossing_s, pulls_completed_under
    scenario, whole, settled, _ = long_day
    for name in ("time_s", "step_index", "pull_start_s", "pull_end_s", "power_W"):
        np.testing.assert_array_equal(getattr(settled, name), getattr(whole, name), err_msg=name)
    # each chunk starts from the corrector systems the one before left (integrate's `systems`), so the
    # chunks are the whole integration; what the copied cycles leave out is PERIODIC_TOLERANCE_K:
    # measured 0.89 mK on the six-node model
    assert np.max(np.abs(settled.T_K[-1] - whole.T_K[-1])) < 1e-3
    assert np.max(np.abs(settled.T_K - whole.T_K)) < 1e-3 and np.max(np.abs(settled.return_K - whole.return_K)) < 1e-3
    limit = limit_K(scenario)[0]
    assert pulls_completed_under(settled, limit)[0] == pulls_completed_under(whole, limit)[0]
    np.testing.assert_allclose(first_crossing_s(settled, limit), first_crossing_s(whole, limit), atol=0.5)
    # energy: in equal to the whole's; the balance closes to round-off
    np.testing.assert_allclose(settled.energy_in_J, whole.energy_in_J, rtol=1e-12)
    closure = settled.energy_in_J - settled.energy_lost_J - settled.energy_stored_J
    assert np.all(np.abs(closure) <= 1e-9 * settled.energy_in_J)


def test_a_long_session_integrates_only_until_it_is_periodic(long_day):
    scenario, _, _, integrated_steps = long_day
    assert integrated_steps < 0.6 * len(scenario.steps)     # the rest are the last cycle repeated


def test_a_pull_s_extra_wait_searched_near_the_last_one_is_the_full_search_s():
    """The ready-to-pull schedule searches each pull's extra wait first near the one before; the
    answer passes and agrees with the full search to within that search's own bracket."""
    from thermo_budget.planning.session_runs import SEARCH_MARGIN_K
    from thermo_budget.planning.ready_schedule import extra_wait_s
    from thermo_budget.engine.outcome import peak_oil_K
    from thermo_budget.engine.session import PLAN_RESOLUTION
    scenario = load_scenario(base_raw())
    rig = build_rig(scenario)
    limit = limit_K(scenario)[0]
    pull, wait = scenario.cycle
    X = np.full((1, N_NODES), limit - 2.0)                                    # hot: the next pull needs a longer wait
    full = extra_wait_s(scenario, rig, X, pull, wait, limit)
    near = extra_wait_s(scenario, rig, X, pull, wait, limit, guess=1.1 * full)
    far = extra_wait_s(scenario, rig, X, pull, wait, limit, guess=10.0 * full)     # out of range: the full search
    assert full > 0 and far == full
    assert abs(near - full) < 0.002 * full                    # both brackets are about 0.1 % wide here
    for extra in (near, full):
        trace = integrate(rig, [wait.with_duration(extra), pull], X, resolution=PLAN_RESOLUTION)
        assert peak_oil_K(trace)[0] <= limit - SEARCH_MARGIN_K


def test_a_settled_schedule_repeats_its_last_cycle_as_the_pull_by_pull_search_would(monkeypatch):
    """Once the pulls' start states repeat (to PERIODIC_TOLERANCE_K, with the contraction bound) and
    their extra waits too, the schedule's later rows are its last cycle again: the same rows, to the
    search's resolution, as searching every pull. (On the six-node default the extra waits alternate
    by 0.02 s, the search's resolution, so the schedule is taken as settled here from pull 60 on.)"""
    from thermo_budget.planning import ready_schedule as rs
    scenario = load_scenario(SCENARIO_DIR / "default.toml").changed(**{"session.repeat": 80})  # over the limit from pull 43
    repeated = []
    original = rs._repeated_rows
    monkeypatch.setattr(rs, "_repeated_rows", lambda rows, p, count: repeated.append(count) or original(rows, p, count))
    monkeypatch.setattr(rs, "_schedule_settled", lambda pull_starts, rows, per_cycle, *a: len(rows) >= 60)
    settled = rs.ready_schedule(scenario, [])
    assert repeated and repeated[0] >= 10                     # the last rows were copied, not searched
    monkeypatch.setattr(rs, "_schedule_settled", lambda *args: False)
    searched = rs.ready_schedule(scenario, [])
    assert len(settled) == len(searched) == 80 and settled[-1]["extra_wait_s"] > 0
    for a, b in zip(settled, searched):
        assert a["index"] == b["index"]
        assert abs(a["extra_wait_s"] - b["extra_wait_s"]) < 0.05 and abs(a["start_s"] - b["start_s"]) < 1.0
        assert abs(a["start_C"] - b["start_C"]) < 0.002 and abs(a["peak_C"] - b["peak_C"]) < 0.002
