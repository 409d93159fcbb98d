"""The page under streamlit.testing.v1.AppTest: runs clean, reacts to inputs, switches units
without changing answers, refuses bad uploads and impossible inputs while keeping the last answers."""
from __future__ import annotations

import html
import json
import re
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest
from thermo_budget.units import ZERO_CELSIUS_K

APP = str(Path(__file__).resolve().parent.parent / "app.py")
TIMEOUT_S = 120


@pytest.fixture
def page():
    return AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()


_CARD = re.compile(r'<div class="tb-card[^"]*" data-key="(\w+)"[^>]*>(.*?)</div></div>(?=<div class="tb-card|</div></div>$)', re.S)
_PART = re.compile(r'<div class="tb-(label|value|unit|small|detail)">(.*?)</div>', re.S)


def cards(at) -> dict:
    """The headline cards as drawn: {key: {"label", "value", "unit", "details": [...]}}."""
    source = next(m.value for m in at.markdown if "tb-grid" in m.value)
    found = {}
    for key, body in _CARD.findall(source.strip()):
        card = {"label": "", "value": "", "unit": "", "small": "", "details": []}
        for part, text in _PART.findall(body + "</div>"):
            if part == "detail":
                card["details"].append(html.unescape(text))
            else:
                card[part] = html.unescape(text)
        found[key] = card
    return found


def metrics(at) -> dict:
    """Each headline card's label -> its value and unit, as a reader sees them."""
    return {c["label"]: (c["value"] + " " + c["unit"]).strip() for c in cards(at).values()}


def headline(at) -> str:
    return cards(at)["pulls"]["value"]


def number_input(at, label_start: str):
    return next(w for w in at.number_input if w.label.startswith(label_start))


def test_default_scenario_runs_without_exception(page):
    assert not page.exception
    assert not page.error
    shown = metrics(page)
    for label in ("Planned day: pulls that fit", "Pulls in a row, cycle repeated", "Hottest oil, planned session",
                  "Time to the limit", "Wait between pulls", "Cooler for the plan", "Smallest oil volume",
                  "Oil ageing today", "Head room at the limit"):
        assert label in shown
    assert headline(page).isdigit()
    assert any("The bulk limit is" in m.value for m in page.markdown)
    assert any("Safety" in e.label for e in page.expander)


def _chart_specs(page) -> list[dict]:
    return [json.loads(chart.proto.spec) for chart in page.get("vega_lite_chart")]


def test_the_three_charts_are_drawn_and_follow_an_input(page):
    # the temperature chart, the design chart and the hot-day chart, drawn by the browser from Vega-Lite
    # specs; the band's ranking chart is HTML
    before = _chart_specs(page)
    assert len(before) == 3 and all(spec["layer"] for spec in before)
    number_input(page, "Oil in the tank").set_value(12.0).run()
    after = _chart_specs(page)
    assert not page.exception and len(after) == 3
    assert all(a != b for a, b in zip(after, before))      # every chart depends on the oil volume


def test_changing_oil_volume_changes_headline_pull_count(page):
    before = int(headline(page))
    number_input(page, "Oil in the tank").set_value(12.0).run()
    assert not page.exception and not page.error
    after = int(headline(page))
    assert after < before  # less oil never means more pulls (invariant of the model)


def test_unit_switch_changes_units_not_answers(page):
    si = metrics(page)
    assert number_input(page, "Oil in the tank").label.endswith("(L)")
    page.radio(key="system").set_value("US").run()
    assert not page.exception
    us = metrics(page)
    oil = number_input(page, "Oil in the tank")
    assert oil.label.endswith("(gal)")
    assert oil.value == pytest.approx(18.0 / 3.785411784, rel=1e-6)  # 1 US gal = 3.785411784 L exactly (NIST SP 811)
    assert us["Pulls in a row, cycle repeated"] == si["Pulls in a row, cycle repeated"]
    assert us["Smallest oil volume"].endswith("gal of oil") and si["Smallest oil volume"].endswith("L of oil")
    assert number_input(page, "Hottest the oil may get").value == pytest.approx(176.0)  # 80 degC = 176 degF
    page.radio(key="system").set_value("SI").run()
    assert metrics(page) == si


