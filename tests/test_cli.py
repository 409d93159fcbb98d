"""The command line: exit codes, one-line errors without tracebacks, --json, --csv and --plot."""
import json
import subprocess
import sys

import numpy as np
import pytest

from thermo_budget.cli import main

from conftest import BAD_INPUTS, REPO, REQUIRED_JSON_KEYS, SCENARIO_DIR, bad_scenario_path, base_raw, write_toml

DEFAULT = str(SCENARIO_DIR / "default.toml")


@pytest.mark.parametrize("change, key", [(c, k) for _, c, k in BAD_INPUTS], ids=[i for i, _, _ in BAD_INPUTS])
def test_bad_input_exits_2_with_one_line_naming_the_key(tmp_path, capsys, change, key):
    path = bad_scenario_path(tmp_path, change)
    code = main(["run", str(path)])
    out, err = capsys.readouterr()
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert key in lines[0]
    assert "Traceback" not in err


def test_missing_file_exits_2(tmp_path, capsys):
    code = main(["run", str(tmp_path / "nowhere.toml")])
    _, err = capsys.readouterr()
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "nowhere.toml" in err


def test_directory_instead_of_file_exits_2(tmp_path, capsys):
    code = main(["run", str(tmp_path)])
    _, err = capsys.readouterr()
    assert code == 2 and "Traceback" not in err


def test_unwritable_csv_path_exits_2(tmp_path, capsys):
    code = main(["run", DEFAULT, "--csv", str(tmp_path / "no_such_dir" / "trace.csv")])
    _, err = capsys.readouterr()
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_module_entry_point_in_a_real_process(tmp_path):
    path = write_toml(tmp_path, {**base_raw(), "colour": "red"})
    done = subprocess.run([sys.executable, "-m", "thermo_budget", "run", str(path)], cwd=REPO,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2
    assert "colour" in done.stderr and "Traceback" not in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1


def test_run_json_and_csv(tmp_path, capsys, default_report):
    csv_path = tmp_path / "trace.csv"
    code = main(["run", DEFAULT, "--json", "--csv", str(csv_path)])
    out, err = capsys.readouterr()
    assert code == 0, err
    result = json.loads(out)
    for key in REQUIRED_JSON_KEYS:
        assert key in result, key
    for key in ("oil", "wall", "hardware"):
        assert key in result["heat_capacity_J_per_K"]
    assert {"flow_L_min", "pressure_bar"} <= set(result["pump"])
    # the same dict as the Python API, thermo_budget.report(scenario)
    assert result == json.loads(json.dumps(default_report))
    header, *rows = csv_path.read_text(encoding="utf-8").strip().splitlines()
    assert header == "time_s,oil_C,return_C,wall_C,hardware_C,power_W,hose_C"
    assert len(rows) > 10 and all(len(row.split(",")) == 7 for row in rows)


def test_run_summary_in_us_units(capsys):
    code = main(["run", str(SCENARIO_DIR / "us_units_fan.toml")])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert "°F" in out and "gpm" in out and "psi" in out and "hp" in out
    assert "°C" not in out
    assert len(out.splitlines()) >= 8


def test_run_summary_in_si_units(capsys):
    code = main(["run", str(SCENARIO_DIR / "plastic_tank_cylinder.toml")])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert "°C" in out and "L/min" in out and "bar" in out


def test_run_plot_writes_a_png(tmp_path, capsys):
    pytest.importorskip("thermo_budget.output.plots",
                        reason="thermo_budget/output/plots.py is being written by another engineer")
    png = tmp_path / "trace.png"
    code = main(["run", DEFAULT, "--plot", str(png)])
    _, err = capsys.readouterr()
    assert code == 0, err
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_usage_errors_exit_2(capsys):
    assert main([]) == 2
    assert main(["run"]) == 2
    assert main(["fly", DEFAULT]) == 2
    capsys.readouterr()


# ---------------------------------------------------------------- edges (issue 13)

import os  # noqa: E402


def run_process(*args, stdout=subprocess.PIPE, shell_pipe=None, timeout=120):
    if shell_pipe:
        command = " ".join([sys.executable, "-m", "thermo_budget", *args]) + " | " + shell_pipe
        return subprocess.run(["bash", "-o", "pipefail", "-c", command], cwd=REPO, capture_output=True, text=True,
                              timeout=timeout)
    return subprocess.run([sys.executable, "-m", "thermo_budget", *args], cwd=REPO, stdout=stdout,
                          stderr=subprocess.PIPE, text=True, timeout=timeout)


def test_a_closed_pipe_ends_quietly():
    done = run_process("run", DEFAULT, "--json", shell_pipe="head -c 10")
    assert "Broken pipe" not in done.stderr and "Traceback" not in done.stderr
    assert done.stderr.strip() == ""


@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="needs /dev/full")
def test_a_full_disk_exits_1_with_one_line():
    with open("/dev/full", "w") as full:
        done = run_process("run", DEFAULT, "--json", stdout=full)
    assert done.returncode == 1
    assert len(done.stderr.strip().splitlines()) == 1 and "no space left" in done.stderr


def test_outputs_never_overwrite_the_input(tmp_path, capsys):
    scenario = write_toml(tmp_path, base_raw())
    before = scenario.read_bytes()
    for option in ("--csv", "--plot"):
        assert main(["run", str(scenario), option, str(scenario)]) == 2
    log = tmp_path / "log.csv"
    log.write_bytes((SCENARIO_DIR / "demo_log.csv").read_bytes())
    assert main(["fit", str(scenario), str(log), "--write", str(log)]) == 2
    assert main(["fit", str(scenario), str(log), "--plot", str(tmp_path / "." / "log.csv")]) == 2
    assert scenario.read_bytes() == before
    _, err = capsys.readouterr()
    assert all("overwrite" in line for line in err.strip().splitlines())


