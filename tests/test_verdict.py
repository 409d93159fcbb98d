"""The verdict: on a failing rig it names the first pull over the limit, and every fix it lists,
applied alone to the scenario through the public API and run again, finishes the day; on a fitting
rig it says so. Invariants of our own model, no outside source."""
from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pytest

from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.planning.fixes import Fix
from thermo_budget.planning.verdict import Verdict, verdict
from thermo_budget.planning.verdict_day import Change, run_day, samples_of, share_fits

SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"
VERDICT_KEYS = {"fits", "first_pull_over_limit", "limit_C", "governing_limit", "peak_C", "confidence", "fixes"}


def _edited(scenario, **changes):
    """The scenario with keys replaced; "session.steps[i].key" reaches into the list of steps."""
    raw = copy.deepcopy(scenario.raw)
    for path, value in changes.items():
        *head, last = path.split(".")
        table = raw
        for part in head:
            name, _, index = part.partition("[")
            table = table.setdefault(name, {})
            if index:
                table = table[int(index.rstrip("]"))]
        table[last] = value
    return load_scenario(raw)


def _failing():
    """Rig A asked for 24 pulls of 9 kW."""
    return _edited(load_scenario(SCENARIOS / "default.toml"), **{"session.repeat": 24, "session.steps[0].power": "9 kW"})


@pytest.fixture(scope="module")
def failing():
    scenario = _failing()
    return scenario, verdict(scenario, {"pulls_planned": 24})


def _with_fix(scenario, fix: Fix):
    """The scenario with the fix applied alone, written as a user would write it in the file."""
    raw_steps = scenario.raw["session"]["steps"]
    if fix.kind == "wait":
        return _edited(scenario, **{f"session.steps[{i}].duration": f"{fix.value} s"
                                   for i, step in enumerate(raw_steps) if step["kind"] == "wait"})
    if fix.kind == "shorter_pulls":
        longest = max(step.duration_s for step in scenario.cycle if step.is_pull)
        return _edited(scenario, **{f"session.steps[{i}].duration": f"{step.duration_s * fix.value / longest} s"
                                   for i, step in enumerate(scenario.cycle) if step.is_pull})
    if fix.kind == "fewer_pulls":
        assert sum(step.is_pull for step in scenario.cycle) == 1
        return _edited(scenario, **{"session.repeat": int(fix.value)})
    if fix.kind == "cooler":
        return _edited(scenario, **{"cooler.specific_dissipation": f"{fix.value} W/K"})
    res = scenario.reservoir      # the oil, and its tank scaled to the same shape
    scale = (fix.value / 1000.0 / res.oil_volume_m3) ** (1.0 / 3.0)
    changes = {"reservoir.oil_volume": f"{fix.value} L", "reservoir.height": f"{res.height_m * scale} m"}
    for key in ("length", "width", "diameter"):
        if getattr(res, f"{key}_m") is not None:
            changes[f"reservoir.{key}"] = f"{getattr(res, f'{key}_m') * scale} m"
    return _edited(scenario, **changes)


def test_failing_rig_names_the_first_pull_over_the_limit(failing):
    scenario, v = failing
    assert not v.fits and v.governing_limit == "max_temperature"
    assert 1 <= v.first_pull_over_limit <= 24
    samples = samples_of(scenario)
    steps = list(scenario.steps)
    pull_at = [i for i, step in enumerate(steps) if step.is_pull]
    # the day stopped before the named pull finishes at the confidence; the day to the named pull does not
    before = run_day(scenario, samples, np.arange(samples.n), Change.none(samples.n),
                     steps=steps[:pull_at[v.first_pull_over_limit - 1]])
    through = run_day(scenario, samples, np.arange(samples.n), Change.none(samples.n),
                      steps=steps[:pull_at[v.first_pull_over_limit - 1] + 1])
    assert share_fits(before.clean, v.confidence) and not share_fits(through.clean, v.confidence)
    assert v.peak_C > v.limit_C


