"""The band on every planning answer (issue 11): it collapses when off, it covers the truth about as
often as it says, it widens with its inputs, a log fit narrows it, and its order and plan hold."""
import dataclasses

import numpy as np
import pytest

from thermo_budget import build_rig, load_scenario, report
from thermo_budget.planning.bands import BAND_KEYS, SIZING_KEYS, sample_answers
from thermo_budget.planning.planning import runs_before_limit
from thermo_budget.planning.answers import planning_answers, session_report

from conftest import SHIPPED_SCENARIOS


@pytest.fixture(scope="module")
def default(default_scenario):
    return default_scenario


def _width(band):
    """P90 - P10; an edge of None (no crossing within the count) is infinite, and a band that is
    infinite at both edges is infinitely wide."""
    p10, p90 = (np.inf if band[k] is None else band[k] for k in ("p10", "p90"))
    return np.inf if np.isinf(p90) else p90 - p10


@pytest.mark.parametrize("table", [{"enabled": False},
                                   {"convection": "0 %", "oil_side": "0 %", "coupling": "0 %", "ambient": "0 K",
                                    "power": "0 %", "capacity": "0 %", "emissivity": "0 %", "body_emissivity": "0 %",
                                    "engine_off": "0 %", "floor": "0 %", "dry_shell": "0 %"}])
def test_off_every_band_collapses_to_the_point_and_points_are_unchanged(default, default_report, table):
    off = report(default.changed(uncertainty=table)).to_json()
    today = session_report(default)
    today.update(planning_answers(default))
    for key, value in today.items():
        assert off[key] == value == default_report[key], key
    for key in BAND_KEYS:
        value = today[key]
        assert off["bands"][key] == (None if value is None else {"p10": value, "p50": value, "p90": value})
        assert off["plan_at_confidence"].get(key, value) == value


def test_band_covers_the_truth_about_80_percent_of_the_time(default, default_report):
    """200 'true' rigs drawn independently (plain random normals, not the Sobol points) from the
    stated model, each simulated; the P10-P90 band of the pull count must cover their counts as often
    as the band's own samples say, within the binomial tolerance (3 sigma). The counts are whole
    numbers, so the closed band holds at least 80 % of the model's mass (the ties at its ends add to
    it); that expected figure is taken from the band's samples and must lie between 80 and 92 %."""
    band = default_report["bands"]["runs_before_limit"]
    model = default.uncertainty
    rng = np.random.default_rng(11)
    n = 200
    z = {f.key: rng.standard_normal(n) for f in model.active}
    w = model.widths
    base = build_rig(default)

    def multiplier(key):
        return np.exp(np.log1p(w[key]) * z[key])
    rig = base.with_changes(convection_multiplier=base.convection_multiplier * multiplier("convection"),
                            oil_side_multiplier=multiplier("oil_side"),
                            hardware_coupling_multiplier=multiplier("coupling"),
                            ambient_K=default.ambient_K + w["ambient"] * z["ambient"],
                            power_multiplier=multiplier("power"),
                            capacity_multiplier=base.capacity_multiplier * multiplier("capacity"),
                            wall_emissivity=np.minimum(base.wall_emissivity * multiplier("emissivity"), 1.0),
                            hardware_emissivity=np.minimum(base.hardware_emissivity * multiplier("body_emissivity"), 1.0),
                            engine_off_multiplier=multiplier("engine_off"), floor_multiplier=multiplier("floor"),
                            dry_shell_multiplier=multiplier("dry_shell"))
    truth = runs_before_limit(default, rig, n, np.zeros(n, bool), max_pulls=400)
    # a rig that never crosses within 400 pulls counts as infinite, as the band's samples do
    # (bands.sample_answers); a band edge of None is infinite too
    truth = np.where(np.isnan(truth), np.inf, truth)
    p10, p90 = (np.inf if band[k] is None else band[k] for k in ("p10", "p90"))
    observed = np.mean((truth >= p10) & (truth <= p90))
    samples = sample_answers(default, default_report)["runs_before_limit"]
    expected = np.mean((samples >= p10) & (samples <= p90))
    assert 0.80 <= expected <= 0.92
    tolerance = 3.0 * np.sqrt(expected * (1.0 - expected) / n)
    print(f"coverage {observed:.3f} of {n} true rigs; expected {expected:.3f} +- {tolerance:.3f}")
    assert abs(observed - expected) <= tolerance


