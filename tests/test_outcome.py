"""Reading a trace against the limits: the optional return-line limit (hoses and seals) stops the
pull count when it is crossed first, and every sizing answer keeps both oils under their limits."""
from __future__ import annotations

import numpy as np
import pytest

from thermo_budget.engine.outcome import limit_crossed_first, limiting_peak_K, peak_oil_K, pulls_completed_under
from thermo_budget.planning.session_runs import session_trace
from thermo_budget.planning.answers import report, simulate
from thermo_budget.inputs.scenario import limit_K, load_scenario
from thermo_budget.inputs.rig_build import build_rig

from conftest import SCENARIO_DIR, base_raw, set_path


@pytest.fixture(scope="module")
def plain():
    # The base rig with 3-minute waits: its 4-minute waits became sustainable all day once the head
    # space and the standing loop oil were modelled (38 pulls before), and these tests need a count.
    raw = base_raw()
    raw["session"]["steps"][1]["duration"] = "3 min"
    return load_scenario(raw)


def _with_return_limit(scenario, celsius):
    raw = set_path(base_raw() if scenario is None else dict(scenario.raw), "hardware.return_line_max_temperature",
                   f"{celsius} degC")
    return load_scenario(raw)


def test_limiting_peak_is_the_bulk_peak_without_a_return_limit(plain):
    trace = simulate(plain)
    limit, _ = limit_K(plain)
    np.testing.assert_array_equal(limiting_peak_K(trace, limit), peak_oil_K(trace))
    # a return-line limit far above anything seen changes nothing
    assert limiting_peak_K(trace, limit, 1000.0)[0] == peak_oil_K(trace)[0]


def test_return_line_limit_between_the_two_peaks_stops_the_count_first(plain):
    base = report(plain).to_json()
    assert base["session_stopped_by"] in (None, "bulk") and base["runs_stopped_by"] == "bulk"
    # a return-line limit below the return-line peak but above the bulk peak of the planned session
    celsius = round(0.5 * (base["peak_C"] + base["peak_return_C"]), 1)
    limited = _with_return_limit(plain, celsius)
    answers = report(limited).to_json()
    assert answers["return_line_limit_C"] == pytest.approx(celsius)
    assert answers["session_stopped_by"] == "return_line"
    assert answers["pulls_under_limit"] < base["pulls_under_limit"] or base["pulls_under_limit"] < base["pulls_planned"]
    assert answers["runs_before_limit"] < base["runs_before_limit"]
    assert answers["runs_stopped_by"] == "return_line"
    # the bulk limit is unchanged, only the count stops earlier
    assert answers["limit_C"] == base["limit_C"]


def test_the_count_is_the_pulls_before_the_return_line_crosses(plain):
    trace = simulate(plain)
    limit, _ = limit_K(plain)
    return_limit = float(trace.return_K.max()) - 2.0
    under = int(pulls_completed_under(trace, limit, return_limit)[0])
    # by hand from the trace: the pulls before the first whose return-line peak passes the limit
    peaks = [trace.return_K[(trace.time_s[:, 0] > s) & (trace.time_s[:, 0] <= e), 0].max()
             for s, e in zip(trace.pull_start_s[:, 0], trace.pull_end_s[:, 0])]
    expected = next(i for i, p in enumerate(peaks) if p > return_limit)
    assert under == expected < len(peaks)
    assert limit_crossed_first(trace, limit, return_limit)[0] == "return_line"


def test_sizing_answers_keep_the_return_line_under_its_limit(plain):
    base = report(plain).to_json()
    limited = _with_return_limit(plain, round(base["peak_return_C"] - 3.0, 1))
    answers = report(limited).to_json()
    return_limit = limited.return_line_max_temperature_K
    limit, _ = limit_K(limited)
    # re-run with every wait at the minimum wait: both oils stay under their limits
    waits = [answers["min_wait_s"] if not s.is_pull else s.duration_s for s in limited.cycle]
    rerun = session_trace(limited, build_rig(limited), 1, wait_s=answers["min_wait_s"])
    assert rerun.return_K.max() <= return_limit and peak_oil_K(rerun)[0] <= limit
    assert answers["min_wait_s"] > (base["min_wait_s"] or 0.0)
    # the smallest oil volume and the cooler, likewise
    bigger = build_rig(limited, oil_volume_m3=answers["min_oil_volume_L"] / 1000.0, cooler_W_K=0.0)
    assert session_trace(limited, bigger, 1).return_K.max() <= return_limit
    cooled = build_rig(limited, cooler_W_K=max(answers["cooler_required_W_per_K"], 0.0))
    assert session_trace(limited, cooled, 1).return_K.max() <= return_limit
    # the schedule gives each pull's return-line peak, above its bulk peak
    for row in answers["schedule"]:
        assert row["peak_return_C"] > row["peak_C"]
        assert row["peak_return_C"] <= answers["return_line_limit_C"] + 1e-6
    assert len(waits) == len(limited.cycle)


def test_shipped_us_rig_stops_at_its_hoses():
    answers = report(load_scenario(SCENARIO_DIR / "us_20hp_small_tank.toml")).to_json()
    assert answers["runs_stopped_by"] == "return_line"
    assert answers["peak_return_C"] > answers["peak_C"]


def test_return_limit_below_the_start_is_refused():
    from thermo_budget.errors import ScenarioError
    with pytest.raises(ScenarioError, match="hardware.return_line_max_temperature"):
        _with_return_limit(None, 10.0)
