"""The page in a real browser: Debian's chromium driven by playwright, against `streamlit run app.py`.

One server and one browser for the module. The headline must read whole at every width people use
(400 px phone to 1920 px desktop), in both unit systems, on the default rig and on a US 20 hp rig:
no headline element overflows its box and none ends in an ellipsis.

A heavy run: skipped unless THERMO_HEAVY=1 (`.ci/run` sets it), and skipped (with the reason) where
/usr/bin/chromium is missing. Never downloads a browser.
Screenshots go to a temporary folder, or to $THERMO_BUDGET_SCREENSHOTS (e.g. `docs`) to refresh the
ones under docs/ (the README shows docs/page_default_SI_1366.png).
"""
from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync", "--no-first-run"]
START_TIMEOUT_S = 90
ANSWER_TIMEOUT_MS = 120_000
WIDTHS = (400, 1024, 1366, 1920)
HEIGHT = 1000
US_RIG = REPO / "scenarios" / "us_20hp_small_tank.toml"

# A heavy run (about 1.5 min on 2 cores): only with THERMO_HEAVY=1, as .ci/run's second pytest command.
pytestmark = [pytest.mark.heavy,
              pytest.mark.skipif(not Path(CHROMIUM).exists(), reason=f"{CHROMIUM} is not installed")]

# Every headline element: the verdict and its fixes, each card, and its label, value, unit and detail
# lines; and every download button's label (a button cuts its label rather than wrap it).
CHECK_HEADLINE = """() => {
  const bad = [];
  const cards = [...document.querySelectorAll('.tb-card')];
  const verdict = [...document.querySelectorAll('.tb-verdict, .tb-verdict *')];
  const buttons = [...document.querySelectorAll('[data-testid="stDownloadButton"] button, '
                                               + '[data-testid="stDownloadButton"] button *')];
  for (const el of [...cards, ...document.querySelectorAll('.tb-card > div'), ...verdict, ...buttons]) {
    const text = el.innerText.trim();
    if (el.scrollWidth > el.clientWidth || text.endsWith('…') || text.endsWith('...'))
      bad.push({text: text.slice(0, 60), scroll: el.scrollWidth, client: el.clientWidth});
  }
  const page = document.documentElement;
  return {cards: cards.length, verdicts: document.querySelectorAll('.tb-verdict').length,
          buttons: document.querySelectorAll('[data-testid="stDownloadButton"] button').length,
          bad: bad, pageOverflow: page.scrollWidth - page.clientWidth};
}"""


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _wait_healthy(url: str, process: subprocess.Popen):
    deadline = time.monotonic() + START_TIMEOUT_S
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError(f"streamlit exited with code {process.returncode}")
        try:
            with urllib.request.urlopen(url + "/_stcore/health", timeout=2) as reply:
                if reply.status == 200:
                    return
        except OSError:
            time.sleep(0.5)
    raise TimeoutError(f"streamlit did not answer {url}/_stcore/health within {START_TIMEOUT_S} s")


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    port = _free_port()
    url = f"http://127.0.0.1:{port}"
    log = open(tmp_path_factory.mktemp("server") / "streamlit.log", "w")
    process = subprocess.Popen(
        [sys.executable, "-m", "streamlit", "run", str(REPO / "app.py"), "--server.headless", "true",
         "--server.address", "127.0.0.1", "--server.port", str(port), "--browser.gatherUsageStats", "false"],
        cwd=REPO, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    try:
        _wait_healthy(url, process)
        yield url
    finally:
        os.killpg(process.pid, signal.SIGTERM)
        try:
            process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            os.killpg(process.pid, signal.SIGKILL)
            process.wait(timeout=10)
        log.close()


@pytest.fixture(scope="module")
def browser():
    from playwright.sync_api import sync_playwright
    with sync_playwright() as p:
        chromium = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_FLAGS)
        yield chromium
        chromium.close()


@pytest.fixture(scope="module")
def shots(tmp_path_factory):
    folder = os.environ.get("THERMO_BUDGET_SCREENSHOTS")
    return (REPO / folder) if folder else tmp_path_factory.mktemp("shots")


def _headline(page) -> str:
    return page.locator('.tb-card[data-key="pulls"] .tb-value').first.inner_text()


def _settled(page, expected_pulls: str, unit_text: str):
    """Wait until the headline shows the expected count in the expected units, and the run is over."""
    page.wait_for_function(
        "([pulls, unit]) => { const v = document.querySelector('.tb-card[data-key=pulls] .tb-value');"
        " const h = document.querySelector('.tb-card[data-key=hottest]');"
        " return v && h && v.innerText.trim() === pulls && h.innerText.includes(unit); }",
        arg=[expected_pulls, unit_text], timeout=ANSWER_TIMEOUT_MS)
    page.wait_for_function(   # the three charts, each drawn by the browser (a canvas or an svg)
        "() => [...document.querySelectorAll('[data-testid=stVegaLiteChart]')]"
        ".filter(c => c.querySelector('canvas, svg')).length >= 3", timeout=ANSWER_TIMEOUT_MS)
    page.get_by_text("Across the chart's range").first.wait_for(timeout=ANSWER_TIMEOUT_MS)
    _idle(page)