def test_widening_the_inputs_never_narrows_the_band(default):
    widths = []
    for scale in (0.25, 0.5, 1.0, 2.0):
        r = report(dataclasses.replace(default, uncertainty=default.uncertainty.widened(scale))).to_json()
        widths.append([_width(r["bands"][key]) for key in ("runs_before_limit", "peak_C", "min_oil_volume_L")])
    widths = np.array(widths)
    # compared pairwise, not by np.diff: an unbounded band stays unbounded (inf >= inf; inf - inf is nan)
    assert np.all(widths[1:] >= widths[:-1]), widths


def test_a_log_fit_narrows_the_band(default, default_report, demo_log_fit):
    result = demo_log_fit
    calibrated = result.calibrated_scenario
    after = report(calibrated).to_json()
    prior_only = report(result.calibrated_scenario.changed(**{"uncertainty.posterior": None})).to_json()
    for key in ("runs_before_limit", "peak_C", "min_oil_volume_L"):
        assert _width(after["bands"][key]) < _width(default_report["bands"][key]), key
        assert _width(after["bands"][key]) <= _width(prior_only["bands"][key]), key


def _reports():
    yield "default+busy", None
    for path in SHIPPED_SCENARIOS:
        yield path.stem, path


@pytest.mark.parametrize("name, path", list(_reports()))
def test_order_holds_and_the_plan_is_never_bolder_than_p50(name, path, busy_report):
    r = busy_report if path is None else report(load_scenario(path)).to_json()
    for key in BAND_KEYS:
        band = r["bands"][key]
        assert (band is None) == (r[key] is None), key
        if band is None:
            continue
        values = [band["p10"], band["p50"], band["p90"]]
        finite = [v for v in values if v is not None]
        assert finite == sorted(finite), (key, band)
    plan = r["plan_at_confidence"]
    assert r["confidence"] == 0.9
    for key in ("pulls_under_limit", "runs_before_limit"):
        if plan[key] is not None:
            assert plan[key] <= r["bands"][key]["p50"], key
    time_p50 = r["bands"]["time_to_limit_s"]["p50"] if r["bands"]["time_to_limit_s"] else None
    if time_p50 is not None:       # sooner is bolder: the time planned for comes no later than the median
        assert plan["time_to_limit_s"] is not None and plan["time_to_limit_s"] <= time_p50
    for key in SIZING_KEYS:
        if plan[key] is not None and r["bands"][key]["p50"] is not None:
            assert plan[key] >= r["bands"][key]["p50"], key


def test_busy_session_bands_spread_around_the_point(busy_report):
    """Asked for 45 pulls, every sizing answer and the count have a band that really spreads
    (P10 < P90), and the point answer (every factor at its median) sits near the band's P50: within
    a quarter of the P10-P90 width (the answers are monotone in each factor, and each factor's median
    is its nominal value, so the median sample is close to the nominal rig). Measured when written:
    runs 40 against P50 39 (P10-P90 30-73), wait 193 s against 204 s (152-250 s), cooler 0.44
    against 0.72 W/K (0-2.15), volume 19.4 L against 20.2 L (14.6-25.3 L)."""
    for key in ("runs_before_limit", "min_wait_s", "cooler_required_W_per_K", "min_oil_volume_L"):
        band = busy_report["bands"][key]
        upper = np.inf if band["p90"] is None else band["p90"]     # None: unbounded (no crossing in the count)
        assert band["p10"] <= busy_report[key] <= upper, key
        assert band["p10"] < upper, key
        if band["p90"] is not None:
            assert abs(busy_report[key] - band["p50"]) <= 0.25 * (band["p90"] - band["p10"]), key
    ranking = busy_report["band_ranking"]
    shares = [row["share"] for row in ranking]
    assert sum(shares) == pytest.approx(1.0, abs=1e-3) and shares == sorted(shares, reverse=True)
    # the count is set by the heat put in and the heat shed: the pull's power or the air-side
    # convection leads (measured when written: power 48 %, convection 31 %)
    assert ranking[0]["factor"] in ("power", "convection")
    assert {row["factor"] for row in ranking[:2]} == {"power", "convection"}
    assert busy_report["band_advice"].startswith("The ")


