"""A log before the fit (issue 13): a long log is thinned with its heat input kept exact and fits in
seconds; a log in another unit than its header, or far from the start temperature, is warned
about, and refused with --strict; unreadable CSV is our error."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.logs.calibrate import fit_log
from thermo_budget.cli import main
from thermo_budget.errors import ScenarioError
from thermo_budget.logs.log_checks import MAX_FIT_READINGS, plausibility_warnings, thin_for_fit
from thermo_budget.logs.measured_log import MAX_LOG_ROWS, read_log
from thermo_budget.inputs.scenario import limit_K, load_scenario

from conftest import SCENARIO_DIR

DEMO_LOG = SCENARIO_DIR / "demo_log.csv"
DEFAULT = SCENARIO_DIR / "default.toml"


def demo_rows() -> np.ndarray:
    return np.loadtxt(DEMO_LOG, delimiter=",", skiprows=2)


def dense_log_text(n_rows: int, seed: int = 1) -> str:
    """The synthetic demo log re-sampled to n_rows: readings interpolated with 0.05 K noise, each
    row's power and pull taken from the demo row whose interval holds it (so the heat input of
    each of the demo's intervals is spread over many rows)."""
    t, oil, ambient, power, pull = demo_rows().T
    times = np.linspace(0.0, t[-1], n_rows)
    index = np.clip(np.searchsorted(t, times), 0, t.size - 1)
    readings = np.interp(times, t, oil) + np.random.default_rng(seed).normal(0.0, 0.05, n_rows)
    lines = ["time_s,oil_C,ambient_C,power_W,pull"]
    lines += [f"{a:.3f},{b:.3f},{c:.2f},{d:.0f},{int(e)}"
              for a, b, c, d, e in zip(times, readings, ambient[index], power[index], pull[index])]
    return "\n".join(lines) + "\n"


def test_a_16000_row_log_is_thinned_and_fits():
    scenario = load_scenario(DEFAULT)
    result = fit_log(scenario, dense_log_text(16_000))
    assert result.n_points <= MAX_FIT_READINGS + 100
    assert any("thinned" in note for note in result.notes)
    # the demo log was made with convection 0.8 and capacity 1.2 (README)
    assert result.convection_multiplier == pytest.approx(0.8, rel=0.06)
    assert result.capacity_multiplier == pytest.approx(1.2, rel=0.03)


def test_thinning_keeps_the_heat_input_and_every_pull_edge():
    log = read_log(dense_log_text(8_000))
    thin = thin_for_fit(log)
    assert thin.time_s.size < log.time_s.size / 10
    energy = np.sum(np.diff(log.time_s, prepend=0.0) * log.power_W)
    thin_energy = np.sum(np.diff(thin.time_s, prepend=0.0) * thin.power_W)
    assert thin_energy == pytest.approx(energy, rel=1e-12)
    # every pull starts and ends on a kept row: the pulled time is the same
    pulled = np.sum(np.diff(log.time_s, prepend=0.0) * log.pull)
    assert np.sum(np.diff(thin.time_s, prepend=0.0) * thin.pull) == pytest.approx(pulled, rel=1e-12)
    assert read_log(DEMO_LOG.read_text()).time_s.size <= MAX_FIT_READINGS   # the demo is fitted as it is


def fahrenheit_under_celsius_header(rows: int | None = None) -> str:
    """The demo log's readings in degF, under the header oil_C (its first `rows` rows, or all)."""
    t, oil, ambient, power, pull = demo_rows()[:rows].T
    lines = ["time_s,oil_C,power_W,pull"]
    lines += [f"{a:.0f},{b * 1.8 + 32:.2f},{d:.0f},{int(e)}" for a, b, d, e in zip(t, oil, power, pull)]
    return "\n".join(lines) + "\n"


def test_degF_under_a_degC_header_is_named_as_the_likely_cause():
    scenario = load_scenario(DEFAULT)
    log = read_log(fahrenheit_under_celsius_header())
    warnings = plausibility_warnings(log, scenario.start_K, limit_K(scenario)[0], scenario.units)
    assert any("look like °F" in w and "oil_C" in w for w in warnings), warnings


def test_the_fit_carries_the_warning_and_strict_refuses(tmp_path, capsys):
    # the first 80 readings (two pulls and their waits): the warning is the same as on the whole
    # log, and a fit of readings that far off costs 2 s of CPU instead of 17 s
    path = tmp_path / "fahrenheit.csv"
    path.write_text(fahrenheit_under_celsius_header(rows=80), encoding="utf-8")
    assert main(["fit", str(DEFAULT), str(path)]) == 0
    out, _ = capsys.readouterr()
    assert "look like °F" in out
    assert main(["fit", str(DEFAULT), str(path), "--strict"]) == 2
    out, err = capsys.readouterr()
    assert out == "" and "look like °F" in err and len(err.strip().splitlines()) == 1


def test_a_first_reading_far_from_the_start_is_warned():
    scenario = load_scenario(DEFAULT)
    t, oil, _, power, pull = demo_rows().T
    text = "time_s,oil_C,power_W,pull\n" + "".join(f"{a:.0f},{b + 25:.2f},{d:.0f},{int(e)}\n"
                                                   for a, b, d, e in zip(t, oil, power, pull))
    warnings = plausibility_warnings(read_log(text), scenario.start_K, limit_K(scenario)[0], "SI")
    assert any("first reading" in w and "start temperature" in w for w in warnings), warnings
    assert not plausibility_warnings(read_log(DEMO_LOG.read_text()), scenario.start_K, limit_K(scenario)[0], "SI")


def test_a_giant_cell_is_our_error():
    text = "time_s,oil_C\n" + "\n".join(f"{i},{20 + i}" for i in range(20)) + "\n1," + "9" * 200_000 + "\n"
    with pytest.raises(ScenarioError, match="characters"):
        read_log(text)
    quoted = 'time_s,oil_C\n0,"' + "x" * 200_000 + '"\n'
    with pytest.raises(ScenarioError) as info:
        read_log(quoted)
    assert "\n" not in str(info.value) and len(str(info.value)) < 400


def test_too_many_rows_are_refused_with_the_cap():
    text = "time_s,oil_C\n" + "0,20\n" * (MAX_LOG_ROWS + 2)
    with pytest.raises(ScenarioError, match=str(MAX_LOG_ROWS)):
        read_log(text)


def test_thinning_note_says_its_ordinals_in_english():
    from thermo_budget.logs.log_checks import ordinal
    assert [ordinal(n) for n in (1, 2, 3, 4, 11, 12, 13, 21, 22, 23, 101, 112)] == [
        "1st", "2nd", "3rd", "4th", "11th", "12th", "13th", "21st", "22nd", "23rd", "101st", "112th"]