def test_every_fix_alone_finishes_the_day_in_a_rerun(failing):
    scenario, v = failing
    assert {fix.kind for fix in v.fixes} == {"wait", "oil_volume", "cooler", "fewer_pulls", "shorter_pulls"}
    for fix in v.fixes:
        assert fix.confidence == v.confidence
        fixed = _with_fix(scenario, fix)
        again = verdict(fixed, {"pulls_planned": sum(step.is_pull for step in fixed.steps)})
        assert again.fits, (fix, again)


def test_each_fix_changes_the_day_in_the_right_direction(failing):
    scenario, v = failing
    by_kind = {fix.kind: fix for fix in v.fixes}
    assert by_kind["wait"].value > 180.0 and by_kind["oil_volume"].value > 18.0
    assert by_kind["oil_volume"].tank_L > by_kind["oil_volume"].value
    assert by_kind["cooler"].value > 0.0
    assert by_kind["fewer_pulls"].value == v.first_pull_over_limit - 1
    assert 0.0 < by_kind["shorter_pulls"].value < 15.0


def test_fitting_rig_says_so():
    scenario = load_scenario(SCENARIOS / "default.toml")
    v = verdict(scenario, {"pulls_planned": 10})
    assert v.fits and v.first_pull_over_limit is None and v.fixes == ()
    assert v.peak_C < v.limit_C == 80.0


def test_report_json_carries_the_verdict_with_the_named_keys():
    from thermo_budget.planning.answers import report
    scenario = load_scenario(SCENARIOS / "us_units_fan.toml")
    result = report(scenario).to_json()
    assert set(result["verdict"]) == VERDICT_KEYS
    v = Verdict.from_json(result["verdict"])
    assert v.to_json() == result["verdict"]
    # the rig finishes at the point but not at 90 %: the verdict is the plan's, not the median's
    assert result["pulls_under_limit"] == result["pulls_planned"]
    assert not v.fits and v.first_pull_over_limit == result["plan_at_confidence"]["pulls_under_limit"] + 1
    for fix in result["verdict"]["fixes"]:
        unit_keys = {"value_s", "value_L", "value_W_per_K"} & set(fix)
        assert len(unit_keys) == (0 if fix["kind"] == "fewer_pulls" else 1)
        assert {"kind", "value", "confidence"} <= set(fix)


def test_band_off_judges_the_point_answer():
    scenario = _edited(_failing(), **{"uncertainty.enabled": False})
    v = verdict(scenario, {"pulls_planned": 24})
    assert samples_of(scenario).n == 1
    from thermo_budget.planning.answers import session_report
    point = session_report(scenario)
    assert v.fits == (point["time_to_limit_s"] is None)


def test_the_band_stays_when_the_point_answer_is_sustainable():
    """Rig A at 5.6 kW settles 1.5 K under its limit by the point model, yet many of its samples cross:
    the pull count's band and the plan are there, with the share of samples that never cross."""
    from thermo_budget.page.page_cards import pulls_card
    from thermo_budget.planning.answers import report
    scenario = _edited(load_scenario(SCENARIOS / "default.toml"), **{"session.steps[0].power": "5.6 kW"})
    answers = report(scenario)
    result = answers.to_json()
    assert result["sustainable"] and result["runs_before_limit"] is None
    share = result["sustainable_share"]
    assert 0.0 < share <= 0.95
    band = result["bands"]["runs_before_limit"]
    assert band is not None and band["p10"] is not None and band["p10"] > result["pulls_planned"]
    assert result["plan_at_confidence"]["runs_before_limit"] == band["p10"]     # 90 %: the 13th of 128
    card = pulls_card(answers, "SI")
    assert card.value == str(band["p10"]) and f"Sustainable in {100 * share:.0f} % of cases." in card.details