def test_malformed_upload_shows_error_and_keeps_answers(page):
    before = metrics(page)
    page.file_uploader(key="upload").set_value(("broken.toml", b"[reservoir\noil_volume = ", "application/toml")).run()
    assert not page.exception
    assert any("broken.toml" in e.value and "TOML" in e.value for e in page.error)
    assert metrics(page) == before


def test_upload_with_wrong_unit_names_the_key(page):
    before = metrics(page)
    text = (Path(__file__).resolve().parent.parent / "scenarios" / "default.toml").read_text()
    text = text.replace('oil_volume = "18 L"', 'oil_volume = "18 kW"')
    page.file_uploader(key="upload").set_value(("wrong_unit.toml", text.encode(), "application/toml")).run()
    assert any("reservoir.oil_volume" in e.value for e in page.error)
    assert metrics(page) == before


def test_oversized_upload_is_refused(page):
    before = metrics(page)
    big = b"# padding\n" * 110_000  # 1.1 MB
    page.file_uploader(key="upload").set_value(("huge.toml", big, "application/toml")).run()
    assert any("1000000 bytes" in e.value for e in page.error)
    assert metrics(page) == before


def test_good_upload_replaces_scenario_and_its_units(page):
    path = Path(__file__).resolve().parent.parent / "scenarios" / "us_units_fan.toml"
    page.file_uploader(key="upload").set_value((path.name, path.read_bytes(), "application/toml")).run()
    assert not page.exception and not page.error
    assert number_input(page, "Oil in the tank").label.endswith("(gal)")
    assert number_input(page, "Oil in the tank").value == pytest.approx(6.0)


def test_impossible_inputs_are_refused_with_a_message(page):
    before = metrics(page)
    number_input(page, "Oil in the tank").set_value(0.0).run()
    assert not page.exception
    assert any("reservoir.oil_volume" in e.value for e in page.error)
    assert metrics(page) == before
    number_input(page, "Oil in the tank").set_value(18.0).run()
    assert not page.error
    number_input(page, "Hottest the oil may get").set_value(20.0).run()  # at the 20 degC room, not above it
    assert any("fluid.max_temperature" in e.value and "ambient" in e.value for e in page.error)
    number_input(page, "Hottest the oil may get").set_value(10.0).run()  # outside the plausible range
    assert any("fluid.max_temperature" in e.value and "10 degC" in e.value for e in page.error)
    assert metrics(page) == before


def test_scenario_download_is_offered_and_the_edited_scenario_loads_back(page):
    from thermo_budget import load_scenario
    from thermo_budget.planning.answers import report
    from thermo_budget.inputs.scenario import read_toml_text
    number_input(page, "Oil in the tank").set_value(14.0).run()
    labels = [b.proto.label for b in page.get("download_button")]
    assert labels == ["Scenario (.toml)", "Trace (.csv)", "Temperature chart (.png)", "Design chart (.png)"]
    # AppTest cannot read a download's bytes; the page offers scenario.changed(units=...).to_toml().
    text = load_scenario(page.session_state["draft"]).changed(units="SI").to_toml()
    again = report(load_scenario(read_toml_text(text)))
    assert str(again.band.plan_at_confidence["runs_before_limit"]) == headline(page)


def test_cooler_toggle_adds_a_cooler_input(page):
    page.toggle[0].set_value(True).run()
    assert not page.exception and not page.error
    assert number_input(page, "Cooler size").value == pytest.approx(10.0)


def test_engine_curve_scenario_and_pull_mode_switch(page):
    path = Path(__file__).resolve().parent.parent / "scenarios" / "plastic_tank_cylinder.toml"
    page.file_uploader(key="upload").set_value((path.name, path.read_bytes(), "application/toml")).run()
    assert not page.exception and not page.error
    assert number_input(page, "Tank diameter").value == pytest.approx(0.36)
    mode = next(r for r in page.radio if r.label == "Load during a pull")
    assert mode.value == "curve"
    mode.set_value("constant").run()
    assert not page.exception and not page.error
    assert number_input(page, "Pull power").value == pytest.approx(12.985, abs=1e-3)  # 31 N*m at 4000 rpm
    next(r for r in page.radio if r.label == "Load during a pull").set_value("curve").run()
    assert not page.exception and not page.error


