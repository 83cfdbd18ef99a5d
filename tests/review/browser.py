"""Headless Chromium for the review page tests (Playwright from PyPI, Chromium from Debian).

A test that cannot get a browser is skipped with the reason.  The browser is
``TERRAHOP_CHROMIUM`` if set, else ``chromium`` on the PATH, else /usr/bin/chromium.
"""

from __future__ import annotations

import math
import os
import shutil
from contextlib import contextmanager
from typing import Iterator

import pytest

VIEWPORT = {"width": 1400, "height": 850}


def chromium_path() -> str | None:
    for p in (os.environ.get("TERRAHOP_CHROMIUM"), shutil.which("chromium"), "/usr/bin/chromium"):
        if p and os.path.isfile(p) and os.access(p, os.X_OK):
            return p
    return None


@contextmanager
def chromium() -> Iterator[object]:
    """A launched headless Chromium (Playwright Browser), or pytest.skip saying why there is none."""
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip("browser tests need Playwright: pip install -e '.[test]'")
    exe = chromium_path()
    if exe is None:
        pytest.skip("browser tests need Chromium: apt-get install chromium (or set TERRAHOP_CHROMIUM)")
    pw = sync_playwright().start()
    try:
        try:
            browser = pw.chromium.launch(executable_path=exe, args=["--no-sandbox", "--disable-gpu"])
        except Exception as exc:  # noqa: BLE001 - any failure to start means: no browser here
            pytest.skip(f"Chromium at {exe} did not start: {str(exc).splitlines()[0]}")
        try:
            yield browser
        finally:
            browser.close()
    finally:
        pw.stop()


def open_page(browser, path, errors: list) -> object:
    """A new tab on the page at ``path`` (file://), console errors collected in ``errors``, map drawn."""
    page = browser.new_page(viewport=VIEWPORT, accept_downloads=True)
    page.on("console", lambda m: errors.append(f"console {m.type}: {m.text}") if m.type in ("error", "warning")
            else None)
    page.on("pageerror", lambda e: errors.append(f"page error: {e}"))
    page.on("requestfailed", lambda r: errors.append(f"request failed: {r.url}"))
    page.goto(path.resolve().as_uri())
    wait_for(page, "document.body.dataset.ready === '1'", 20)
    return page


def world(lon: float, lat: float) -> tuple[float, float]:
    """Web Mercator world units (0..1, y southwards), as the page computes them."""
    s = math.sin(math.radians(max(-85.05112878, min(85.05112878, lat))))
    return (lon + 180.0) / 360.0, 0.5 - math.log((1 + s) / (1 - s)) / (4 * math.pi)


def screen_xy(view: dict, lon: float, lat: float) -> tuple[float, float]:
    """CSS pixels within the map canvas of a position, under the page's view."""
    x, y = world(lon, lat)
    s = 256.0 * 2.0 ** view["z"]
    return view["width"] / 2 + (x - view["cx"]) * s, view["height"] / 2 + (y - view["cy"]) * s


def wait_for(page, expression: str, timeout_s: float = 10.0) -> object:
    """Poll a JS expression until it is truthy (page.evaluate; the page's CSP forbids eval-based waits)."""
    import time

    end = time.monotonic() + timeout_s
    while True:
        value = page.evaluate(expression)
        if value:
            return value
        if time.monotonic() > end:
            raise AssertionError(f"timed out waiting for {expression}")
        page.wait_for_timeout(20)
