"""The fit: recovery of known multipliers from our own model's logs, honesty against a structurally
different model, the command line, and the shipped demo log.

Every rig and number here is invented for the tests. The synthetic logs are made with a finer
integration (3 s sub-steps) than the fit uses, so the fit's own discretisation is part of what is
tested.
"""
from __future__ import annotations

import json
from datetime import datetime, timedelta

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from thermo_budget.logs.calibrate import FIT_RESOLUTION, fit_log, log_model, predict_log_K
from thermo_budget.cli import main
from thermo_budget.errors import ScenarioError
from thermo_budget.logs.measured_log import read_log
from thermo_budget.physics.network import N_NODES, OIL, Inputs, node_equations
from thermo_budget.planning.answers import simulate, trace_csv
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.inputs.rig_build import build_rig
from thermo_budget.engine.session import Resolution, Step, pump_flow_m3_s
from thermo_budget.engine.solver import integrate

from conftest import SCENARIO_DIR, base_raw, set_path
from thermo_budget.units import ZERO_CELSIUS_K

NOISE_K = 0.3
FINE = Resolution(pull_substeps=4, curve_substeps=12, max_substep_s=2.5, max_substeps=100_000)   # the "truth" integration
LOG_INTERVAL_S = 20.0
COOL_DOWN_S = 5400.0


def own_rig_scenario():
    """16 pulls of 20 s at 5 kW with 1 min engine-off waits (steps line up with a 20 s log)."""
    raw = base_raw()
    set_path(raw, "session.repeat", 16)
    set_path(raw, "session.steps", [{"kind": "pull", "duration": "20 s", "power": "5 kW", "rpm": 3400},
                                    {"kind": "wait", "duration": "1 min", "engine": "off"}])
    return load_scenario(raw)


def truth_trace(scenario, steps, convection, capacity, start_K=None, ambient_K=None):
    rig = build_rig(scenario, convection_multiplier=convection, capacity_multiplier=capacity)
    if ambient_K is not None:
        rig = rig.with_changes(ambient_K=ambient_K)
    return integrate(rig, steps, scenario.start_K if start_K is None else start_K, resolution=FINE)


def sample(trace, interval_s):
    """Rows of the trace at multiples of interval_s: (times, bulk K, return K, mean power W over
    the interval ending at each row, pull flag of that interval)."""
    t = trace.time_s[:, 0]
    grid = np.arange(0.0, t[-1] + 1e-6, interval_s)
    rows = np.searchsorted(t, grid - 1e-6)
    assert np.allclose(t[rows], grid, atol=1e-6)
    energy = np.concatenate([[0.0], np.cumsum(trace.power_W[1:, 0] * np.diff(t))])[rows]
    power = np.concatenate([[0.0], np.diff(energy) / interval_s])
    pulls = np.concatenate([[0.0], (power[1:] > 1000.0).astype(float)])
    return grid, trace.T_K[rows, 0, OIL], trace.return_K[rows, 0], power, pulls


def csv_text(header, columns, comment=None):
    lines = ([f"# {comment}"] if comment else []) + [",".join(header)]
    lines += [",".join(c if isinstance(c, str) else f"{c:.4f}" for c in row) for row in zip(*columns)]
    return "\n".join(lines) + "\n"


# --- the fit's model is our model --------------------------------------------------------------

def test_vectorised_capacity_scaling_equals_the_capacity_multiplier():
    # Invariant: the fit scales the node capacities of N parameter sets at once; that must equal
    # build_rig(capacity_multiplier=...) run one at a time.
    scenario = own_rig_scenario()
    log = read_log(csv_text(["time_s", "oil_C"], [np.arange(0, 1400, 20.0), np.linspace(20, 45, 70)]))
    model = log_model(scenario, log)
    together = model.temperatures_K([0.6, 1.4], [1.3, 0.8])
    for row, (conv, cap) in enumerate([(0.6, 1.3), (1.4, 0.8)]):
        single = integrate(build_rig(scenario, convection_multiplier=conv, capacity_multiplier=cap),
                           [s for s in model.pieces], scenario.start_K, resolution=FIT_RESOLUTION)
        assert np.allclose(together[row], single.T_K[model.point_index, 0, OIL], atol=1e-9)


