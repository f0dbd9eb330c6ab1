"""The page in a real browser: Debian's chromium, driven by Playwright, against ``trainopt serve``.

The server is the real command in a child process on a free port of 127.0.0.1; every wait
is bounded, and the server is stopped at the end. A screenshot of the page is written to
``$TRAINOPT_SCREENSHOTS`` (a folder) when set, else to the test's temporary folder.
"""

import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest
from playwright.sync_api import sync_playwright

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "cases" / "demo" / "station.yaml"
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu",
                 "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--no-first-run", "--no-proxy-server"]
DIRECT = urllib.request.build_opener(urllib.request.ProxyHandler({}))  # never via a proxy
START_TIMEOUT = 60.0  # [s] import, case load and first listen on a busy 2-core machine
WAIT_MS = 60_000  # [ms] longest wait for one page answer or picture


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start(*options: str, host: str = "127.0.0.1"):
    """``trainopt serve`` on the demo at a free port; waits (bounded) until it answers."""
    port = free_port()
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    process = subprocess.Popen([sys.executable, "-m", "trainopt", "serve", str(DEMO),
                                "--port", str(port), "--host", host, *options], env=env,
                               cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    url = f"http://{host}:{port}"
    deadline = time.monotonic() + START_TIMEOUT
    while True:
        try:
            with DIRECT.open(url + "/openapi.json", timeout=5) as answer:
                assert answer.status == 200
            return process, url
        except OSError:
            if process.poll() is not None or time.monotonic() > deadline:
                process.kill()
                _, err = process.communicate(timeout=10)
                pytest.fail(f"server did not start: {err.decode()[-2000:]}")
            time.sleep(0.2)


def stop(process) -> str:
    """Stop the server (bounded waits) and return what it wrote on stderr."""
    process.terminate()
    try:
        code = process.wait(timeout=20)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait(timeout=10)
        pytest.fail("server did not stop within 20 s of SIGTERM")
    err = process.stderr.read().decode()
    process.stdout.close()
    process.stderr.close()
    # uvicorn shuts down gracefully, then re-raises the signal it caught
    assert code in (0, -signal.SIGTERM), err
    assert "Traceback" not in err
    return err


@pytest.fixture(scope="module")
def server():
    process, url = start()
    yield url
    stop(process)


def test_another_address_needs_the_flag_and_warns():
    # 127.0.0.2 is on this machine (the loopback range) but is not 127.0.0.1
    process, _ = start("--allow-other-hosts", host="127.0.0.2")
    err = stop(process)
    assert err.startswith("warning: listening on 127.0.0.2: anyone who can reach this "
                          "address can use the page and API; there is no sign-in\n")


def running_units(page) -> list[str]:
    return page.eval_on_selector_all("#units tr.running", "rows => rows.map(r => r.dataset.unit)")


def test_page_in_a_real_browser(server, tmp_path):
    shots = Path(os.environ.get("TRAINOPT_SCREENSHOTS", tmp_path))
    shots.mkdir(parents=True, exist_ok=True)
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1000})
            page.set_default_timeout(WAIT_MS)
            page.goto(server + "/")
            assert "Advisory only" in page.inner_text("#caution")
            first = page.inner_text("#totals")
            assert running_units(page)

            # a changed demand updates the table
            page.fill("#demand_value", "30")
            with page.expect_navigation():
                page.click("#ask-button")
            assert "30.00 MMSCMD" in page.inner_text("#totals")
            assert page.inner_text("#totals") != first

            # taking a running unit out of service removes it from the running set
            unit = running_units(page)[0]
            page.check(f"#status-{unit} input[value=offline]")
            with page.expect_navigation():
                page.click("#ask-button")
            assert unit not in running_units(page)
            assert "stopped (offline)" in page.inner_text(f"#units tr[data-unit='{unit}']")
            assert page.is_checked(f"#status-{unit} input[value=offline]")

            # every running unit's map picture loads and decodes
            pictures = page.locator(".maps img")
            assert pictures.count() == len(running_units(page))
            page.wait_for_function(
                "() => [...document.querySelectorAll('.maps img')]"
                ".every(i => i.complete && i.naturalWidth > 0)", timeout=WAIT_MS)
            page.screenshot(path=str(shots / "web_page.png"), full_page=True)
        finally:
            browser.close()
    assert (shots / "web_page.png").stat().st_size > 50_000  # a drawn page, not blank
