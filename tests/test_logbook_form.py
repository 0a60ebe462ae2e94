"""The logbook form on the run sheet, read as HTML: the fields the logbook CSV file needs,
filled in for the group's night, and nothing fetched from outside."""

import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from auroraplan import logbook
from auroraplan.i18n import Words
from auroraplan.render.logbook_form import STORE_KEY, logbook_form_html
from auroraplan.render.phone import run_sheet_html

FIXTURES = Path(__file__).parent / "fixtures"


class Elements(HTMLParser):
    """Every start tag with its attributes, in document order."""

    def __init__(self):
        super().__init__()
        self.tags = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


@pytest.fixture(scope="module")
def tonight():
    return json.loads((FIXTURES / "tonight_report.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def sheet(tonight):
    sites = tonight["sites"]
    return {"trip": "T07", "group": "Hill walkers", "guests": 6, "site_name": sites[1]["name"],
            "backup_name": sites[2]["name"], "site": sites[1], "outing": None,
            "no_outing": "free evening"}


def _parse(text):
    parser = Elements()
    parser.feed(text)
    return parser.tags


def test_form_holds_the_logbook_fields_for_the_groups_night(sheet, tonight):
    text = logbook_form_html(sheet, tonight, Words("en"))
    tags = _parse(text)
    form = next(a for t, a in tags if t == "form")
    # The export writes exactly the columns `auroraplan logbook import` reads, in order.
    assert json.loads(form["data-columns"]) == list(logbook.COLUMNS)
    assert form["data-key"] == STORE_KEY
    assert form["data-source"] == "run sheet T07"
    assert form["data-file"] == f"logbook-T07-{tonight['date']}.csv"
    levels = [a["value"] for t, a in tags if t == "input" and a.get("name") == "aurora"]
    assert levels == list(logbook.AURORA_LEVELS)
    night = next(a for t, a in tags if t == "input" and a.get("name") == "night")
    assert night["value"] == tonight["date"] and night["type"] == "date"
    names = {a.get("name") for t, a in tags if t in ("input", "select", "textarea")}
    assert names == {"site", "night", "aurora", "cloud_seen", "out_from", "out_until", "note"}
    cloud = next(a for t, a in tags if a.get("name") == "cloud_seen")
    assert (cloud["min"], cloud["max"]) == ("0", "100")  # logbook.cloud_seen's range
    note = next(a for t, a in tags if a.get("name") == "note")
    assert note["maxlength"] == str(logbook.MAX_TEXT)
    # The group's site is chosen; its backup is the next choice; every open site is there.
    options = re.findall(r"<option( selected)?>([^<]*)</option>", text)
    assert options[0] == (" selected", sheet["site_name"])
    assert options[1] == ("", sheet["backup_name"])
    assert sum(1 for sel, _ in options if sel) == 1
    assert {n for _, n in options} == {s["name"] for s in tonight["sites"]}
    # A Blob and an <a download> link: no address outside the page.
    assert "new Blob(" in text and ".download=" in text
    assert not re.search(r"https?:|fetch\(|XMLHttpRequest|sendBeacon", text)


def test_form_sits_below_the_outing_and_collapsed(sheet, tonight):
    page = run_sheet_html(sheet, tonight)
    tags = _parse(page)
    order = [a.get("id") or a.get("class") for t, a in tags if t in ("section", "details")]
    assert order.index("logbook") > order.index("call")
    assert order.index("logbook") < order.index("all")
    details = next(a for t, a in tags if t == "details" and a.get("id") == "logbook")
    assert "open" not in details


def test_site_names_are_escaped(sheet, tonight):
    nasty = dict(sheet, site_name='Ridge "<b>"', trip="T<1>")
    text = logbook_form_html(nasty, tonight, Words("en"))
    assert "<b>" not in text and "T<1>" not in text
    assert "Ridge &quot;&lt;b&gt;&quot;" in text


def test_german_form_words(sheet, tonight):
    w = Words("de")
    text = logbook_form_html(sheet, tonight, w)
    assert "Polarlicht gesehen" in text and "Logbuch-Datei exportieren" in text
