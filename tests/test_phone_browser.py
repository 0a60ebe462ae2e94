"""The guide's phone page in a real browser at phone size: offline, no sideways scroll, night mode.

Runs Debian's chromium through Playwright. Skipped on a machine without /usr/bin/chromium,
but it fails in CI (environment variable CI set), where the browser must be present.
"""

import json
from pathlib import Path

import pytest
from browser_check import browser_or_skip, refusing_context

from auroraplan.render.phone import phone_page_html
from auroraplan.render.style import NIGHT_BG, PAPER

PHONE = {"width": 360, "height": 740}
FIXTURES = Path(__file__).parent / "fixtures"
ARTIFACTS = Path(__file__).parent / "_artifacts"


def _rgb(hex_colour: str) -> str:
    h = hex_colour.lstrip("#")
    return "rgb({}, {}, {})".format(*(int(h[i:i + 2], 16) for i in (0, 2, 4)))


@pytest.fixture(scope="module")
def page_file(tmp_path_factory):
    report = json.loads((FIXTURES / "tonight_report.json").read_text(encoding="utf-8"))
    path = tmp_path_factory.mktemp("phone") / "tonight.html"
    path.write_text(phone_page_html(report), encoding="utf-8")
    return path


def test_phone_page_at_360_by_740_offline_with_night_mode(page_file, tmp_path):
    sync_api = browser_or_skip()
    ARTIFACTS.mkdir(exist_ok=True)
    requests = []
    with refusing_context(sync_api, PHONE, requests) as context:
        page = context.new_page()

        # The counter works: a page that asks for an outside image is caught.
        control = tmp_path / "control.html"
        control.write_text('<img src="https://example.invalid/a.png">', encoding="utf-8")
        page.goto(control.as_uri())
        page.wait_for_load_state("load")
        assert len(requests) == 1
        requests.clear()

        page.goto(page_file.as_uri())
        page.wait_for_load_state("load")

        # A roadside phone: nothing fetched, nothing wider than the screen.
        assert requests == []
        assert page.evaluate("document.documentElement.scrollWidth") <= PHONE["width"]
        body_bg = "getComputedStyle(document.body).backgroundColor"
        assert page.evaluate(body_bg) == _rgb(PAPER)
        page.screenshot(path=str(ARTIFACTS / "phone-360x740-day.png"))

        page.click("#night")
        assert page.evaluate(body_bg) == _rgb(NIGHT_BG)
        assert page.get_attribute("#night", "aria-pressed") == "true"
        shot = ARTIFACTS / "phone-360x740.png"
        page.screenshot(path=str(shot))

        # The choice stays on the device: night colours again after a reload.
        page.reload()
        assert page.evaluate(body_bg) == _rgb(NIGHT_BG)
        assert page.evaluate("document.documentElement.scrollWidth") <= PHONE["width"]

        # Tap targets: the toggle and every maps link at least 44 CSS px high.
        heights = page.evaluate(
            "Array.from(document.querySelectorAll('button, a.tap'))"
            ".map(e => e.getBoundingClientRect().height)"
        )
        assert heights and min(heights) >= 44
    assert requests == []
    assert shot.exists() and shot.stat().st_size > 10_000