def test_the_page_and_the_text_say_what_the_verdict_says(failing):
    """The page's box and `run`'s text are drawn from the one Verdict: its word, its first pull over
    the limit and every fix, in the order given."""
    from thermo_budget.page.page_headline import verdict_html
    from thermo_budget.output.verdict_text import fix_text
    scenario, v = failing
    box = verdict_html(v, 24, "SI", band_on=True)
    assert 'data-fits="false"' in box and "DOES NOT FIT" in box and f"pull {v.first_pull_over_limit} of 24" in box
    positions = [box.index(fix_text(fix, "SI").replace("'", "&#x27;")) for fix in v.fixes]
    assert positions == sorted(positions) and len(positions) == 5
    from types import SimpleNamespace         # the Report's fields that the text reads
    result = SimpleNamespace(name="rig", units="SI", pulls_planned=24, verdict=v,
                             band=SimpleNamespace(uncertainty={"samples": 128}))
    from thermo_budget.output.verdict_text import summary_lines
    lines = summary_lines(result)
    assert lines[0].split(maxsplit=1)[1] == (f"does not fit: pull {v.first_pull_over_limit} of 24 crosses 80.0 °C "
                                              "(the hottest you allow the oil), at 90 % confidence")
    assert [line.strip()[2:] for line in lines[2:]] == [fix_text(fix, "SI") for fix in v.fixes]


def test_run_prints_the_verdict_first(tmp_path):
    import subprocess
    import sys
    out = subprocess.run([sys.executable, "-m", "thermo_budget", "run", str(SCENARIOS / "default.toml")],
                         capture_output=True, text=True, timeout=300, check=True).stdout.splitlines()
    assert out[1].strip().startswith("VERDICT          fits: 10 of 10 pulls, peak")
    assert "at 90 % confidence" in out[1]


@pytest.fixture(scope="module")
def failing_report():
    """The failing rig through report(): the verdict there reuses the band's session and sizing."""
    from thermo_budget.planning.answers import report
    scenario = _failing()
    return scenario, report(scenario)


def test_the_verdict_that_reuses_the_band_s_work_is_the_one_that_does_it_again(failing, failing_report):
    # the day as planned read off the band's session of the same samples; the wait, oil and cooler fixes
    # taken from the band's per-sample answers at the same target: the same fixes, to the searches'
    # resolution (both re-run on every sample before they are listed)
    _, alone = failing
    _, shared = failing_report
    assert (shared.verdict.fits, shared.verdict.first_pull_over_limit, shared.verdict.peak_C) == \
        (alone.fits, alone.first_pull_over_limit, alone.peak_C)
    by_kind = {fix.kind: fix.value for fix in alone.fixes}
    assert {fix.kind for fix in shared.verdict.fixes} == set(by_kind)
    for fix in shared.verdict.fixes:
        assert fix.value == pytest.approx(by_kind[fix.kind], rel=0.03), fix


