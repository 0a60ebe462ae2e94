"""The guide's run sheet in a real browser at 390 × 844: first screen, legibility, contrast, offline.

Runs Debian's chromium through Playwright on the run sheet of the demo workspace's first
group on the storm night. Sizes and colours are read from the browser's computed styles,
not from the CSS text. Skipped without /usr/bin/chromium, but failing in CI (variable CI).
"""

import datetime as dt
from pathlib import Path

import pytest
from browser_check import ARGS, CHROMIUM, browser_or_skip, refusing_context

from auroraplan import report, runsheet
from auroraplan.render import style
from auroraplan.render.phone import run_sheet_html
from auroraplan.workspace import load_workspace

PHONE = {"width": 390, "height": 844}
DEMO = Path(__file__).resolve().parents[1] / "demo_sites"
ARTIFACTS = Path(__file__).parent / "_artifacts"
NIGHT = dt.date(2027, 1, 13)  # a night T01 is planned to go out

# Every rendered element with its own text: its effective font size in CSS px (SVG text
# scaled by its drawing's viewBox), text colour (fill for SVG), the first opaque
# background behind it, and its opacity down the tree.
TEXT_STYLES = """() => {
  const out = [];
  const bg = el => {
    for (let e = el; e; e = e.parentElement) {
      const c = getComputedStyle(e).backgroundColor;
      if (c && c !== 'transparent' && !c.endsWith(', 0)')) return c;
    }
    return getComputedStyle(document.documentElement).backgroundColor;
  };
  for (const el of document.querySelectorAll('body *')) {
    const own = Array.from(el.childNodes).some(n => n.nodeType === 3 && n.textContent.trim());
    if (!own || !el.getClientRects().length) continue;
    const cs = getComputedStyle(el);
    if (cs.visibility === 'hidden') continue;
    let size = parseFloat(cs.fontSize), colour = cs.color;
    const svg = el.closest('svg');
    if (svg) {
      const box = svg.viewBox.baseVal;
      if (box && box.width) size *= svg.getBoundingClientRect().width / box.width;
      colour = cs.fill;
    }
    let opacity = 1;
    for (let e = el; e; e = e.parentElement) opacity *= parseFloat(getComputedStyle(e).opacity);
    out.push({text: el.textContent.trim().slice(0, 40), size, colour, bg: bg(el), opacity});
  }
  return out;
}"""


def _channels(css: str) -> tuple[float, ...]:
    return tuple(float(x) for x in css[css.index("(") + 1:css.index(")")].split(",")[:3])