def test_fit_discretisation_error_is_well_below_the_noise():
    scenario = own_rig_scenario()
    steps = list(scenario.steps) + [Step(kind="wait", duration_s=COOL_DOWN_S, engine="off")]
    grid, bulk, ret, _, _ = sample(truth_trace(scenario, steps, 0.7, 1.3), LOG_INTERVAL_S)
    log = read_log(csv_text(["time_s", "oil_C"], [grid, bulk - ZERO_CELSIUS_K]))
    for sensor, truth in (("bulk", bulk), ("return", ret)):
        model = log_model(scenario, log, sensor).temperatures_K(0.7, 1.3)[0]
        assert np.max(np.abs(model - truth)) < 0.05 * NOISE_K


# --- recovery of known multipliers -------------------------------------------------------------

def test_recovers_known_multipliers_from_a_bulk_log_of_the_planned_steps():
    scenario = own_rig_scenario()
    steps = list(scenario.steps) + [Step(kind="wait", duration_s=COOL_DOWN_S, engine="off")]
    grid, bulk, _, _, _ = sample(truth_trace(scenario, steps, 0.7, 1.3), LOG_INTERVAL_S)
    noisy_C = bulk - ZERO_CELSIUS_K + np.random.default_rng(11).normal(0.0, NOISE_K, bulk.size)
    result = fit_log(scenario, csv_text(["time_s", "oil_C"], [grid, noisy_C]), sensor="bulk")
    for name, truth in (("convection_multiplier", 0.7), ("capacity_multiplier", 1.3)):
        value = getattr(result, name)
        low, high = result.ci95[name]
        assert abs(value / truth - 1.0) < 0.05
        assert low <= truth <= high
    assert result.converged and result.n_points == grid.size
    assert abs(result.rms_K - NOISE_K) < 0.05            # the residual is the noise, no more
    assert result.rms_uncalibrated_K > 5 * result.rms_K
    assert not any("cool-down" in w for w in result.warnings)
    assert "engine off" in " ".join(result.notes)          # the log runs past the planned steps


def test_recovers_multipliers_and_start_offset_from_a_return_line_log_with_its_own_heat_input():
    # ISO timestamps, degF, ambient logged (24 degC, scenario says 20), power and pull columns,
    # the oil starting 2 K above the scenario's start, rows shuffled: all at once.
    scenario = own_rig_scenario()
    steps = list(scenario.steps) + [Step(kind="wait", duration_s=COOL_DOWN_S, engine="off")]
    trace = truth_trace(scenario, steps, 0.7, 1.3, start_K=scenario.start_K + 2.0, ambient_K=297.15)
    grid, _, ret, power, pulls = sample(trace, LOG_INTERVAL_S)
    rng = np.random.default_rng(12)
    to_F = lambda K: (K - ZERO_CELSIUS_K) * 1.8 + 32.0
    oil_F = to_F(ret + rng.normal(0.0, NOISE_K, ret.size))
    ambient_F = to_F(297.15 + rng.normal(0.0, 0.3, ret.size))
    start = datetime(2025, 6, 3, 8, 15, 0)
    stamps = [(start + timedelta(seconds=float(t))).isoformat() for t in grid]
    order = rng.permutation(grid.size)
    columns = [[c[i] for i in order] for c in (stamps, oil_F, ambient_F, power, pulls)]
    text = csv_text(["time", "oil_F", "ambient_F", "power_W", "pull"], columns)
    result = fit_log(scenario, text, sensor="return", fit_start_offset=True)
    for name, truth, tolerance in (("convection_multiplier", 0.7, 0.05), ("capacity_multiplier", 1.3, 0.05)):
        assert abs(getattr(result, name) / truth - 1.0) < tolerance
        assert result.ci95[name][0] <= truth <= result.ci95[name][1]
    assert abs(result.start_offset_K - 2.0) < 0.3
    assert result.ci95["start_offset_K"][0] <= 2.0 <= result.ci95["start_offset_K"][1]
    assert result.ambient_source == "log mean" and abs(result.ambient_C - 24.0) < 0.1
    assert "power_W" in result.heat_input and "pull" in result.heat_input
    assert "sorted" in " ".join(result.notes)
    assert result.calibrated_scenario.convection_multiplier == pytest.approx(result.convection_multiplier, rel=1e-3)
    assert result.calibrated_scenario.start_K == scenario.start_K       # the offset is that day's only