def test_a_size_at_the_confidence_is_the_verdict_s_fix_where_both_answer_it(failing_report):
    """One figure per question: the band's cooler, wait and oil at 90 % (from its first 32 samples)
    and the verdict's fixes (re-run on all 128 of the whole day, stepped up where they fell short) are
    the same question on a rig with no cooler; the report, `run`'s text and the page's cards show the
    fix's value. (Before, the text said "at 90 % confidence 2.9 W/K" above a fix of 3.4 W/K.)"""
    from thermo_budget.page.page_cards import cooler_card, tank_card, wait_card
    from thermo_budget.planning.band_text import summary_lines as band_lines
    from thermo_budget.output.verdict_text import fix_text
    scenario, result = failing_report
    assert scenario.cooler_W_K == 0
    fixes = {fix.kind: fix for fix in result.verdict.fixes}
    keys = {"wait": "min_wait_s", "cooler": "cooler_required_W_per_K", "oil_volume": "min_oil_volume_L"}
    assert set(keys) <= set(fixes)
    for kind, key in keys.items():
        assert result.band.plan_at_confidence[key] == fixes[kind].value, kind
    cooler = fix_text(fixes["cooler"], "SI").split(" of ")[1]          # e.g. "1.8 W/K", rounded up
    assert f"at 90 % confidence {cooler}" in "\n".join(band_lines(result))
    card = cooler_card(result, "SI")
    assert f"{card.value} {card.unit}" == cooler + " of ETD"
    oil = tank_card(result, scenario.reservoir.oil_volume_m3, 0.05, "SI")
    assert f"use {oil.value} L of oil" in fix_text(fixes["oil_volume"], "SI")       # two decimals, both
    assert f"at 90 % confidence {oil.value} L" in "\n".join(band_lines(result))
    assert f"wait {wait_card(result, 60.0, 'SI').value} after" in fix_text(fixes["wait"], "SI")
    for system in ("SI", "US"):      # the tank that holds it: the same figure in the fix and on the card
        card = tank_card(result, scenario.reservoir.oil_volume_m3, scenario.reservoir.inner_volume_m3, system)
        tank = card.details[0].split("In a tank of ")[1].split(" (")[0]
        assert fix_text(fixes["oil_volume"], system).endswith(f"in a tank of the same shape of {tank}"), system


def test_every_fix_of_the_report_s_verdict_finishes_the_day_in_a_rerun(failing_report):
    scenario, result = failing_report
    for fix in result.verdict.fixes:
        fixed = _with_fix(scenario, fix)
        assert verdict(fixed, {"pulls_planned": sum(step.is_pull for step in fixed.steps)}).fits, fix


def test_every_fix_of_a_long_day_finishes_it_in_a_rerun():
    """A day of 100 pulls (past LONG_SESSION_CYCLES: decided from the periodic state where that
    proves it, followed only while open elsewhere), each fix applied alone and the day run again."""
    from thermo_budget.planning.answers import report
    scenario = _edited(load_scenario(SCENARIOS / "default.toml"), **{"session.repeat": 100})
    result = report(scenario)
    assert not result.verdict.fits and len(result.verdict.fixes) == 5
    for fix in result.verdict.fixes:
        fixed = _with_fix(scenario, fix)
        assert verdict(fixed, {"pulls_planned": sum(step.is_pull for step in fixed.steps)}).fits, fix


def test_skipping_the_samples_a_monotone_fix_cannot_fail_lists_the_same_fixes(failing, monkeypatch):
    """The re-run of a fix skips the samples that finish the day as planned, and after a step up those
    that finished at the smaller step (more cooler, oil or wait, or shorter pulls, can only cool a
    day). Re-running every sample every round, as before, lists the same fixes at the same values."""
    from thermo_budget.planning import fixes as fixes_module
    scenario, quick = failing
    monkeypatch.setattr(fixes_module, "_monotone_kinds", lambda scenario: set())
    everything = verdict(scenario, {"pulls_planned": 24})
    assert [(f.kind, f.value, f.tank_L) for f in quick.fixes] == [(f.kind, f.value, f.tank_L) for f in everything.fixes]