def test_plot_into_a_missing_folder_is_refused_before_any_file_is_written(tmp_path, capsys):
    csv_path = tmp_path / "trace.csv"
    code = main(["run", DEFAULT, "--csv", str(csv_path), "--plot", str(tmp_path / "missing" / "trace.png")])
    _, err = capsys.readouterr()
    assert code == 2 and "--plot" in err and not csv_path.exists()


def test_an_oversized_sweep_is_refused_with_the_estimate(capsys):
    code = main(["sweep", DEFAULT, "--oil-volumes", "5:40:1000", "--coolers", "0:100:1000"])
    _, err = capsys.readouterr()
    assert code == 2 and "1000000 designs" in err and "MB" in err and len(err.strip().splitlines()) == 1


@pytest.mark.parametrize("grid", ["5:40:nan", "nan:40:5", "5:1e400:5", "0:40:5", "5:40:0", "5:4:5", "1:2", "5:40:5:1"])
def test_bad_sweep_grids_exit_2(grid, capsys):
    assert main(["sweep", DEFAULT, "--oil-volumes", grid, "--coolers", "0:10:2"]) == 2
    capsys.readouterr()


def test_sweep_text_in_the_scenarios_units_with_a_real_minimum_only(capsys):
    code = main(["sweep", str(SCENARIO_DIR / "us_units_fan.toml"), "--oil-volumes", "8:60:6", "--coolers", "0:60:4"])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert "gal" in out and "°F" in out and "BTU/hr/°F" in out
    assert " L" not in out and "W/K" not in out and "°C" not in out
    code = main(["sweep", DEFAULT, "--oil-volumes", "5:40:8", "--coolers", "0:100:45"])
    out, _ = capsys.readouterr()
    # the old text said "smallest oil volume that finishes: 5.0 L" once per cooler: the grid's edge
    assert out.count("5.0 L (a smaller volume") == 0
    assert len(out.splitlines()) < 45


def test_a_log_name_cannot_inject_a_table_into_the_calibrated_file(tmp_path, capsys):
    import tomllib
    log = tmp_path / "day\n[evil]\nx = 1\n.csv"
    # the demo log's first 80 readings: the file name is the point, and a short fit is cheap
    lines = (SCENARIO_DIR / "demo_log.csv").read_text(encoding="utf-8").splitlines(keepends=True)
    log.write_text("".join(lines[:82]), encoding="utf-8")
    out = tmp_path / "calibrated.toml"
    assert main(["fit", DEFAULT, str(log), "--write", str(out)]) == 0
    capsys.readouterr()
    document = tomllib.loads(out.read_text(encoding="utf-8"))
    assert "evil" not in document and document["losses"]["convection_multiplier"] > 0


def test_help_names_the_command():
    done = run_process("--help")
    assert done.returncode == 0 and "run" in done.stdout and "sweep" in done.stdout and "fit" in done.stdout


def test_run_ambients_gives_the_hot_day_and_refuses_a_bad_range(capsys):
    assert main(["run", DEFAULT, "--json", "--ambients", "20:40:3"]) == 0
    result = json.loads(capsys.readouterr().out)
    hot = result["hot_day"]
    assert hot["ambient_C"] == [20.0, 30.0, 40.0]
    # today's air: the report's count (None, "more than max_pulls", where the report's count passes the
    # hot day's max_pulls: the default's 42 since the standing loop oil, max_pulls 40)
    today = result["runs_before_limit"]
    assert hot["pulls_before_limit"][0] == (today if today <= hot["max_pulls"] else None)
    counts = [np.inf if p is None else p for p in hot["pulls_before_limit"]]
    assert counts == sorted(counts, reverse=True) and counts[-1] < np.inf   # hotter: never more
    assert "oil_ageing_equivalent_h" in result
    assert main(["run", DEFAULT, "--ambients"]) == 0
    out = capsys.readouterr().out
    assert "on a 35 °C day: " in out and "pulls" in out
    assert main(["run", DEFAULT, "--ambients", "40:20:3"]) == 2
    err = capsys.readouterr().err
    assert "--ambients" in err and "40:20:3" in err and "Traceback" not in err


def test_a_plain_run_loads_neither_scipy_nor_pint_nor_coolprop(tmp_path):
    # start-up (issue 13): these cost seconds; a run needs none of them, with the band off or on (the
    # band's Sobol points are shipped: uncertainty.standard_normals, make_sobol_table)
    raw = {**base_raw(), "uncertainty": {"enabled": False}}
    for path in (write_toml(tmp_path, raw), DEFAULT):
        code = ("import sys, io, contextlib; from thermo_budget.cli import main\n"
                f"with contextlib.redirect_stdout(io.StringIO()): assert main(['run', {str(path)!r}, '--json']) == 0\n"
                "print(sorted({m.split('.')[0] for m in sys.modules} & {'scipy', 'pint', 'CoolProp', 'matplotlib'}))")
        done = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True, text=True, timeout=120)
        assert done.returncode == 0, done.stderr
        assert done.stdout.strip() == "[]", path
    help_only = subprocess.run([sys.executable, "-c", "import sys; from thermo_budget.cli import main; main(['--help'])\n"
                                "print('numpy' in sys.modules)"], cwd=REPO, capture_output=True, text=True, timeout=60)
    assert help_only.stdout.strip().endswith("False")