def _planned_fraction_under(scenario, n, oil_volume_L=None, pulls=None):
    """Re-run the first n samples of the band (the same Sobol points through the same factor model)
    and return the fraction that stay under the limit: through the planned session at oil_volume_L,
    or through `pulls` pulls of the repeated cycle."""
    from thermo_budget.engine.outcome import peak_oil_K, pulls_completed_under
    from thermo_budget.inputs.scenario import limit_K
    from thermo_budget.engine.session import PLAN_RESOLUTION
    from thermo_budget.engine.solver import integrate
    from thermo_budget.inputs.uncertainty import factor_values, sample_rig, standard_normals

    values = factor_values(scenario.uncertainty, standard_normals(scenario.uncertainty, n))
    limit, _ = limit_K(scenario)
    if oil_volume_L is not None:
        rig = sample_rig(build_rig(scenario, oil_volume_m3=np.full(n, oil_volume_L / 1000.0)), values)
        trace = integrate(rig, scenario.steps, scenario.start_K, n_designs=n, resolution=PLAN_RESOLUTION)
        return float(np.mean(peak_oil_K(trace) <= limit))
    per_cycle = sum(step.is_pull for step in scenario.cycle)
    steps = list(scenario.cycle) * int(np.ceil(pulls / per_cycle))
    trace = integrate(sample_rig(build_rig(scenario), values), steps, scenario.start_K, n_designs=n,
                      resolution=PLAN_RESOLUTION)
    return float(np.mean(pulls_completed_under(trace, limit) >= pulls))


def test_plan_keeps_the_session_under_the_limit_in_the_chosen_fraction(default, default_report):
    """Re-run: the band's sampled rigs simulated again with the plan at 0.9. The planned oil volume
    finishes the planned session under the limit in at least 90 % of the sizing samples (32), the
    band's P50 volume in about half; the planned pull count is reached in at least 90 % of the
    samples (128), one pull more in fewer (the plan is the most that holds in 90 %)."""
    from thermo_budget.planning.bands import N_SAMPLES, N_SIZING_SAMPLES
    plan, bands = default_report["plan_at_confidence"], default_report["bands"]
    assert default_report["confidence"] == 0.9
    assert _planned_fraction_under(default, N_SIZING_SAMPLES, oil_volume_L=plan["min_oil_volume_L"]) >= 0.9
    assert 0.3 <= _planned_fraction_under(default, N_SIZING_SAMPLES,
                                          oil_volume_L=bands["min_oil_volume_L"]["p50"]) <= 0.7
    k = plan["runs_before_limit"]
    assert _planned_fraction_under(default, N_SAMPLES, pulls=k) >= 0.9
    assert _planned_fraction_under(default, N_SAMPLES, pulls=k + 1) < 0.9


def test_envelope_brackets_the_oil_temperature(default, default_report):
    """The P10-P90 envelope of the oil temperature: it starts at the start temperature, spreads once
    the pulls begin, holds the point trace (every factor at its median) between its edges at every
    time, and its P90 edge never passes the P90 of the samples' peaks (the largest of per-time P90s
    cannot exceed the P90 of per-sample maxima), while reaching above the point's peak."""
    from thermo_budget.planning.answers import simulate
    envelope = default_report["band_envelope"]
    t, p10, p90 = (np.array(envelope[key]) for key in ("time_s", "p10_C", "p90_C"))
    assert len(t) == len(p10) == len(p90) == len(envelope["p50_C"])
    assert p10[0] == p90[0] == pytest.approx(default_report["start_C"])
    assert np.all(p10 <= p90 + 1e-9) and np.all(p90[t > 60.0] - p10[t > 60.0] > 0.1)
    trace = simulate(default)
    point_C = np.interp(t, trace.time_s[:, 0], trace.T_K[:, 0, 0] - 273.15)
    assert t[-1] == pytest.approx(trace.time_s[-1, 0])
    assert np.all(p10 - 0.01 <= point_C) and np.all(point_C <= p90 + 0.01)
    assert default_report["peak_C"] < p90.max() <= default_report["bands"]["peak_C"]["p90"] + 0.01


def test_the_time_to_the_limit_planned_for_is_reached_no_sooner_in_the_chosen_fraction(busy_scenario, busy_report):
    """Re-run: the band's 128 sampled rigs simulated again; at least 90 % of them reach the limit no
    sooner than the time planned for, and fewer than 90 % no sooner than a second later."""
    from thermo_budget.engine.outcome import first_crossing_s
    from thermo_budget.inputs.uncertainty import factor_values, sample_rig, standard_normals
    from thermo_budget.planning.bands import N_SAMPLES
    from thermo_budget.planning.session_runs import limits_K, session_trace
    planned = busy_report["plan_at_confidence"]["time_to_limit_s"]
    assert planned is not None
    model = busy_scenario.uncertainty
    rig = sample_rig(build_rig(busy_scenario), factor_values(model, standard_normals(model, N_SAMPLES)))
    crossing = first_crossing_s(session_trace(busy_scenario, rig, N_SAMPLES), *limits_K(busy_scenario))
    times = np.where(np.isnan(crossing), np.inf, crossing)
    assert np.mean(times >= planned - 0.05) >= 0.9 and np.mean(times >= planned + 1.0) < 0.9


