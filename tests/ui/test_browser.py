"""The dashboard in a real browser: `streamlit run dashboard.py` on a loopback port, driven by Debian's Chromium.

Playwright (from PyPI) drives /usr/bin/chromium through its executable path; it never downloads a browser of its
own.  The test opens the page, waits for the demo network's overview, switches to "My files", uploads one demo
log and the demo links table, waits for that hop's overview, and saves screenshots under test-output/ (every tab of
three demo hops, for a person to look at).  Every
wait is bounded; the server is stopped at the end whatever happens.

Skipped (with the reason) only when /usr/bin/chromium is absent and the CI variable is not set; under CI it must
run (.ci/run installs chromium with apt-get).
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

ROOT = Path(__file__).resolve().parents[2]
CHROMIUM = Path("/usr/bin/chromium")
OUT = ROOT / "test-output"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-dev-shm-usage"]
SERVER_START_S = 45
PAGE_WAIT_MS = 60_000

pytestmark = [pytest.mark.browser, pytest.mark.slow]


def _free_loopback_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _wait_healthy(url: str, process: subprocess.Popen, timeout_s: float) -> None:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError(f"streamlit exited early with status {process.returncode}")
        try:
            with urllib.request.urlopen(url + "/_stcore/health", timeout=2) as response:
                if response.status == 200:
                    return
        except OSError:
            pass
        time.sleep(0.3)
    raise TimeoutError(f"streamlit did not answer on {url} within {timeout_s} s")


def _smallest_demo_log() -> Path:
    logs = sorted((p for p in (ROOT / "demo_logs" / "logs").iterdir() if p.is_file()), key=lambda p: p.stat().st_size)
    assert logs, "demo_logs/logs/ holds no log"
    return logs[0]


def _settle(page) -> None:
    """Wait until the page has finished its run (the download row is drawn last; the running indicator is gone)."""
    from playwright.sync_api import expect

    expect(page.get_by_text("Files for the report", exact=True)).to_be_visible(timeout=PAGE_WAIT_MS)
    expect(page.locator('[data-testid="stStatusWidget"]')).to_have_count(0, timeout=PAGE_WAIT_MS)


TABS = ("Overview", "Level timeline", "Fade events", "Fading statistics", "Cross-polar", "Input check")


def _screenshot_every_tab(page, tag: str) -> None:
    """A full-page PNG of every tab of the hop on screen (test-output/, git-ignored), for a person to look at."""
    from playwright.sync_api import expect

    for tab in TABS:
        page.get_by_role("tab", name=tab).click()
        _settle(page)
        expect(page.get_by_role("tab", name=tab, selected=True)).to_be_visible()
        page.wait_for_timeout(700)          # charts draw after the run ends
        assert page.locator('[data-testid="stException"]').count() == 0
        name = tab.lower().replace(" ", "_").replace("-", "_")
        page.screenshot(path=str(OUT / f"tab_{tag}_{name}.png"), full_page=True)
    page.get_by_role("tab", name=TABS[0]).click()


def _pick_hop(page, hop: str) -> None:
    """Choose ``hop`` in the page's main Hop selector."""
    from playwright.sync_api import expect

    box = page.locator('[data-testid="stSelectbox"]').filter(has=page.get_by_text("Hop", exact=True)).last
    box.click()
    page.get_by_role("option", name=hop, exact=True).click()
    expect(page.locator("h3", has_text=f"Hop {hop}")).to_be_visible(timeout=PAGE_WAIT_MS)
    _settle(page)


@pytest.fixture()
def server():
    if not CHROMIUM.exists():
        if os.environ.get("CI"):
            pytest.fail("CI is set but /usr/bin/chromium is missing: .ci/run should install Debian's chromium")
        pytest.skip("/usr/bin/chromium not installed (apt-get install chromium); CI runs this test")
    OUT.mkdir(exist_ok=True)
    port = _free_loopback_port()
    url = f"http://127.0.0.1:{port}"
    log = open(OUT / "streamlit_server.log", "wb")
    process = subprocess.Popen(
        [sys.executable, "-m", "streamlit", "run", "dashboard.py", "--server.headless", "true",
         "--server.port", str(port), "--server.address", "127.0.0.1", "--browser.gatherUsageStats", "false"],
        cwd=ROOT, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    try:
        _wait_healthy(url, process, SERVER_START_S)
        yield url
    finally:
        if process.poll() is None:
            os.killpg(process.pid, signal.SIGTERM)
            try:
                process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                os.killpg(process.pid, signal.SIGKILL)
                process.wait(timeout=10)
        log.close()


def test_dashboard_in_chromium(server):
    from playwright.sync_api import expect, sync_playwright

    from diag import report
    from diag.links import read_links_table
    from diag.pipeline import analyze_files

    log_file = _smallest_demo_log()
    links_file = ROOT / "demo_logs" / "links.csv"
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=str(CHROMIUM), headless=True, args=CHROMIUM_ARGS,
                                     timeout=30_000)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1800}, accept_downloads=True)
            page.set_default_timeout(PAGE_WAIT_MS)
            page.goto(server, wait_until="domcontentloaded")

            # 1. the demo network's overview, without any file
            expect(page.get_by_text("Availability", exact=True).first).to_be_visible(timeout=PAGE_WAIT_MS)
            expect(page.get_by_text("Network", exact=True).first).to_be_visible()
            expect(page.locator("h3", has_text="Hop ").first).to_be_visible()
            _settle(page)
            assert page.locator('[data-testid="stException"]').count() == 0
            page.screenshot(path=str(OUT / "dashboard_demo.png"))
            _screenshot_every_tab(page, "demo")
            for hop in ("HM-RIDGE-LAKESIDE", "HM-BEACON-MILL"):      # 1-s multipath hop; 15-min dual-pol hop
                _pick_hop(page, hop)
                _screenshot_every_tab(page, hop)

            # 2. upload one demo log and the links table: that hop's overview appears
            page.get_by_text("My files", exact=True).click()
            expect(page.get_by_text("Upload one or more", exact=False).first).to_be_visible()
            inputs = page.locator('[data-testid="stFileUploaderDropzoneInput"]')
            expect(inputs).to_have_count(2)
            inputs.nth(0).set_input_files(str(log_file))
            inputs.nth(1).set_input_files(str(links_file))
            hop = log_file.name.split("_")[0].split(".")[0]
            expect(page.locator("h3", has_text=f"Hop {hop}")).to_be_visible(timeout=PAGE_WAIT_MS)
            expect(page.get_by_text("Availability", exact=True).first).to_be_visible()
            _settle(page)
            assert page.locator('[data-testid="stException"]').count() == 0
            page.screenshot(path=str(OUT / "dashboard_upload.png"))

            # 3. the events file downloads, byte for byte what the command line writes for the same input
            with page.expect_download(timeout=PAGE_WAIT_MS) as download_info:
                page.get_by_role("button", name="events.csv").click()
            downloaded = Path(download_info.value.path()).read_bytes()
        finally:
            browser.close()
    results = analyze_files([(log_file.name, log_file.read_bytes())], links=read_links_table(links_file))
    assert downloaded == report.events_csv_bytes(results)
    assert (OUT / "dashboard_demo.png").stat().st_size > 10_000
    assert (OUT / "dashboard_upload.png").stat().st_size > 10_000
