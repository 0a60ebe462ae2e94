"""Debian's chromium through Playwright for the page tests: skipped on a desk without it,
failing in CI (environment variable CI set), where .ci/run installs it."""

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
