"""A real browser for the report's tests and screenshots: Debian's chromium,
headless, driven by chromedriver through selenium (PyPI), with the network
off and every request it makes recorded.

`.ci/run` installs chromium and chromedriver; locally the tests skip without
them, and under CI=true their absence is a failure."""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from contextlib import contextmanager
from pathlib import Path

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
CHROMEDRIVER = shutil.which("chromedriver")
FLAGS = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run",
         "--disable-default-apps", "--disable-extensions", "--hide-scrollbars",
         # nothing can leave the machine even if the page asked: no name resolves,
         # and every connection goes to a port nothing listens on
         "--host-resolver-rules=MAP * ~NOTFOUND", "--proxy-server=127.0.0.1:9"]
PHONE = (390, 844)  # a common phone's CSS viewport, portrait
DESKTOP = (1280, 900)


def missing() -> str | None:
    """Why the browser cannot run here (None when it can)."""
    if CHROMIUM is None or CHROMEDRIVER is None:
        return "chromium and chromedriver are not installed (apt-get install chromium chromium-driver)"
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "selenium is not installed (pip install -e '.[test]')"
    return None


@contextmanager
def browser(width: int, height: int):
    """A headless chromium with a fresh profile, the network emulated offline,
    and its DevTools log on (for the requests)."""
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    os.environ.setdefault("SE_AVOID_STATS", "true")
    profile = tempfile.mkdtemp(prefix="picker-chromium-")
    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in FLAGS + [f"--user-data-dir={profile}", f"--window-size={width},{height}"]:
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"performance": "ALL"})
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    try:
        if width < 500:  # a desktop window is never this narrow: emulate the phone's screen
            driver.execute_cdp_cmd("Emulation.setDeviceMetricsOverride", {
                "width": width, "height": height, "deviceScaleFactor": 1, "mobile": True})
        driver.execute_cdp_cmd("Network.enable", {})
        driver.execute_cdp_cmd("Network.emulateNetworkConditions", {
            "offline": True, "latency": 0, "downloadThroughput": 0, "uploadThroughput": 0})
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def requests(driver) -> list[str]:
    """Every URL the page asked for since the last call (DevTools' Network events)."""
    urls = []
    for entry in driver.get_log("performance"):
        message = json.loads(entry["message"])["message"]
        if message.get("method") == "Network.requestWillBeSent":
            urls.append(message["params"]["request"]["url"])
    return urls


def open_page(driver, path: Path) -> None:
    """Load the file; the requests log starts empty just before (the browser's
    own start page is not the report's doing)."""
    driver.get("about:blank")
    requests(driver)
    driver.get(path.resolve().as_uri())


def full_page_png(driver) -> bytes:
    """A screenshot of the whole page, not only the window (DevTools)."""
    import base64

    metrics = driver.execute_cdp_cmd("Page.getLayoutMetrics", {})
    size = metrics["cssContentSize"]
    shot = driver.execute_cdp_cmd("Page.captureScreenshot", {
        "format": "png", "captureBeyondViewport": True,
        "clip": {"x": 0, "y": 0, "width": size["width"], "height": size["height"], "scale": 1}})
    return base64.b64decode(shot["data"])
