"""The page in a real browser: Debian's chromium driven by playwright, against `streamlit run app.py`.

Skipped (with the reason) only where /usr/bin/chromium is missing. Never downloads a browser.
"""
from __future__ import annotations

import os
import shutil
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

pytestmark = pytest.mark.skipif(not Path(CHROMIUM).exists(), reason=f"{CHROMIUM} is not installed")


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


def _headline(page) -> str:
    return page.locator('[data-testid="stMetricValue"]').first.inner_text()


def test_page_in_browser_reacts_to_oil_volume(tmp_path):
    from playwright.sync_api import sync_playwright
    port = _free_port()
    url = f"http://127.0.0.1:{port}"
    log = open(tmp_path / "streamlit.log", "w")
    server = subprocess.Popen(
        [sys.executable, "-m", "streamlit", "run", str(REPO / "app.py"), "--server.headless", "true",
         "--server.address", "127.0.0.1", "--server.port", str(port), "--browser.gatherUsageStats", "false"],
        cwd=REPO, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    try:
        _wait_healthy(url, server)
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_FLAGS)
            page = browser.new_page(viewport={"width": 1500, "height": 1250})
            page.goto(url)
            page.get_by_text("Pulls before the limit").first.wait_for(timeout=ANSWER_TIMEOUT_MS)
            page.wait_for_function(
                "() => [...document.querySelectorAll('[data-testid=stMetricValue]')].length >= 5",
                timeout=ANSWER_TIMEOUT_MS)
            before = _headline(page)
            assert before.strip().isdigit(), before
            page.locator('[data-testid="stImage"] img').nth(1).wait_for(timeout=ANSWER_TIMEOUT_MS)
            page.screenshot(path=str(tmp_path / "page_default.png"), full_page=False)

            oil = page.get_by_role("spinbutton", name="Oil in the tank (L)")
            oil.fill("12")
            oil.press("Enter")
            page.wait_for_function(
                "(before) => { const v = document.querySelector('[data-testid=stMetricValue]');"
                " return v && v.innerText.trim() !== before.trim(); }",
                arg=before, timeout=ANSWER_TIMEOUT_MS)
            after = _headline(page)
            assert after.strip().isdigit() and int(after) < int(before)  # less oil, fewer pulls
            page.wait_for_timeout(1500)
            page.screenshot(path=str(tmp_path / "page_less_oil.png"), full_page=False)
            browser.close()
        shot = os.environ.get("THERMO_BUDGET_SCREENSHOT")
        if shot:  # e.g. THERMO_BUDGET_SCREENSHOT=docs/screenshot.png to refresh the README picture
            shutil.copy(tmp_path / "page_default.png", REPO / shot)
    finally:
        os.killpg(server.pid, signal.SIGTERM)
        try:
            server.wait(timeout=10)
        except subprocess.TimeoutExpired:
            os.killpg(server.pid, signal.SIGKILL)
            server.wait(timeout=10)
        log.close()
