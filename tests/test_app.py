"""The page under streamlit.testing.v1.AppTest: runs clean, reacts to inputs, switches units
without changing answers, refuses bad uploads and impossible inputs while keeping the last answers."""
from __future__ import annotations

from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

APP = str(Path(__file__).resolve().parent.parent / "app.py")
TIMEOUT_S = 120


@pytest.fixture
def page():
    return AppTest.from_file(APP, default_timeout=TIMEOUT_S).run()


def metrics(at) -> dict:
    return {m.label: m.value for m in at.metric}


def number_input(at, label_start: str):
    return next(w for w in at.number_input if w.label.startswith(label_start))


def test_default_scenario_runs_without_exception(page):
    assert not page.exception
    assert not page.error
    shown = metrics(page)
    for label in ("Pulls before the limit", "Time to the limit", "Wait needed between pulls", "Cooler", "Smallest tank"):
        assert label in shown
    assert shown["Pulls before the limit"].isdigit()
    assert any("The limit is" in m.value for m in page.markdown)
    assert any("Safety" in e.label for e in page.expander)


def test_both_charts_are_drawn_and_the_design_chart_follows_an_input(page):
    charts = page.get("image")
    # the temperature chart, the band's ranking chart and the design chart (drawn last, into its place)
    assert len(charts) == 3
    number_input(page, "Oil in the tank").set_value(12.0).run()
    assert not page.exception and len(page.get("image")) == 3


def test_changing_oil_volume_changes_headline_pull_count(page):
    before = int(metrics(page)["Pulls before the limit"])
    number_input(page, "Oil in the tank").set_value(12.0).run()
    assert not page.exception and not page.error
    after = int(metrics(page)["Pulls before the limit"])
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
    assert us["Pulls before the limit"] == si["Pulls before the limit"]
    assert us["Smallest tank"].endswith("gal") and si["Smallest tank"].endswith("L")
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
    number_input(page, "Hottest the oil may get").set_value(10.0).run()  # below the 20 degC room
    assert any("fluid.max_temperature" in e.value and "ambient" in e.value for e in page.error)
    assert metrics(page) == before


def test_scenario_download_is_offered_and_the_edited_scenario_loads_back(page):
    from thermo_budget import load_scenario
    from thermo_budget.report import report
    from thermo_budget.scenario import read_toml_text
    number_input(page, "Oil in the tank").set_value(14.0).run()
    labels = [b.proto.label for b in page.get("download_button")]
    assert labels == ["Scenario (.toml)", "Trace (.csv)", "Temperature chart (.png)", "Design chart (.png)"]
    # AppTest cannot read a download's bytes; the page offers scenario.changed(units=...).to_toml().
    text = load_scenario(page.session_state["draft"]).changed(units="SI").to_toml()
    again = report(load_scenario(read_toml_text(text)))
    assert str(again["runs_before_limit"]) == metrics(page)["Pulls before the limit"]


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
    pytest.importorskip("thermo_budget.calibrate")
    from thermo_budget import DEFAULT_SCENARIO, load_scenario
    from thermo_budget.report import simulate, trace_csv
    before = metrics(page)["Pulls before the limit"]
    log = trace_csv(simulate(load_scenario(DEFAULT_SCENARIO))).encode()  # the model's own output as a "log"
    page.file_uploader(key="log_upload").set_value(("own_trace.csv", log, "text/csv")).run()
    assert not page.exception and not page.error
    shown = metrics(page)
    assert shown["Heat loss scale"] == "1.00" and shown["Heat capacity scale"] == "1.00"  # self-consistency
    page.toggle(key="use_calibrated").set_value(True).run()
    assert "calibrated from your log" in page.subheader[0].value
    assert metrics(page)["Pulls before the limit"] == before