def test_log_calibration_section_recovers_the_model_from_its_own_trace(page):
    pytest.importorskip("thermo_budget.logs.calibrate")
    from thermo_budget import DEFAULT_SCENARIO, load_scenario
    from thermo_budget.planning.answers import simulate, trace_csv
    before = cards(page)["hottest"]["details"]      # the point model's figures
    log = trace_csv(simulate(load_scenario(DEFAULT_SCENARIO))).encode()  # the model's own output as a "log"
    page.file_uploader(key="log_upload").set_value(("own_trace.csv", log, "text/csv")).run()
    assert not page.exception and not page.error
    shown = {m.label: m.value for m in page.metric}
    assert shown["Heat loss scale"] == "1.00" and shown["Heat capacity scale"] == "1.00"  # self-consistency
    assert any("heat loss scale" in c.value and " to " in c.value and "{" not in c.value for c in page.caption)
    page.toggle(key="use_calibrated").set_value(True).run()
    assert "calibrated from your log" in page.subheader[0].value
    # the multipliers are 1: the model's own figures stay; the plan may move, as the log narrows the band
    assert cards(page)["hottest"]["details"] == before and headline(page).isdigit()


# ------------------------------------------------------------------ every figure is the package's own

# Exact conversion factors (NIST SP 811, Appendix B): 1 gal = 3.785411784 L; degF = 1.8 degC + 32;
# 1 hp = 745.69987158227 W; 1 psi = 6894.757293168 Pa; 1 BTU_IT/hr/degF = 1055.05585262 / 3600 * 1.8 W/K.
SI_TO_US = {"C": lambda c: 1.8 * c + 32.0, "L": lambda v: v / 3.785411784, "W/K": lambda g: g / (1055.05585262 / 3600.0 * 1.8),
            "L/min": lambda q: q / 3.785411784, "bar": lambda p: p * 1e5 / 6894.757293168, "mm": lambda x: x / 25.4,
            "kW": lambda p: p * 1000.0 / 745.69987158227}


def _figure(text: str) -> float:
    return float(re.search(r"-?[\d,]+(?:\.\d+)?", text).group(0).replace(",", ""))


def _close(shown: str, expected: float, rel: float = 2e-6, up: bool = False):
    """A shown figure equals the expected one to the last digit it shows; up=True: rounded up to it
    (a size to plan with, which rounded down might no longer suffice)."""
    match = re.search(r"-?[\d,]+(?:\.(\d+))?", shown)
    half_digit = 0.5 * 10.0 ** -len(match.group(1) or "")
    slack = rel * abs(expected)
    if up:
        assert -slack <= _figure(shown) - expected < 2 * half_digit + slack, (shown, expected)
    else:
        assert abs(_figure(shown) - expected) <= half_digit + slack, (shown, expected)


def _in(system: str, unit: str, value: float) -> float:
    return value if system == "SI" else SI_TO_US[unit](value)


