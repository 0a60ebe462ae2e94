"""Debian's chromium through Playwright for the page tests: skipped on a desk without it,
failing in CI (environment variable CI set), where .ci/run installs it."""

import contextlib
import os
from pathlib import Path

import pytest

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]


def browser_or_skip():
    """Playwright's sync API, once chromium is known to be there."""
    if not Path(CHROMIUM).exists():
        if os.environ.get("CI"):
            pytest.fail(f"{CHROMIUM} is missing; CI must install Debian's chromium")
        pytest.skip(f"{CHROMIUM} not installed")
    return pytest.importorskip("playwright.sync_api")


@contextlib.contextmanager
def refusing_context(sync_api, viewport, requests: list, offline: bool = False):
    """A chromium browser context at ``viewport`` (device scale 2) in which every request
    other than for a file:// page is refused and its address added to ``requests``;
    ``offline`` also takes the network away. The browser is closed on leaving."""
    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        try:
            context = browser.new_context(viewport=viewport, device_scale_factor=2)
            if offline:
                context.set_offline(True)

            def refuse(route):
                requests.append(route.request.url)
                route.abort()

            context.route(lambda url: not url.startswith("file://"), refuse)
            yield context
        finally:
            browser.close()
