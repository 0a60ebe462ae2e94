"""The guide's offline phone page: everything on it, nothing fetched from outside."""

import copy
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from auroraplan.cautions import CAUTIONS, FORECAST_NOT_PROMISE
from auroraplan.render import style
from auroraplan.render.index_page import index_html
from auroraplan.render.phone import bearing_arrow_svg, geo_uri, phone_page_html

FIXTURES = Path(__file__).parent / "fixtures"
OUTSIDE_URL = re.compile(r"https?:", re.IGNORECASE)
PROTOCOL_RELATIVE = re.compile(
    r"""(?:\b(?:src|href|xlink:href|action|poster|srcset)\s*=\s*["']?\s*//)|(?:url\(\s*["']?\s*//)""",
    re.IGNORECASE,
)
FETCHING_TAGS = {"link", "img", "iframe", "object", "embed", "video", "audio", "source", "image"}


class Collector(HTMLParser):
    """Gathers tags, link targets and text, and checks that every opened element closes."""

    VOID = {"meta", "br", "img", "link", "input", "hr", "circle", "line", "rect", "path"}

    def __init__(self):
        super().__init__()
        self.tags, self.hrefs, self.text, self.stack = [], [], [], []
        self.html_attrs = {}

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        attrs = dict(attrs)
        if tag == "html":
            self.html_attrs = attrs
        if "href" in attrs:
            self.hrefs.append(attrs["href"])
        if "src" in attrs:
            self.hrefs.append(attrs["src"])
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append(tag)

    def handle_endtag(self, tag):
        if tag in self.VOID:
            return
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes {self.stack[-1:]}"
        self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