def test_a_day_that_starts_colder_than_its_air_is_re_run_whole():
    """Oil colder than the air is warmed by a cooler or a longer wait, so on such a day a sample that
    finished as planned can fail with the fix: every sample is re-run there. (An independent review's
    rig: 35 degC air, a 5 degC start, a 39 degC limit, engine-off waits. Skipping those samples listed
    a cooler of 535.5 W/K that only 97 of 128 samples finish the day with, 116 needed.)"""
    from thermo_budget.planning import fixes as fixes_module
    base = load_scenario(SCENARIOS / "default.toml")
    wait = next(i for i, step in enumerate(base.raw["session"]["steps"]) if step["kind"] == "wait")
    raw = base.raw
    raw["session"]["steps"][wait] = {"kind": "wait", "duration": raw["session"]["steps"][wait]["duration"], "engine": "off"}
    cold = _edited(load_scenario(raw), **{"ambient": "35 degC", "session.start_temperature": "5 degC",
                                          "fluid.max_temperature": "39 degC"})
    assert fixes_module._monotone_kinds(cold) >= {"cooler", "wait"}
    quick = verdict(cold, {"pulls_planned": 10})
    original = fixes_module._monotone_kinds
    try:
        fixes_module._monotone_kinds = lambda scenario: set()
        everything = verdict(cold, {"pulls_planned": 10})
    finally:
        fixes_module._monotone_kinds = original
    assert not quick.fits
    assert [(f.kind, f.value) for f in quick.fixes] == [(f.kind, f.value) for f in everything.fixes]


def test_a_longer_wait_counts_as_cooling_only_where_no_wait_heats_the_oil():
    from thermo_budget.planning.fixes import _monotone_kinds
    engine_off = load_scenario(SCENARIOS / "us_20hp_small_tank.toml")      # its waits: engine off
    assert _monotone_kinds(engine_off) == {"cooler", "oil_volume", "shorter_pulls", "wait"}
    idling = load_scenario(SCENARIOS / "default.toml")                       # its wait idles at 150 W
    assert _monotone_kinds(idling) == {"cooler", "oil_volume", "shorter_pulls"}
    wait = next(i for i, step in enumerate(idling.raw["session"]["steps"]) if step["kind"] == "wait")
    assert _monotone_kinds(_edited(idling, **{f"session.steps[{wait}].power": "0 W"})) == \
        {"cooler", "oil_volume", "shorter_pulls", "wait"}


@pytest.mark.parametrize("name", ["default.toml", "plastic_tank_cylinder.toml"])
def test_two_days_whose_starts_differ_by_d_never_peak_more_than_d_apart(name):
    """What lets a monotone fix's re-run skip a sample whose day starts d colder than its air
    (fixes._spare_needed_K): on the cooperative network two days that start d apart at every node
    stay ordered and never move further apart (the couplings only pull temperatures together and
    towards the air: a discrete maximum principle). Here the limiting peaks of days from the air and
    from d below it, on rigs from a small tank to four times the oil and with a cooler."""
    from thermo_budget.engine.outcome import limiting_peak_K
    from thermo_budget.engine.session import PLAN_RESOLUTION
    from thermo_budget.engine.solver import integrate
    from thermo_budget.inputs.rig_build import build_rig
    from thermo_budget.engine.long_session import COMPARISON_SLACK_K
    from thermo_budget.planning.session_runs import limits_K
    scenario = _edited(load_scenario(SCENARIOS / name), **{"session.repeat": 12})
    volumes = np.array([0.5, 1.0, 4.0, 1.0]) * scenario.reservoir.oil_volume_m3
    rig = build_rig(scenario, oil_volume_m3=volumes, cooler_W_K=np.array([0.0, 0.0, 0.0, 20.0]))
    air = scenario.ambient_K
    for d in (0.5, 3.0, 15.0):
        peaks = [limiting_peak_K(integrate(rig, scenario.steps, start, n_designs=volumes.size,
                                           resolution=PLAN_RESOLUTION), *limits_K(scenario))
                 for start in (air, air - d)]
        apart = peaks[0] - peaks[1]
        assert np.all(apart >= -1e-9) and np.all(apart <= d + COMPARISON_SLACK_K), (d, apart)
        assert np.any(apart > 0.05 * d)          # the early cycles keep a good part of the gap


