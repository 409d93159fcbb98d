"""The page's live section: only files inside the folder named at start-up are read (no '..', no
absolute path elsewhere, no symbolic link out), no folder means no section, and the section shows
the ready time, the pulls left and the alarm in both unit systems."""
from __future__ import annotations

import os

import numpy as np
import pytest
from streamlit.testing.v1 import AppTest

from thermo_budget.errors import ScenarioError
from thermo_budget.page.page_live import LOG_DIR_ENV, log_folder, resolve_log_path

from conftest import SCENARIO_DIR


@pytest.fixture
def folders(tmp_path):
    inside, outside = tmp_path / "logs", tmp_path / "private"
    inside.mkdir()
    outside.mkdir()
    (inside / "today.csv").write_text("time_s,oil_C\n0,20\n")
    (inside / "sub").mkdir()
    (inside / "sub" / "rig2.csv").write_text("time_s,oil_C\n0,20\n")
    (outside / "secret.csv").write_text("time_s,oil_C\n0,99\n")
    os.symlink(outside / "secret.csv", inside / "link_out.csv")
    os.symlink(outside, inside / "dir_out")
    os.symlink(inside / "today.csv", inside / "link_in.csv")
    return inside, outside


def test_files_inside_the_folder_are_allowed(folders):
    inside, _ = folders
    assert resolve_log_path(inside, "today.csv") == (inside / "today.csv").resolve()
    assert resolve_log_path(inside, "sub/rig2.csv") == (inside / "sub" / "rig2.csv").resolve()
    assert resolve_log_path(inside, str(inside / "today.csv")) == (inside / "today.csv").resolve()
    assert resolve_log_path(inside, "link_in.csv") == (inside / "today.csv").resolve()
    assert resolve_log_path(inside, "not_yet.csv") == (inside / "not_yet.csv").resolve()   # the logger may start later


@pytest.mark.parametrize("typed", ["../private/secret.csv", "sub/../../private/secret.csv", "..",
                                   "link_out.csv", "dir_out/secret.csv", "/etc/passwd", "", "   ", "sub"])
def test_nothing_outside_the_folder_is_reached(folders, typed):
    inside, outside = folders
    with pytest.raises(ScenarioError):
        resolve_log_path(inside, typed)
    with pytest.raises(ScenarioError):
        resolve_log_path(inside, typed.replace("/etc/passwd", str(outside / "secret.csv")))


def test_the_folder_comes_from_the_command_line_or_the_environment(folders, tmp_path):
    inside, outside = folders
    assert log_folder([], {}) is None
    assert log_folder(["--log-dir", str(inside)], {}) == inside.resolve()
    assert log_folder([f"--log-dir={inside}"], {LOG_DIR_ENV: str(outside)}) == inside.resolve()
    assert log_folder([], {LOG_DIR_ENV: str(outside)}) == outside.resolve()
    assert log_folder([], {LOG_DIR_ENV: str(tmp_path / "absent")}) is None


def _live_app(folder, system):
    def app(folder_name, system_name):
        from pathlib import Path

        from thermo_budget.page.page_live import live_section
        from thermo_budget.inputs.scenario import DEFAULT_SCENARIO
        live_section(Path(DEFAULT_SCENARIO).read_text(), system_name, Path(folder_name))
    return AppTest.from_function(app, args=(str(folder), system), default_timeout=120)


def _elements(node):
    """Every element under an AppTest tree node (the live chart has no typed accessor)."""
    for child in (node.children.values() if isinstance(getattr(node, "children", None), dict) else []):
        yield child
        yield from _elements(child)


@pytest.mark.parametrize("system, unit", [("SI", "°C"), ("US", "°F")])
def test_the_section_shows_ready_time_pulls_left_and_nodes(tmp_path, system, unit):
    (tmp_path / "demo.csv").write_text((SCENARIO_DIR / "demo_log.csv").read_text())
    at = _live_app(tmp_path, system).run()
    assert not at.exception
    assert any("Ready now" in m.value for m in at.markdown)
    metrics = {m.label: m.value for m in at.metric}
    assert metrics["Pulls left"].isdigit()
    charts = [e for e in _elements(at._tree) if getattr(e, "type", None) == "vega_lite_chart"]
    assert len(charts) == 1 and all(f"{what} (" in str(charts[0].proto) for what in ("measured", "forecast", "limit"))
    assert metrics["Oil, estimated"].endswith(unit) and "Wall, estimated" in metrics
    at.text_input(key="live_log").set_value("../outside.csv").run()
    assert not at.exception and any("inside" in e.value for e in at.error)


def test_an_alarm_is_shown_as_a_banner(tmp_path):
    rows = "".join(f"{5 * i},{40 + 2.5 * i:.1f},1,9000\n" for i in range(20))     # 40 -> 87.5 degC
    (tmp_path / "hot.csv").write_text("time_s,oil_C,pull,power_W\n" + rows)
    at = _live_app(tmp_path, "SI").run()
    assert not at.exception and any("limit" in e.value for e in at.error)


def test_on_a_long_log_over_the_limit_the_section_says_how_long_to_cool(tmp_path):
    """The first 6,220 s of the benchmark's day logged every second (6,221 rows), ending 10 s into
    the break after four pulls pushed past the limit: the section answers at once and says in words
    how long to cool and how many pulls then."""
    import re

    from conftest import load_tool
    day_plan, simulated_day = load_tool("bench_live").day_plan, load_tool("bench_live").simulated_day
    day = simulated_day(plan=day_plan()[:69])
    rows = int(np.searchsorted(day.time_s, 6220.0)) + 1
    (tmp_path / "day.csv").write_text("\n".join(day.lines(range(rows))) + "\n")
    at = _live_app(tmp_path, "SI").run()
    assert not at.exception
    words = [m.value for m in at.markdown if "Over the limit" in m.value]
    assert len(words) == 1 and re.search(r"Over the limit: cool for \d+ min \d+ s, then \d+ more pulls?<", words[0])
    assert any("cool for" in e.value for e in at.error)