def test_the_trace_csv_of_run_is_a_log_and_fits_back_to_its_own_multipliers():
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    text = trace_csv(simulate(scenario))
    for sensor in ("bulk", "return"):
        result = fit_log(scenario, text, sensor=sensor)
        assert result.convection_multiplier == pytest.approx(scenario.convection_multiplier, rel=0.02)
        assert result.capacity_multiplier == pytest.approx(scenario.capacity_multiplier, rel=0.01)
        assert result.rms_K < 0.02                        # the CSV keeps 6 significant figures


def test_a_log_without_cool_down_warns_that_the_parameters_are_hard_to_separate():
    scenario = own_rig_scenario()
    grid, bulk, _, _, _ = sample(truth_trace(scenario, list(scenario.steps)[:16], 0.7, 1.3), LOG_INTERVAL_S)
    noisy_C = bulk - ZERO_CELSIUS_K + np.random.default_rng(13).normal(0.0, NOISE_K, bulk.size)
    result = fit_log(scenario, csv_text(["time_s", "oil_C"], [grid, noisy_C]))
    text = " ".join(result.warnings)
    assert "no cool-down segment" in text
    assert "poorly determined" in text or "strongly correlated" in text
    low, high = result.ci95["convection_multiplier"]
    assert high / low > 1.3                                # and the interval says so


def test_a_wrong_start_temperature_is_flagged_and_the_offset_fit_removes_it():
    scenario = own_rig_scenario()
    trace = truth_trace(scenario, list(scenario.steps)[:16], 0.7, 1.3, start_K=scenario.start_K + 4.0)
    grid, bulk, _, _, _ = sample(trace, LOG_INTERVAL_S)
    text = csv_text(["time_s", "oil_C"], [grid, bulk - ZERO_CELSIUS_K + np.random.default_rng(15).normal(0.0, NOISE_K, bulk.size)])
    assert any("start_temperature" in w for w in fit_log(scenario, text).warnings)
    with_offset = fit_log(scenario, text, fit_start_offset=True)
    assert not any("start_temperature" in w for w in with_offset.warnings)
    assert abs(with_offset.start_offset_K - 4.0) < 0.3


# --- a structurally different truth -----------------------------------------------------------

EXTRA_MASS_J_K = 12.0 * 460.0     # 12 kg of steel (c = 460 J/(kg K), invented block on the tank)
EXTRA_TO_OIL_W_K = 15.0       # a slow mass: C / G is about 6 min
EXTRA_TO_AIR_W_K = 0.5


def four_node_log(scenario, blocks, interval_s):
    """A log from a model with one node more than ours: our nodes (conductances from
    thermo_budget.physics.network) plus a steel block coupled to the oil that our model lacks, integrated
    with solve_ivp (Radau, tight tolerances). blocks: list of steps. Returns (times, bulk K, power W,
    pull flag)."""
    rig = build_rig(scenario, convection_multiplier=0.85, capacity_multiplier=1.0)
    T_air = rig.ambient_K
    k = N_NODES
    state = np.full(k + 1, scenario.start_K)
    times, temps, powers, pulls = [0.0], [state[0]], [0.0], [0.0]
    t0 = 0.0
    for step in blocks:
        flow = float(pump_flow_m3_s(rig.displacement_m3, step.rpm if step.flowing else 0.0, rig.volumetric_efficiency))
        power = step.power_W if step.flowing else 0.0
        inputs = Inputs(power_W=np.array([power]), volume_flow_m3_s=np.array([flow]))

        def rhs(_, T):
            C, L, b, _, _ = node_equations(rig, T[None, :k], inputs)
            dT = (b[0] - L[0] @ T[:k]) / C[0]
            exchange = EXTRA_TO_OIL_W_K * (T[k] - T[0])
            dT[0] += exchange / C[0, 0]
            dT4 = (-exchange + EXTRA_TO_AIR_W_K * (T_air - T[k])) / EXTRA_MASS_J_K
            return np.append(dT, dT4)

        t_eval = np.arange(t0 + interval_s, t0 + step.duration_s + 1e-6, interval_s)
        solution = solve_ivp(rhs, (t0, t0 + step.duration_s), state, method="Radau", t_eval=t_eval,
                             rtol=1e-8, atol=1e-6)
        state = solution.y[:, -1]
        times += list(solution.t)
        temps += list(solution.y[0])
        powers += [power] * len(solution.t)
        pulls += [float(step.is_pull)] * len(solution.t)
        t0 += step.duration_s
    return np.array(times), np.array(temps), np.array(powers), np.array(pulls)