def test_shorter_pulls_count_as_cooling_only_where_the_pulls_heat_the_oil():
    """Between idling waits that heat the oil, a pull weaker than the rig's losses leaves more of the
    day to the waits when it is cut: an independent review's rig (340 W pulls of 32 s, 400 W idling
    waits of 375 s) peaks 0.011 K warmer with its pulls cut by 8 %. There the pull kind must be
    re-run on every sample; with 9 kW pulls it may skip as before."""
    from thermo_budget.engine.outcome import limiting_peak_K
    from thermo_budget.engine.session import PLAN_RESOLUTION
    from thermo_budget.engine.solver import integrate
    from thermo_budget.planning.fixes import _monotone_kinds
    from thermo_budget.planning.session_runs import limits_K
    base = load_scenario(SCENARIOS / "default.toml")
    raw = copy.deepcopy(base.raw)
    raw["ambient"], raw["session"]["start_temperature"], raw["session"]["repeat"] = "33 degC", "34 degC", 39
    raw["session"]["steps"][0].update(duration="32 s", power="340 W")
    raw["session"]["steps"][1].update(duration="375 s", engine="idle", power="400 W", rpm=1250)
    raw.pop("uncertainty", None)
    weak = load_scenario(raw)
    peaks = []
    for fraction in (0.43, 0.43 * 0.92):
        rig, cycle_s = _pulls_cut(weak, fraction)
        trace = integrate(rig, weak.steps, weak.start_K, durations_s=cycle_s * weak.repeat, resolution=PLAN_RESOLUTION)
        peaks.append(limiting_peak_K(trace, *limits_K(weak))[0])
    assert peaks[1] > peaks[0] + 0.005                      # cutting the pulls warms this day
    assert "shorter_pulls" not in _monotone_kinds(weak)
    raw["session"]["steps"][0]["power"] = "9 kW"
    assert "shorter_pulls" in _monotone_kinds(load_scenario(raw))


def _pulls_cut(scenario, fraction):
    from thermo_budget.planning.verdict_day import Samples, changed_designs
    return changed_designs(scenario, Samples({}, 1), np.array([0]),
                           Change.of(np.array(["shorter_pulls"]), np.array([fraction])))


def test_a_step_up_re_runs_the_samples_that_finished_the_smaller_step_without_the_spare_they_need(monkeypatch):
    """The bookkeeping of fixes._verified on made-up peaks (the integration replaced): 20 samples, the
    oil fix. In round 1, samples 0-15 finish (2 mK under the target) and 16-19 fail, so 16 of 20 is
    short of the 90 % asked and the oil is stepped up. Samples 0-7 start 0.5 K colder than their air
    (spare needed 0.5 K): having finished with 2 mK to spare, they must be run again at the larger
    step; samples 8-15 start at their air (needed 0) and are not."""
    from thermo_budget.planning import fixes
    from thermo_budget.planning.session_runs import limits_K
    from thermo_budget.planning.verdict_day import DayOutcome, Samples
    scenario = _failing()
    target = limits_K(scenario)[0] - fixes.SEARCH_MARGIN_K
    n = 20
    runs = []

    def made_up(scenario, samples, sample_index, change, starts=None):
        runs.append(np.asarray(sample_index).copy())
        return np.where(np.asarray(sample_index) < 16, target - 0.002, target + 1.0) if len(runs) == 1 \
            else np.full(len(sample_index), target - 1.0)

    monkeypatch.setattr(fixes, "_peak_bounds", made_up)
    monkeypatch.setattr(fixes, "_spare_needed_K", lambda scenario, samples: np.where(np.arange(n) < 8, 0.5, 0.0))
    base = DayOutcome(*(np.full(n, target + 1.0) for _ in range(3)), np.zeros(n), np.zeros(n, bool))
    found = fixes._verified(scenario, Samples({}, n), {"oil_volume": 1.5 * scenario.reservoir.oil_volume_m3}, 0.9, base)
    assert [fix.kind for fix in found] == ["oil_volume"]
    assert len(runs) == 2 and np.array_equal(runs[0], np.arange(n))
    assert np.array_equal(np.sort(runs[1]), np.r_[np.arange(8), np.arange(16, 20)])