@pytest.fixture(scope="module")
def report():
    return json.loads((FIXTURES / "tonight_report.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def page(report):
    return phone_page_html(report)


@pytest.fixture(scope="module")
def parsed(page):
    c = Collector()
    c.feed(page)
    c.close()
    assert c.stack == []
    return c


def test_page_is_semantic_html_for_a_phone(parsed, page):
    assert page.startswith("<!DOCTYPE html>")
    assert parsed.html_attrs.get("lang") == "en"
    for tag in ("header", "main", "ol", "li", "section", "footer", "button", "svg"):
        assert tag in parsed.tags, tag
    assert 'name="viewport" content="width=device-width, initial-scale=1"' in page


def test_nothing_is_fetched_from_outside(page, parsed):
    assert not OUTSIDE_URL.search(page)
    assert not PROTOCOL_RELATIVE.search(page)
    assert not FETCHING_TAGS & set(parsed.tags)
    assert "@import" not in page and "@font-face" not in page
    # The only links: geo: URIs and anchors within the page.
    assert parsed.hrefs and all(h.startswith(("geo:", "#")) for h in parsed.hrefs)


def test_the_checks_would_catch_an_outside_link(report):
    """The regexes above are not blind: a CDN stylesheet or protocol-relative image is seen."""
    assert OUTSIDE_URL.search('<link href="https://cdn.example/x.css">')
    assert PROTOCOL_RELATIVE.search('<img src="//cdn.example/a.png">')
    assert PROTOCOL_RELATIVE.search("background:url( '//cdn.example/a.png')")


def test_every_shortlisted_site_is_there_with_its_chance_and_map_link(report, page, parsed):
    text = " ".join(parsed.text)
    for site in report["sites"]:
        assert site["name"] in text
        assert f"{round(100 * site['chance'])} %" in text
        assert f"geo:{site['lat']:g},{site['lon']:g}" in parsed.hrefs
        assert style.chance_in_words(site["chance"]) in text
        assert style.time_span(site["window_start"], site["window_end"]) in text
    # Ranked order, best first, as the report gives it.
    positions = [text.index(s["name"]) for s in report["sites"]]
    assert positions == sorted(positions)


def test_window_limit_bearing_moon_cloud_drive_in_words(report, parsed):
    text = " ".join(parsed.text)
    first = report["sites"][0]
    # Fixture: Gåsvika lay-by, window 21:40–01:10 local, held back by cloud, look 352° (N).
    assert "best 21:40–01:10" in text
    assert "Held back by" in text and "cloud" in text and "moonlight" in text
    assert "352° true (N)" in text
    assert f"{round(first['cloud_pct'])} % cover" in text
    assert f"{first['drive_min']} min from base" in text
    assert "62 % lit" in text


def test_cautions_notice_and_forecast_source_are_shown(report, parsed):
    text = " ".join(parsed.text)
    for caution in CAUTIONS:
        assert caution in text
    assert FORECAST_NOT_PROMISE in text
    assert "Made 14 Jan 2027, 15:42 (UTC+01:00) from activity.csv" in text


def test_night_mode_is_remembered_and_applied_before_first_paint(page):
    head, body = page.split("<body>", 1)
    assert "localStorage.getItem('auroraplan-night')" in head
    assert "<style>" in head and "html.night" in head
    assert "localStorage.setItem('auroraplan-night'" in body


def test_text_is_escaped(report):
    nasty = copy.deepcopy(report)
    nasty["sites"][0]["name"] = '<script>alert("x")</script> & Co'
    nasty["sites"][0]["notes"] = "<img src=//evil>"
    page = phone_page_html(nasty)
    assert "<script>alert" not in page and "<img" not in page
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; Co" in page


def test_a_site_without_bearing_or_window_still_renders(report):
    bare = copy.deepcopy(report)
    s = bare["sites"][0]
    s.update(look_azimuth=None, look_compass=None, window_start=None, window_end=None,
             cloud_pct=None, hourly=[], limiting=None, kp_needed=0.0)
    page = phone_page_html(bare)
    assert "no good window tonight" in page and "no cloud forecast" in page
    # A site under the oval needs no activity at all: said in words, not "needs 0.0".
    assert "in view at any Kp" in page and "needs 0.0" not in page


@pytest.mark.parametrize("lat, lon, uri", [
    # RFC 5870 section 1 example: geo:13.4125,103.8667
    (13.4125, 103.8667, "geo:13.4125,103.8667"),
    (-33.0, -70.5, "geo:-33,-70.5"),
])
def test_geo_uri_follows_rfc_5870(lat, lon, uri):
    assert geo_uri(lat, lon) == uri


def test_bearing_arrow_turns_to_the_true_bearing():
    assert 'rotate(352 ' in bearing_arrow_svg(352.0)
    assert 'rotate(90 ' in bearing_arrow_svg(90.0)


def _relative_luminance(hex_colour):
    """WCAG 2.1 relative luminance (sRGB linearisation as in the WCAG 2.1 definition)."""
    out = []
    for i in (1, 3, 5):
        c = int(hex_colour[i:i + 2], 16) / 255
        out.append(c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4)
    return 0.2126 * out[0] + 0.7152 * out[1] + 0.0722 * out[2]


def _contrast(a, b):
    la, lb = sorted((_relative_luminance(a), _relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


@pytest.mark.parametrize("fg, bg", [
    (style.INK, style.PAPER), (style.SLATE, style.PAPER), (style.AMBER_INK, style.PAPER),
    (style.NIGHT_TEXT, style.NIGHT_BG),
])
def test_text_colours_meet_wcag_aa_contrast(fg, bg):
    # WCAG 2.1 success criterion 1.4.3: at least 4.5:1 for body text.
    assert _contrast(fg, bg) >= 4.5
    # The formula itself: black on white is 21:1 (WCAG 2.1 definition of contrast ratio).
    assert _contrast("#000000", "#ffffff") == pytest.approx(21.0)


def test_night_colours_are_red_only():
    """Dark adaptation: night colours carry no green or blue to speak of."""
    for colour in (style.NIGHT_TEXT, style.NIGHT_FG, style.NIGHT_DIM):
        r, g, b = (int(colour[i:i + 2], 16) for i in (1, 3, 5))
        assert r > 3 * max(g, b)


def test_index_page_lists_the_outputs_offline():
    page = index_html("Demo outputs", "2027-01-14T15:42:00+01:00", [
        {"title": "Tonight's phone page", "href": "tonight.html", "description": "for guides"},
        {"title": "Itinerary <T-1>", "href": "itinerary-T-1.pdf", "description": "print"},
    ])
    c = Collector()
    c.feed(page)
    assert c.hrefs == ["tonight.html", "itinerary-T-1.pdf"]
    assert "Itinerary &lt;T-1&gt;" in page
    assert not OUTSIDE_URL.search(page) and not PROTOCOL_RELATIVE.search(page)