def test_structurally_different_truth_fits_honestly_and_predicts_held_out_part():
    scenario = own_rig_scenario()
    pull, wait = scenario.cycle
    off = lambda s: Step(kind="wait", duration_s=s, engine="off")
    day = [pull, wait] * 16 + [off(2400.0)] + [pull, wait] * 12 + [off(1200.0)]
    grid, bulk, power, pulls = four_node_log(scenario, day, LOG_INTERVAL_S)
    noisy_C = bulk - ZERO_CELSIUS_K + np.random.default_rng(14).normal(0.0, NOISE_K, bulk.size)
    split_s = 16 * 80.0 + 2400.0                           # fit the first block and its cool-down
    train = grid <= split_s
    header = ["time_s", "oil_C", "power_W", "pull"]
    full = [grid, noisy_C, power, pulls]
    result = fit_log(scenario, csv_text(header, [c[train] for c in full]))
    assert result.converged
    # RMS reported honestly: the RMS of the logged values minus the model re-run with the fitted
    # multipliers, at every row of the log
    train_log = read_log(csv_text(header, [c[train] for c in full]))
    refit = scenario.changed(**{"losses.convection_multiplier": result.convection_multiplier,
                                "losses.capacity_multiplier": result.capacity_multiplier})
    residual = np.round(noisy_C[train], 4) - (predict_log_K(refit, train_log) - ZERO_CELSIUS_K)
    assert result.n_points == train.sum()
    assert result.rms_K == pytest.approx(float(np.sqrt(np.mean(residual**2))), rel=1e-6)
    assert result.rms_K > 1.5 * NOISE_K                    # the missing mass shows in the residual
    assert any("correlated in time" in w for w in result.warnings)   # and the result says so
    # the held-out second block, predicted by the calibrated scenario from the start of the day
    log = read_log(csv_text(header, full))
    predicted = predict_log_K(result.calibrated_scenario, log) - ZERO_CELSIUS_K
    as_given = predict_log_K(scenario, log) - ZERO_CELSIUS_K
    held_out = ~train
    error = predicted[held_out] - bulk[held_out] + ZERO_CELSIUS_K
    error_as_given = as_given[held_out] - bulk[held_out] + ZERO_CELSIUS_K
    # Stated bound: the held-out block (12 pulls up to about 79 degC) is predicted within 2.5 K of
    # the truth (RMS within 2 K), at most half the error of the model as given. Measured when
    # written: RMS 1.5 K, largest 2.0 K, predicted low; as given RMS 5.0 K.
    assert np.max(np.abs(error)) < 2.5
    assert np.sqrt(np.mean(error**2)) < 2.0
    assert np.sqrt(np.mean(error**2)) < 0.5 * np.sqrt(np.mean(error_as_given**2))


# --- the command line ------------------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_paths():
    return SCENARIO_DIR / "default.toml", SCENARIO_DIR / "demo_log.csv"