def _idle(page):
    """Wait until the page's script run is over (no "Running" status, no spinner)."""
    page.wait_for_timeout(300)
    page.wait_for_function(
        "() => { const s = document.querySelector('[data-testid=stStatusWidget]');"
        " return (!s || !/Running|Stop/.test(s.innerText)) && !document.querySelector('[data-testid=stSpinner]'); }",
        timeout=ANSWER_TIMEOUT_MS)
    page.wait_for_timeout(300)


def _open(browser, url: str, width: int):
    page = browser.new_page(viewport={"width": width, "height": HEIGHT})
    page.goto(url)
    page.locator(".tb-card").first.wait_for(timeout=ANSWER_TIMEOUT_MS)
    return page


def _choose_units(page, system: str):
    label = {"SI": "Metric", "US": "US customary"}[system]
    page.locator('[data-testid="stSidebar"]').get_by_text(label, exact=True).click()


def _screenshot(page, path: Path):
    """A viewport screenshot, kept small: 128 colours (the page has few), PNG."""
    from PIL import Image
    page.screenshot(path=str(path))
    Image.open(path).convert("RGB").quantize(colors=128).save(path, optimize=True)


def _expected_pulls(path) -> str:
    """The pull-count card's figure: the plan at the chosen confidence."""
    from thermo_budget import load_scenario
    from thermo_budget.planning.answers import report
    runs = report(load_scenario(path)).band.plan_at_confidence["runs_before_limit"]
    return "All day" if runs is None else str(runs)


def _long_values_rig(folder: Path) -> Path:
    """An invented rig whose answers are long phrases: 40 kW pulls into 4 L, in US units (no wait
    is enough, no cooler is enough, a caution above the cards)."""
    from conftest import base_raw, write_toml
    raw = base_raw()
    raw["units"], raw["name"] = "US", "Long values: 40 kW pulls into 4 L"
    raw["reservoir"]["oil_volume"] = "4 L"
    raw["session"]["steps"][0]["power"] = "40 kW"
    return write_toml(folder, raw, "long_values.toml")


@pytest.mark.parametrize("rig", ["default", "us_20hp", "long_values"])
def test_headline_reads_whole_at_every_width_in_both_unit_systems(server, browser, shots, rig, tmp_path):
    """Set up the rig once (wide, where the sidebar is open), then read the headline at each width."""
    path = {"default": REPO / "scenarios" / "default.toml", "us_20hp": US_RIG,
            "long_values": _long_values_rig(tmp_path) if rig == "long_values" else None}[rig]
    pulls = _expected_pulls(path)
    page = _open(browser, server, 1366)
    if rig != "default":
        _settled(page, _expected_pulls(REPO / "scenarios" / "default.toml"), "°C")
        page.locator('[data-testid="stSidebar"] input[type=file]').first.set_input_files(str(path))
    failures = []
    systems = ("SI", "US") if rig == "default" else ("US", "SI")   # the rig's own units first
    for system in systems:
        if system != systems[0]:
            _choose_units(page, system)
        _settled(page, pulls, "°C" if system == "SI" else "°F")
        for width in WIDTHS:
            page.set_viewport_size({"width": width, "height": HEIGHT})
            page.wait_for_timeout(400)
            found = page.evaluate(CHECK_HEADLINE)
            assert found["cards"] == 9 and found["verdicts"] == 1 and found["buttons"] >= 4, found
            if found["bad"] or found["pageOverflow"] > 0:
                failures.append((system, width, found))
            if rig in ("default", "us_20hp"):
                _screenshot(page, shots / f"page_{rig}_{system}_{width}.png")
                page.locator('[data-testid="stDownloadButton"]').first.scroll_into_view_if_needed()
                _screenshot(page, shots / f"files_{rig}_{system}_{width}.png")
                page.locator(".tb-verdict").first.scroll_into_view_if_needed()
        page.set_viewport_size({"width": 1366, "height": HEIGHT})
    page.close()
    assert not failures, failures


def test_phone_width_schedule_and_page_do_not_overflow(server, browser):
    page = _open(browser, server, 400)
    _settled(page, _expected_pulls(REPO / "scenarios" / "default.toml"), "°C")
    found = page.evaluate("""() => {
      const table = document.querySelector('.tb-schedule');
      return {table: table.scrollWidth - table.clientWidth,
              page: document.documentElement.scrollWidth - document.documentElement.clientWidth};
    }""")
    page.close()
    assert found == {"table": 0, "page": 0}


def test_page_in_browser_reacts_to_oil_volume(server, browser):
    page = _open(browser, server, 1366)
    _settled(page, _expected_pulls(REPO / "scenarios" / "default.toml"), "°C")
    before = _headline(page)
    assert before.strip().isdigit(), before
    oil = page.get_by_role("spinbutton", name="Oil in the tank (L)")
    oil.fill("12")
    oil.press("Enter")
    page.wait_for_function(
        "(before) => { const v = document.querySelector('.tb-card[data-key=pulls] .tb-value');"
        " return v && v.innerText.trim() !== before.trim(); }", arg=before, timeout=ANSWER_TIMEOUT_MS)
    after = _headline(page)
    assert after.strip().isdigit() and int(after) < int(before)  # less oil, fewer pulls
    page.close()