def _luminance(css: str) -> float:
    """WCAG 2.1 relative luminance of an rgb() colour (sRGB linearised as WCAG 2.1 defines)."""
    lin = [c / 255 / 12.92 if c / 255 <= 0.04045 else ((c / 255 + 0.055) / 1.055) ** 2.4
           for c in _channels(css)]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def contrast(fg: str, bg: str) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05)."""
    hi, lo = sorted((_luminance(fg), _luminance(bg)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def test_contrast_formula_matches_wcag():
    # WCAG 2.1 definition: black on white is 21:1, a colour on itself 1:1.
    assert contrast("rgb(0, 0, 0)", "rgb(255, 255, 255)") == pytest.approx(21.0)
    assert contrast("rgb(40, 90, 10)", "rgb(40, 90, 10)") == pytest.approx(1.0)
    # WebAIM's contrast checker example: #767676 on white is 4.54:1 (the lightest grey
    # that passes AA), from memory.
    assert contrast("rgb(118, 118, 118)", "rgb(255, 255, 255)") == pytest.approx(4.54, abs=0.01)


@pytest.fixture(scope="module")
def sheet_page(tmp_path_factory):
    ws = load_workspace(DEMO)
    tonight = report.tonight_report(ws, NIGHT)
    sheet = runsheet.run_sheet(tonight, report.bookings_report(ws), "T01", ws.settings)
    path = tmp_path_factory.mktemp("sheet") / "run-sheet-T01.html"
    path.write_text(run_sheet_html(sheet, tonight), encoding="utf-8")
    return path, sheet, tonight


def _check_legible(page, mode: str):
    texts = page.evaluate(TEXT_STYLES)
    assert len(texts) > 20
    small = [t for t in texts if t["size"] < 16 - 1e-6]
    assert not small, f"{mode}: text under 16 px: {small[:5]}"
    faint = [t for t in texts if t["opacity"] < 1]
    assert not faint, f"{mode}: translucent text: {faint[:5]}"
    low = [(t["text"], round(contrast(t["colour"], t["bg"]), 2)) for t in texts
           if contrast(t["colour"], t["bg"]) < 4.5]
    # WCAG 2.1 success criterion 1.4.3 (AA): at least 4.5:1 for text.
    assert not low, f"{mode}: contrast under 4.5:1: {low[:5]}"


def test_run_sheet_first_screen_legible_in_both_modes_and_offline(sheet_page, tmp_path):
    sync_api = browser_or_skip()
    path, sheet, tonight = sheet_page
    ARTIFACTS.mkdir(exist_ok=True)
    requests = []
    with refusing_context(sync_api, PHONE, requests, offline=True) as context:
        page = context.new_page()
        page.on("request", lambda r: None if r.url.startswith("file://")
                else requests.append(r.url))
        # The counter works: a page that asks for an outside image is caught.
        control = tmp_path / "control.html"
        control.write_text('<img src="https://example.invalid/a.png">', encoding="utf-8")
        page.goto(control.as_uri())
        page.wait_for_load_state("load")
        assert requests
        requests.clear()

        # Daytime on the device clock: the page opens in day colours.
        page.clock.set_fixed_time(dt.datetime.fromisoformat(tonight["date"] + "T12:00+01:00"))
        page.goto(path.as_uri())
        page.wait_for_load_state("load")
        assert not page.evaluate("document.documentElement.classList.contains('night')")

        # The first screen holds the group's outing and the call.
        first = {}
        for key in ("call", "pickup", "site", "backup", "window", "look"):
            box = page.locator(f"#{key}").bounding_box()
            assert box is not None, key
            assert box["y"] >= 0 and box["y"] + box["height"] <= PHONE["height"], key
            first[key] = page.inner_text(f"#{key}")
        assert sheet["site_name"] in first["site"]
        assert page.inner_text("h1").count(str(sheet["guests"])) == 1
        assert sheet["pickup"][11:16] in first["pickup"]
        assert style.time_span(sheet["window_start"], sheet["window_end"]) in first["window"]
        site = sheet["site"]
        if site.get("overhead"):  # a storm band over the site: the whole sky
            assert "overhead" in first["look"]
        else:
            assert f"{round(site['look_azimuth']) % 360}° true ({site['look_compass']})" \
                in first["look"]
        verdict = {"go": "Go:", "wait": "Wait", "swap": "Swap to the backup"}
        assert first["call"].startswith(verdict[sheet["decision"]["call"]])
        # The compass is at least 96 CSS px across.
        compass = page.locator("#look svg").bounding_box()
        assert compass["width"] >= 96 and compass["height"] >= 96
        # The full site list is there but collapsed.
        assert page.locator("details.all").get_attribute("open") is None
        assert not page.locator("ol.sites").is_visible()
        page.screenshot(path=str(ARTIFACTS / "run-sheet-390x844-day.png"))
        _check_legible(page, "day")
        page.click("details.all > summary")
        assert page.locator("ol.sites").is_visible()
        _check_legible(page, "day, list open")
        assert page.evaluate("document.documentElement.scrollWidth") <= PHONE["width"]

        page.click("#night")
        assert page.evaluate("document.documentElement.classList.contains('night')")
        _check_legible(page, "night, list open")
        page.click("details.all > summary")
        page.evaluate("window.scrollTo(0, 0)")
        page.screenshot(path=str(ARTIFACTS / "run-sheet-390x844-night.png"))

        # In the darkness window a page never toggled opens in night colours.
        fresh = context.new_page()
        fresh.clock.set_fixed_time(
            dt.datetime.fromisoformat(tonight["dark_start"]) + dt.timedelta(hours=2))
        fresh.goto(path.as_uri())
        fresh.evaluate("localStorage.clear()")
        fresh.reload()
        assert fresh.evaluate("document.documentElement.classList.contains('night')")
        # ... and the guide's own choice wins until that darkness ends.
        fresh.click("#night")
        fresh.reload()
        assert not fresh.evaluate("document.documentElement.classList.contains('night')")
    assert requests == []


def test_logbook_form_keeps_entries_offline_and_exports_the_import_format(sheet_page, tmp_path):
    """Fill the form with the network off, reload, export: the file is the logbook CSV
    format, read back by the logbook's own reader as the one entry typed."""
    from auroraplan.logbook import read_logbook_csv

    sync_api = browser_or_skip()
    path, sheet, tonight = sheet_page
    requests = []
    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        try:
            context = browser.new_context(viewport=PHONE, accept_downloads=True)
            context.set_offline(True)

            # blob: is the export's own file in the page's memory; anything else is refused.
            def local(url):
                return url.startswith(("file://", "blob:"))

            def refuse(route):
                requests.append(route.request.url)
                route.abort()

            context.route(lambda url: not local(url), refuse)
            page = context.new_page()
            page.on("request", lambda r: None if local(r.url) else requests.append(r.url))
            page.clock.set_fixed_time(dt.datetime.fromisoformat(tonight["date"] + "T12:00+01:00"))
            page.goto(path.as_uri())
            page.evaluate("localStorage.clear()")
            page.reload()
            assert page.locator("details#logbook").get_attribute("open") is None
            assert not page.locator("#log-form").is_visible()
            page.click("details#logbook > summary")
            assert page.input_value("select[name=site]") == sheet["site_name"]
            assert page.input_value("input[name=night]") == tonight["date"]

            # Saving without a level is refused in words, and nothing is kept.
            page.click("#log-save")
            assert "Choose what was seen" in page.inner_text("#log-status")
            assert page.evaluate("localStorage.getItem('auroraplan-logbook')") is None

            page.click("form.log .levels label:has(input[value=clear])")
            page.fill("input[name=cloud_seen]", "25")
            page.fill("input[name=out_from]", "21:15")
            page.fill("input[name=out_until]", "23:40")
            page.fill("textarea[name=note]", 'Corona at 22:10, "green, then pink"')
            page.click("#log-save")
            assert "Saved" in page.inner_text("#log-status")
            _check_legible(page, "day, logbook open")
            page.click("#night")
            _check_legible(page, "night, logbook open")

            # Closing the page with no signal loses nothing.
            page.reload()
            page.click("details#logbook > summary")
            assert "1 entries kept" in page.inner_text("#log-count")
            kept = page.inner_text("#log-saved")
            assert sheet["site_name"] in kept and "21:15-23:40" in kept
            # A note a spreadsheet would run as a formula (OWASP, "CSV Injection").
            page.click("form.log .levels label:has(input[value=faint])")
            page.fill("input[name=out_from]", "")
            page.fill("input[name=out_until]", "")
            page.fill("textarea[name=note]", '=HYPERLINK("http://x.example","open")')
            page.click("#log-save")
            assert "2 entries kept" in page.inner_text("#log-count")
            with page.expect_download() as info:
                page.click("#log-export")
            exported = tmp_path / info.value.suggested_filename
            info.value.save_as(exported)
        finally:
            browser.close()
    assert requests == []
    assert exported.name == f"logbook-T01-{tonight['date']}.csv"
    ws = load_workspace(DEMO)
    entries = read_logbook_csv(exported, {s.name for s in ws.sites})
    assert len(entries) == 2
    # The formula cell is written with a leading single quote, and read back as typed.
    assert "'=HYPERLINK" in exported.read_text(encoding="utf-8")
    assert entries[1].note == '=HYPERLINK("http://x.example","open")'
    assert entries[1].aurora == "faint"
    e = entries[0]
    assert (e.site, e.night, e.aurora) == (sheet["site_name"], tonight["date"], "clear")
    assert (e.out_from, e.out_until, e.cloud_pct) == ("21:15", "23:40", 25.0)
    assert e.note == 'Corona at 22:10, "green, then pink"'
    assert e.source == "run sheet T01"