def test_cli_fit_json_write_and_plot(tmp_path, capsys, demo_paths):
    scenario_path, log_path = demo_paths
    out_toml, out_png = tmp_path / "calibrated.toml", tmp_path / "fit.png"
    code = main(["fit", str(scenario_path), str(log_path), "--json", "--write", str(out_toml), "--plot", str(out_png)])
    assert code == 0
    result = json.loads(capsys.readouterr().out)
    for key in ("convection_multiplier", "capacity_multiplier", "ci95", "rms_K", "n_points", "warnings"):
        assert key in result
    assert set(result["ci95"]) >= {"convection_multiplier", "capacity_multiplier"}
    assert all(len(pair) == 2 and pair[0] < pair[1] for pair in result["ci95"].values() if pair)
    calibrated = load_scenario(out_toml)
    assert calibrated.convection_multiplier == pytest.approx(result["convection_multiplier"], rel=1e-3)
    assert calibrated.capacity_multiplier == pytest.approx(result["capacity_multiplier"], rel=1e-3)
    assert out_toml.read_text().startswith("# Calibrated by")
    assert out_png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_cli_fit_summary_names_the_numbers(tmp_path, capsys, demo_paths):
    log = tmp_path / "trace.csv"                   # the trace CSV of `run --csv`, a short log
    log.write_text(trace_csv(simulate(load_scenario(demo_paths[0]))))
    assert main(["fit", str(demo_paths[0]), str(log), "--sensor", "return"]) == 0
    out = capsys.readouterr().out
    assert "convection multiplier" in out and "capacity multiplier" in out and "RMS residual" in out