def test_the_sizing_search_ends_with_a_size_whose_peak_lies_within_its_tolerance_under_the_target():
    """bands._Search on margins known in closed form (target - peak, K): a log-like one (more oil)
    and a saturating one (a longer wait: each minute buys less). Every item must end on a size whose
    own margin lies in [0, PEAK_TOLERANCE_K] where it is not bracketed, and inside a bracket whose
    ends straddle the root where it is, within SECANT_ROUNDS rounds after the first two guesses."""
    from thermo_budget.planning.bands import PEAK_TOLERANCE_K, RELATIVE_TOLERANCE, SECANT_ROUNDS, _Search
    roots = np.array([130.0, 170.0, 205.0, 250.0, 320.0])     # the samples spread about the point answer, 200
    from thermo_budget.planning.planning import LINEAR, LOG, RECIPROCAL
    shapes = {"log": (lambda x, r: 6.0 * np.log(x / r), LOG),
              "saturating": (lambda x, r: 9.0 * (np.exp(-r / 250.0) - np.exp(-x / 250.0)), LINEAR),
              "as 1/wait": (lambda x, r: 900.0 * (1.0 / r - 1.0 / x), RECIPROCAL),
              "saturating, stepped in 1/x": (lambda x, r: 9.0 * (np.exp(-r / 250.0) - np.exp(-x / 250.0)), RECIPROCAL)}
    for name, (margin, coordinate) in shapes.items():
        m = roots.size
        search = _Search(m, np.zeros(m), np.full(m, 5000.0), np.full(m, coordinate))
        guess = np.full(m, 200.0)
        items = np.concatenate([np.arange(m), np.arange(m)])
        x = np.concatenate([0.95 * guess, 1.1 * guess])
        search.record(x, margin(x, roots[items]), items)
        for _ in range(SECANT_ROUNDS):
            todo = np.flatnonzero(~search.done())
            if not todo.size:
                break
            x = search.next_guess(todo)
            search.record(x, margin(x, roots[todo]), todo)
        assert search.done().all(), name
        answer = search.answer()
        bracketed = ~np.isnan(search.lo) & ~np.isnan(search.hi)
        own = margin(answer, roots)
        assert np.all(own[~bracketed] >= 0.0) and np.all(own[~bracketed] <= PEAK_TOLERANCE_K + 1e-9), (name, own)
        inside = (search.lo <= roots) & (roots <= search.hi)
        close = (search.m_hi <= PEAK_TOLERANCE_K) | (search.hi - search.lo <= RELATIVE_TOLERANCE * search.hi)
        assert np.all(inside[bracketed] & close[bracketed]), name


def test_a_wait_search_in_one_over_the_wait_steps_far_out_when_its_secant_points_past_any_wait():
    """In -1/wait the secant from two short failing waits can aim at u >= 0, past every finite wait
    (a saturating margin, its root at 800 s, guesses at 190 s and 220 s). That is no usable slope:
    the search must take its largest step out, not a negative wait clipped to its smallest (an
    independent review found every failing sample's wait left at inf, and the verdict's wait fix
    gone, on the default rig with 20 s waits)."""
    from thermo_budget.planning.bands import _Search
    from thermo_budget.planning.planning import RECIPROCAL

    def margin(x):
        return 9.0 * (np.exp(-800.0 / 1500.0) - np.exp(-np.asarray(x, dtype=float) / 1500.0))

    search = _Search(1, np.zeros(1), np.full(1, 1e5), np.full(1, RECIPROCAL))
    x = np.array([190.0, 220.0])
    search.record(x, margin(x), np.zeros(2, int))
    assert search.next_guess(np.array([0]))[0] >= 3.0 * 220.0
    for _ in range(6):
        todo = np.flatnonzero(~search.done())
        if not todo.size:
            break
        x = search.next_guess(todo)
        search.record(x, margin(x), todo)
    assert search.done().all() and abs(search.answer()[0] - 800.0) < 0.03 * 800.0
