"""The page in a real browser: serve ui/app.py with streamlit, drive headless Chromium.

Checks what a visitor sees on a first visit: the envelope chart is drawn by the browser
(Vega renders an <svg> inside the chart element), pointing at a depth of
it shows that depth's numbers, and the page states the demo's first brittle-to-ductile
transition depth as the API computes it (``rheology.analyse`` of the bundled demo),
formatted as the page formats it; and a download button delivers the profile table
with the API's numbers. A screenshot is saved under test-output/ for a person to look
at.

Needs Debian's ``chromium`` and ``chromium-driver`` and the selenium package; skipped
with the reason when one is missing.
"""

from __future__ import annotations

import contextlib
import io
import os
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pandas as pd
import pytest

import rheology
from rheology import outputs
from rheology.scenario import bundled_example, load_scenario
from ui import views

pytestmark = pytest.mark.browser

CHROMIUM = Path("/usr/bin/chromium")
CHROMEDRIVER = Path("/usr/bin/chromedriver")
ROOT = Path(__file__).resolve().parents[1]
APP = ROOT / "ui" / "app.py"
OUTPUT = ROOT / "test-output"

# Bounds of every wait [s]: a cold start imports matplotlib, pandas and streamlit and
# draws the first figure, which takes several seconds on a small CI machine.
SERVER_START = 90.0
PAGE_READY = 120.0
DOWNLOAD = 60.0

if not CHROMIUM.exists():
    pytest.skip(
        f"{CHROMIUM} is absent (install Debian's chromium and chromium-driver)",
        allow_module_level=True,
    )
if not CHROMEDRIVER.exists():
    pytest.skip(
        f"{CHROMEDRIVER} is absent (install Debian's chromium-driver)", allow_module_level=True
    )
webdriver = pytest.importorskip(
    "selenium.webdriver", reason="the selenium package is not installed"
)
from selenium.common.exceptions import (  # noqa: E402
    ElementClickInterceptedException,
    NoSuchElementException,
    StaleElementReferenceException,
)
from selenium.webdriver.chrome.service import Service  # noqa: E402
from selenium.webdriver.common.action_chains import ActionChains  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.support.ui import WebDriverWait  # noqa: E402


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _wait_for_health(port: int, process: subprocess.Popen, log: Path) -> None:
    url = f"http://127.0.0.1:{port}/_stcore/health"
    deadline = time.monotonic() + SERVER_START
    while time.monotonic() < deadline:
        if process.poll() is not None:
            pytest.fail(f"streamlit exited with {process.returncode}:\n{log.read_text()}")
        with contextlib.suppress(OSError):
            with urllib.request.urlopen(url, timeout=2) as answer:
                if answer.status == 200:
                    return
        time.sleep(0.5)
    pytest.fail(f"streamlit did not serve within {SERVER_START:.0f} s:\n{log.read_text()}")


@pytest.fixture
def served_page(tmp_path):
    """URL of the page served by a streamlit subprocess on 127.0.0.1 (killed afterwards)."""
    port = _free_port()
    log = tmp_path / "streamlit.log"
    command = [
        sys.executable,
        "-m",
        "streamlit",
        "run",
        str(APP),
        "--server.headless",
        "true",
        "--server.address",
        "127.0.0.1",
        "--server.port",
        str(port),
        "--server.fileWatcherType",
        "none",
        "--browser.gatherUsageStats",
        "false",
        "--client.toolbarMode",
        "minimal",
    ]
    env = dict(
        os.environ,
        PYTHONPATH=os.pathsep.join(
            [str(ROOT)] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]
        ),
    )
    with open(log, "w", encoding="utf-8") as handle:
        process = subprocess.Popen(
            command,
            cwd=ROOT,
            stdout=handle,
            stderr=subprocess.STDOUT,
            stdin=subprocess.DEVNULL,
            env=env,
        )
    try:
        _wait_for_health(port, process, log)
        yield f"http://127.0.0.1:{port}/"
    finally:
        process.terminate()
        try:
            process.wait(timeout=15)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=15)


@pytest.fixture
def browser(tmp_path):
    downloads = tmp_path / "downloads"
    downloads.mkdir()
    options = webdriver.ChromeOptions()
    options.binary_location = str(CHROMIUM)
    for argument in (
        "--headless=new",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--disable-dev-shm-usage",
        "--window-size=1500,2600",
        f"--user-data-dir={tmp_path / 'profile'}",
    ):
        options.add_argument(argument)
    options.add_experimental_option(
        "prefs",
        {"download.default_directory": str(downloads), "download.prompt_for_download": False},
    )
    driver = webdriver.Chrome(service=Service(str(CHROMEDRIVER)), options=options)
    driver.set_page_load_timeout(PAGE_READY)
    driver.downloads = downloads
    try:
        yield driver
    finally:
        driver.quit()