@pytest.mark.parametrize("log_text, key", [
    ("time_s,oil_C\n0,20\n10,21\n", "points"),
    ("time_s,oil_C\n" + "".join(f"{10 * i},20.0\n" for i in range(20)), "heating"),
    ("time_s,oil_C\n" + "".join(f"0:{i:02d},{20 + i}\n" for i in range(20)), "time_s"),
    ("when,oil_C\n" + "".join(f"{i},{20 + i}\n" for i in range(20)), "time column"),
])
def test_cli_bad_log_exits_2_with_one_line(tmp_path, capsys, log_text, key, demo_paths):
    path = tmp_path / "bad.csv"
    path.write_text(log_text)
    assert main(["fit", str(demo_paths[0]), str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and key in err and err.count("\n") == 1 and "Traceback" not in err


def test_cli_missing_and_oversized_log_exit_2(tmp_path, capsys, demo_paths):
    assert main(["fit", str(demo_paths[0]), str(tmp_path / "none.csv")]) == 2
    assert "an existing CSV file" in capsys.readouterr().err
    big = tmp_path / "big.csv"
    with big.open("wb") as handle:
        handle.truncate(20 * 1024 * 1024 + 1)
    assert main(["fit", str(demo_paths[0]), str(big)]) == 2
    assert "20 MB" in capsys.readouterr().err


def test_fit_rejects_an_unknown_sensor(demo_paths):
    with pytest.raises(ScenarioError, match="sensor"):
        fit_log(load_scenario(demo_paths[0]), demo_paths[1].read_text(), sensor="wall")


# --- the shipped demo log -------------------------------------------------------------------

DEMO_TRUTH = {"convection_multiplier": 0.8, "capacity_multiplier": 1.2, "ambient_C": 17.5, "seed": 2025}


def demo_log_text() -> str:
    """The synthetic demo log, scenarios/demo_log.csv: the default scenario's session run by our
    model with known multipliers and ambient, then 60 min engine off, logged every 15 s, with
    Gaussian noise of 0.3 K on oil_C and 0.2 K on ambient_C. Regenerate the file with
    python -c "import sys; sys.path.insert(0, 'tests'); import test_calibrate as t; open('scenarios/demo_log.csv', 'w').write(t.demo_log_text())"
    """
    scenario = load_scenario(SCENARIO_DIR / "default.toml")
    steps = list(scenario.steps) + [Step(kind="wait", duration_s=3600.0, engine="off")]
    truth = DEMO_TRUTH
    trace = truth_trace(scenario, steps, truth["convection_multiplier"], truth["capacity_multiplier"],
                        ambient_K=truth["ambient_C"] + ZERO_CELSIUS_K)
    grid, bulk, _, power, _ = sample(trace, 15.0)
    pulls = np.concatenate([[0], (power[1:] > 0.5 * 7000.0).astype(int)])
    rng = np.random.default_rng(truth["seed"])
    oil_C = bulk - ZERO_CELSIUS_K + rng.normal(0.0, 0.3, grid.size)
    ambient_C = truth["ambient_C"] + rng.normal(0.0, 0.2, grid.size)
    comment = ("SYNTHETIC demo log, not a measurement: made by thermo_budget's own model from "
               "scenarios/default.toml with convection_multiplier 0.8, capacity_multiplier 1.2, ambient 17.5 degC, "
               "then 60 min engine off; Gaussian noise 0.3 K on oil_C, 0.2 K on ambient_C (seed 2025). "
               "Made by tests/test_calibrate.py demo_log_text().")
    lines = [f"# {comment}", "time_s,oil_C,ambient_C,power_W,pull"]
    lines += [f"{t:.0f},{T:.2f},{a:.2f},{p:.0f},{int(f)}" for t, T, a, p, f in zip(grid, oil_C, ambient_C, power, pulls)]
    return "\n".join(lines) + "\n"


def test_demo_log_is_the_labelled_synthetic_log_it_claims_to_be(demo_paths):
    text = demo_paths[1].read_text()
    assert text.splitlines()[0].startswith("# SYNTHETIC")
    assert text == demo_log_text()


def test_demo_log_fit_recovers_its_known_multipliers(demo_log_fit):
    result = demo_log_fit      # fit_log of scenarios/demo_log.csv on scenarios/default.toml (conftest)
    for name in ("convection_multiplier", "capacity_multiplier"):
        low, high = result.ci95[name]
        assert low <= DEMO_TRUTH[name] <= high
        assert abs(getattr(result, name) / DEMO_TRUTH[name] - 1.0) < 0.1
    assert result.ambient_source == "log mean"


# --- the hardware coupling as an optional fitted parameter -------------------------------------

def _coupling_log(truth_coupling, steps):
    scenario = own_rig_scenario()
    rig = build_rig(scenario, convection_multiplier=0.7, capacity_multiplier=1.3).with_changes(
        hardware_coupling_multiplier=truth_coupling)
    grid, bulk, _, power, pulls = sample(integrate(rig, steps, scenario.start_K, resolution=FINE), LOG_INTERVAL_S)
    noisy_C = bulk - ZERO_CELSIUS_K + np.random.default_rng(11).normal(0.0, NOISE_K, bulk.size)
    return scenario, csv_text(["time_s", "oil_C", "power_W", "pull"], [grid, noisy_C, power, pulls])


def test_fits_the_hardware_coupling_where_long_pulls_show_it():
    # Pulls of 10 min (many times the bodies' time constant while oil flows) with engine-off waits:
    # the bulk oil shows how fast the bodies take up heat, and the fit recovers a coupling of 0.3
    # (with the other two multipliers) within its 95 % interval, without a warning about it.
    pull = Step(kind="pull", duration_s=600.0, engine="on", power_W=5000.0, rpm=3400.0)
    steps = [pull, Step(kind="wait", duration_s=1200.0, engine="off")] * 3
    scenario, text = _coupling_log(0.3, steps)
    result = fit_log(scenario, text, fit_hardware_coupling=True)
    for name, truth in (("convection_multiplier", 0.7), ("capacity_multiplier", 1.3),
                        ("hardware_coupling_multiplier", 0.3)):
        low, high = result.ci95[name]
        assert low <= truth <= high, (name, low, high)
    assert abs(result.hardware_coupling_multiplier / 0.3 - 1.0) < 0.15
    assert not any("hardware coupling" in w for w in result.warnings)
    assert result.calibrated_scenario.hardware_coupling_multiplier == pytest.approx(
        result.hardware_coupling_multiplier, rel=1e-3)
    assert result.to_dict(include_series=False)["hardware_coupling_multiplier"] is not None


def test_warns_where_the_log_cannot_identify_the_hardware_coupling():
    # 20-s pulls with 1-min engine-off waits: the bodies barely show in the bulk oil, the coupling
    # trades off against the heat loss, and the fit says so (and fits it only when asked). A 30-min
    # cool-down, not COOL_DOWN_S: the warning is about the pulls, and the same warning comes with
    # either (measured), at a third of the fitting cost.
    scenario = own_rig_scenario()
    steps = list(scenario.steps) + [Step(kind="wait", duration_s=1800.0, engine="off")]
    scenario, text = _coupling_log(0.3, steps)
    result = fit_log(scenario, text, fit_hardware_coupling=True)
    assert any("cannot identify the hardware coupling" in w for w in result.warnings)
    plain = fit_log(scenario, text)
    assert plain.hardware_coupling_multiplier is None and "hardware_coupling_multiplier" not in plain.ci95
