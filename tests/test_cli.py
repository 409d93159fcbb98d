"""The command line: exit codes, one-line errors without tracebacks, --json, --csv and --plot."""
import json
import subprocess
import sys

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
    pytest.importorskip("thermo_budget.plots",
                        reason="thermo_budget/plots.py is being written by another engineer")
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