def _click(browser, xpath: str) -> None:
    """Click the element at ``xpath`` once it is shown, looking it up again if re-drawn."""

    def attempt(driver):
        element = driver.find_element(By.XPATH, xpath)
        if not element.is_displayed():
            return False
        driver.execute_script("arguments[0].scrollIntoView({block: 'center'});", element)
        element.click()
        return True

    WebDriverWait(
        browser,
        PAGE_READY,
        poll_frequency=0.5,
        ignored_exceptions=(
            NoSuchElementException,
            StaleElementReferenceException,
            ElementClickInterceptedException,
        ),
    ).until(attempt)


# The chart is drawn when Vega has put the strength panel's plot area (the 'background'
# path of the first panel's group, in the <svg> streamlit has Vega render) into the
# chart element, at its full size.
_CHART_READY = """
const area = document.querySelector(
  "[data-testid='stVegaLiteChart'].vega-embed svg .concat_0_group path.background");
if (area === null) return false;
const box = area.getBoundingClientRect();
return box.width > 100 && box.height > 100;
"""
_PLOT_AREA = """
const area = document.querySelector(
  "[data-testid='stVegaLiteChart'].vega-embed .concat_0_group path.background");
if (area === null) return null;
area.scrollIntoView({block: "center"});
const box = area.getBoundingClientRect();
return [box.x, box.y, box.width, box.height];
"""
_TOOLTIP = """
const tip = document.getElementById("vg-tooltip-element");
return tip !== null && tip.classList.contains("visible") ? tip.innerText : null;
"""
# Pointing lands on the nearest profile row: rows are at most 0.15 km apart on the demo
# chart (80 km thinned to <= 600 rows) and each row's hover band is 3 px (0.43 km) tall,
# so the depth shown is within 0.5 km of the depth pointed at.
POINTING_KM = 0.5


def _tooltip_value(text: str, title: str) -> str:
    """The value beside ``title`` in the tooltip text (title, tab, value lines)."""
    lines = [line.strip() for line in text.splitlines() if line.strip()]
    return lines[lines.index(title) + 1]


def _point_at_depth(browser, wait, depth_km: float, max_depth_km: float) -> str:
    """Move the pointer over the strength panel at ``depth_km`` and return the tooltip."""
    box = wait.until(lambda d: d.execute_script(_PLOT_AREA))
    x, y, width, height = box
    element = browser.find_element(By.CSS_SELECTOR, "[data-testid='stVegaLiteChart'].vega-embed")
    centre = element.rect
    target_x = x + 0.3 * width
    target_y = y + height * depth_km / max_depth_km
    ActionChains(browser).move_to_element_with_offset(
        element,
        round(target_x - (centre["x"] + centre["width"] / 2)),
        round(target_y - (centre["y"] + centre["height"] / 2)),
    ).perform()
    return wait.until(lambda d: d.execute_script(_TOOLTIP))


def test_first_visit_shows_figure_and_demo_transition(served_page, browser):
    demo = rheology.analyse(load_scenario(bundled_example("demo")))
    first = views.km(views.first_faulting_base(demo).depth)  # e.g. "10.31 km"

    browser.get(served_page)
    wait = WebDriverWait(
        browser,
        PAGE_READY,
        poll_frequency=0.5,
        ignored_exceptions=(StaleElementReferenceException,),
    )
    wait.until(lambda d: d.execute_script(_CHART_READY))
    wait.until(lambda d: first in d.find_element(By.TAG_NAME, "body").text)
    time.sleep(1.0)  # let the last elements settle before the screenshot
    OUTPUT.mkdir(exist_ok=True)
    browser.save_screenshot(str(OUTPUT / "ui-first-visit.png"))

    # pointing at 40 km shows that depth, in the mantle, where the API says dislocation
    # creep governs
    target_km = 40.0
    band = next(b for b in demo.bands if b.top <= target_km * 1e3 < b.bottom)
    tip = _point_at_depth(browser, wait, target_km, demo.scenario.max_depth / 1e3)
    assert abs(float(_tooltip_value(tip, "depth [km]")) - target_km) <= POINTING_KM
    assert _tooltip_value(tip, "layer") == band.layer
    assert _tooltip_value(tip, "governing mechanism") == band.mechanism

    text = browser.find_element(By.TAG_NAME, "body").text
    assert "faults reach" in text and first in text
    assert "Screening estimate only" in text
    assert "Traceback" not in text
    for transition in demo.transitions:
        assert views.km(transition.depth) in text

    # the profile download delivers the API's numbers (the tab reruns the page, so
    # elements are looked up afresh until the click goes through)
    _click(browser, "//*[@role='tab'][normalize-space()='Take the numbers away']")
    _click(browser, "//button[normalize-space()='Profile table (.csv)']")
    name = views.payload_names(demo)["csv"]
    target = browser.downloads / name
    deadline = time.monotonic() + DOWNLOAD
    while not target.exists() and time.monotonic() < deadline:
        time.sleep(0.5)
    assert target.exists(), f"{name} was not downloaded within {DOWNLOAD:.0f} s"
    frame = pd.read_csv(io.StringIO(target.read_text(encoding="utf-8")), comment="#")
    pd.testing.assert_frame_equal(frame, outputs.profile_frame(demo), check_exact=True)