@pytest.mark.parametrize("scenario_file", ["default.toml", "us_20hp_small_tank.toml"])
def test_every_shown_figure_is_the_report_figure(scenario_file):
    from thermo_budget import load_scenario
    from thermo_budget.planning.hot_day import hot_day
    from thermo_budget.planning.answers import report
    path = Path(__file__).resolve().parent.parent / "scenarios" / scenario_file
    at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
    at.file_uploader(key="upload").set_value((path.name, path.read_bytes(), "application/toml")).run()
    assert not at.exception and not at.error
    answers = report(load_scenario(path)).to_json()
    for system in ("SI", "US"):
        if at.session_state["system"] != system:
            at.radio(key="system").set_value(system).run()
        shown = cards(at)
        plan, bands, verdict = answers["plan_at_confidence"], answers["bands"], answers["verdict"]
        confidence = f"at {100 * answers['confidence']:.0f} % confidence"
        assert shown["pulls"]["value"] == str(plan["runs_before_limit"])
        assert shown["pulls"]["small"] == f"{confidence} · median {bands['runs_before_limit']['p50']}"
        assert shown["day"]["value"] == f"{plan['pulls_under_limit']} of {answers['pulls_planned']}"
        # the verdict box and the cards say the same
        box = next(m.value for m in at.markdown if "tb-verdict" in m.value and "data-fits" in m.value)
        assert f'data-fits="{str(verdict["fits"]).lower()}"' in box
        assert ("FITS" if verdict["fits"] else "DOES NOT FIT") in box
        assert verdict["fits"] == (plan["pulls_under_limit"] == answers["pulls_planned"])
        if verdict["governing_limit"] == "return_line":
            _close(shown["hottest"]["small"].split("return line ")[1], _in(system, "C", verdict["peak_C"]))
        else:
            _close(shown["hottest"]["value"], _in(system, "C", verdict["peak_C"]))
        _close(shown["hottest"]["small"].split("median ")[1], _in(system, "C", bands["peak_C"]["p50"]))
        _close(shown["hottest"]["details"][0].split(":")[1], _in(system, "C", answers["peak_return_C"]))
        if plan["min_oil_volume_L"] is not None:
            _close(shown["tank"]["value"], _in(system, "L", plan["min_oil_volume_L"]), up=True)
            _close(shown["tank"]["small"].split("median ")[1], _in(system, "L", bands["min_oil_volume_L"]["p50"]))
        if plan["cooler_required_W_per_K"]:
            _close(shown["cooler"]["value"], _in(system, "W/K", plan["cooler_required_W_per_K"]), up=True)
        _close(shown["ageing"]["value"], answers["oil_ageing_equivalent_h"])
        _close(shown["headroom"]["value"], _in(system, "L", answers["headroom_at_limit_L"]))
        # under "More figures": the pump's flow and pressure (the flow once read 756 L/min for 45.4)
        figures = next(m.value for m in at.markdown if "Pump at the hardest pull" in m.value)
        pump_line = figures.splitlines()[0]
        flow_text, pressure_text = pump_line.split(": ")[1].split(" at ")[:2]
        _close(flow_text, _in(system, "L/min", answers["pump"]["flow_L_min"]))
        _close(pressure_text, _in(system, "bar", answers["pump"]["pressure_bar"]))
        # the hot day: each hotter ambient's pull count, as hot_day() gives it
        hot = hot_day(load_scenario(path))
        lines = next(m.value for m in at.markdown if m.value.startswith("Across the chart's range")).splitlines()[1:]
        assert len(lines) == len(hot.ambients_K)         # the list covers every bar of the chart
        for line, i in zip(lines, range(len(lines))):
            _close(line.split(" day")[0], _in(system, "C", hot.ambients_K[i] - ZERO_CELSIUS_K))
            expected = ("all day" if hot.all_day[i] else f"more than {hot.max_pulls} pulls"
                        if hot.pulls[i] != hot.pulls[i] else f"{int(hot.pulls[i])} pulls")
            assert expected in line, (line, expected)
        # the schedule: each pull's bulk and return-line peak
        schedule = next(m.value for m in at.markdown if "tb-schedule" in m.value and "<table>" in m.value)
        cells = [re.findall(r"<td>(.*?)</td>", row) for row in re.findall(r"<tr>(.*?)</tr>", schedule)[1:]]
        assert len(cells) == len(answers["schedule"])
        for row, expected in zip(cells, answers["schedule"]):
            _close(row[3], _in(system, "C", expected["peak_C"]))
            _close(row[4], _in(system, "C", expected["peak_return_C"]))


def test_return_line_stop_is_said_in_the_headline():
    path = Path(__file__).resolve().parent.parent / "scenarios" / "us_20hp_small_tank.toml"
    at = AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()
    at.file_uploader(key="upload").set_value((path.name, path.read_bytes(), "application/toml")).run()
    details = " ".join(cards(at)["pulls"]["details"])
    assert "return line's limit" in details and "185.0 °F" in details
    assert "(limit 185.0 °F)" in cards(at)["hottest"]["details"][0]


def test_every_planning_card_shows_the_plan_at_the_confidence_with_the_median():
    from dataclasses import replace
    from thermo_budget.page.page_cards import headline_cards
    from thermo_budget import load_scenario
    from thermo_budget.planning.answers import report
    path = Path(__file__).resolve().parent.parent / "scenarios" / "us_units_fan.toml"
    scenario = load_scenario(path)
    answers = report(scenario)
    shown = {card.key: card for card in headline_cards(answers, scenario.reservoir.oil_volume_m3, 150.0, "SI",
                                                          scenario.reservoir.inner_volume_m3)}
    plan, bands = answers.band.plan_at_confidence, answers.band.bands
    for key in ("day", "pulls", "wait", "cooler", "tank", "hottest"):
        assert shown[key].small.startswith("at 90 % confidence · median"), key
    assert shown["pulls"].value == str(plan["runs_before_limit"]) != str(bands["runs_before_limit"]["p50"])
    assert shown["day"].value == f"{plan['pulls_under_limit']} of {answers.pulls_planned}"
    _close(shown["wait"].value.split(" min ")[0], plan["min_wait_s"] // 60)
    _close(shown["cooler"].value, plan["cooler_required_W_per_K"], up=True)
    _close(shown["tank"].value, plan["min_oil_volume_L"], up=True)
    _close(shown["hottest"].value, answers.verdict.peak_C)
    # with the band off the cards show the point answers and no small print
    plain = replace(answers, band=replace(answers.band, uncertainty={"samples": 0}))
    off = {card.key: card for card in headline_cards(plain, scenario.reservoir.oil_volume_m3, 150.0, "SI")}
    assert off["pulls"].value == str(answers.runs_before_limit) and not off["pulls"].small
    _close(off["tank"].value, answers.min_oil_volume_L, up=True)


def test_name_edit_follows_into_the_titles_and_the_file(page):
    assert not any("rename it" in c.value for c in page.caption)
    number_input(page, "Oil in the tank").set_value(12.0).run()
    assert any("rename it" in c.value for c in page.caption)   # the name was given to the 18 L rig
    next(box for box in page.text_input if box.label == "Rig name").input("Stand 2, bigger tank").run()
    assert not page.exception and not page.error
    assert page.subheader[0].value.startswith("Stand 2, bigger tank")
    assert not any("rename it" in c.value for c in page.caption)
    assert page.session_state["draft"]["name"] == "Stand 2, bigger tank"   # the saved file's name
    from thermo_budget.output.plots import plot_trace
    from thermo_budget import load_scenario
    from thermo_budget.planning.answers import simulate
    scenario = load_scenario(page.session_state["draft"])
    assert plot_trace(scenario, simulate(scenario)).axes[0].get_title(loc="left") == "Stand 2, bigger tank"


def test_failed_upload_error_is_cleared_by_a_later_action(page):
    page.file_uploader(key="upload").set_value(("broken.toml", b"[reservoir\noil_volume = ", "application/toml")).run()
    assert any("broken.toml" in e.value for e in page.error)
    number_input(page, "Oil in the tank").set_value(16.0).run()
    assert not page.exception and not any("broken.toml" in e.value for e in page.error)


def test_speeds_say_their_unit(page):
    assert number_input(page, "Engine speed in a pull").label.endswith("(rpm)")
    assert number_input(page, "Idle speed").label.endswith("(rpm)")


def test_a_return_line_limit_typed_on_the_page_stops_the_count(page):
    before = int(headline(page))
    number_input(page, "Return-line limit").set_value(50.0).run()
    assert not page.exception and not page.error
    assert int(headline(page)) < before
    assert any("return line's limit" in d for d in cards(page)["pulls"]["details"])
    number_input(page, "Return-line limit").set_value(200.0).run()   # far above the return line: no effect
    assert int(headline(page)) == before


def test_a_log_with_a_giant_cell_is_refused_and_the_uploader_stays(page):
    # a cell over the csv module's 131,072-character limit used to raise on every rerun and hide
    # the uploader until a reload
    giant = ("time_s,oil_C\n" + "\n".join(f"{i * 10},{20 + i}" for i in range(20)) + "\n210,"
             + "9" * 140_000 + "\n").encode()
    page.file_uploader(key="log_upload").set_value(("giant.csv", giant, "text/csv")).run()
    assert not page.exception
    assert any("The log was not used" in e.value and "characters" in e.value for e in page.error)
    page.run()
    assert not page.exception
    assert page.file_uploader(key="log_upload") is not None


def test_a_binary_scenario_upload_is_refused(page):
    page.file_uploader(key="upload").set_value(("binary.toml", bytes(range(256)) * 8, "application/toml")).run()
    assert not page.exception
    assert any("binary.toml" in e.value for e in page.error)


def test_the_confidence_is_one_input_and_every_planning_card_follows_it(page):
    from thermo_budget import DEFAULT_SCENARIO, load_scenario
    from thermo_budget.planning.answers import report
    box = number_input(page, "Confidence of the plan")
    assert box.value == pytest.approx(0.9)
    box.set_value(0.5).run()
    assert not page.exception and not page.error
    answers = report(load_scenario(DEFAULT_SCENARIO).changed(**{"uncertainty.confidence": 0.5})).to_json()
    shown = cards(page)
    assert shown["pulls"]["value"] == str(answers["plan_at_confidence"]["runs_before_limit"])
    for key in ("day", "pulls", "wait", "cooler", "tank"):
        assert shown[key]["small"].startswith("at 50 % confidence"), key
    box = next(m.value for m in page.markdown if "tb-verdict" in m.value and "data-fits" in m.value)
    assert "at 50 % confidence" in box


def test_a_pull_given_as_pressure_and_flow_shows_its_power_and_can_be_edited(page):
    """7 kW = 92.59 bar x 45.36 L/min (P = dp Q); the page shows the power, and a power typed on the
    page replaces the operating point."""
    import tomli_w
    from thermo_budget import DEFAULT_SCENARIO, load_scenario
    raw = load_scenario(DEFAULT_SCENARIO).raw
    pull = {k: v for k, v in raw["session"]["steps"][0].items() if k not in ("power", "rpm")}
    raw["session"]["steps"][0] = {**pull, "pressure": f"{7000.0 / 7.56e-4 / 1e5!r} bar", "flow": "45.36 L/min"}
    before = cards(page)
    page.file_uploader(key="upload").set_value(("operating_point.toml", tomli_w.dumps(raw).encode(),
                                                "application/toml")).run()
    assert not page.exception and not page.error
    assert cards(page)["pulls"]["value"] == before["pulls"]["value"]
    assert number_input(page, "Pull power").value == pytest.approx(7.0)
    assert number_input(page, "Engine speed in a pull").value == pytest.approx(3600.0)
    number_input(page, "Pull power").set_value(8.0).run()
    assert not page.exception and not page.error
    step = page.session_state["draft"]["session"]["steps"][0]
    assert "pressure" not in step and "flow" not in step and step["rpm"] == pytest.approx(3600.0)


def test_altitude_humidity_and_mounting_are_inputs_and_move_the_answers_the_right_way(page):
    # Thinner air carries less heat away: at 2,000 m the pressure is 79.5 kPa (US Standard Atmosphere
    # 1976, from memory), so air at the same temperature is about 21 % less dense, and the oil peaks
    # hotter. The same altitude in feet gives the same answers in US units.
    sea = cards(page)["hottest"]["value"]
    number_input(page, "Altitude of the stand").set_value(2000.0).run()
    assert not page.exception and not page.error
    high = cards(page)["hottest"]["value"]
    assert float(high) > float(sea)
    si = metrics(page)
    page.radio(key="system").set_value("US").run()
    assert number_input(page, "Altitude of the stand").label.endswith("(ft)")
    assert number_input(page, "Altitude of the stand").value == pytest.approx(2000.0 / 0.3048, abs=0.5)  # 1 ft = 0.3048 m exactly
    page.radio(key="system").set_value("SI").run()
    assert metrics(page) == si
    number_input(page, "Relative humidity").set_value(0.6).run()
    assert not page.exception and not page.error
    page.selectbox(key=next(s.key for s in page.selectbox if s.label == "Pump and valve mounting")).set_value("on_tank").run()
    assert not page.exception and not page.error
