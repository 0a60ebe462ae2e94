"""Guests' and guides' words in English and German: catalogues, Babel formats, printed text."""

import dataclasses
import datetime as dt
import io
import re
import shutil
from pathlib import Path

import pytest
from icalendar import Calendar
from pypdf import PdfReader

from auroraplan import i18n, report, runsheet
from auroraplan.i18n import Words
from auroraplan.render.calendar import plan_ics
from auroraplan.render.itinerary_pdf import itinerary_pdf
from auroraplan.render.phone import phone_page_html, run_sheet_html
from auroraplan.workspace import load_workspace

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = Path(__file__).parent / "fixtures"


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


@pytest.mark.parametrize("language, long, percent", [
    # Unicode CLDR (through Babel): en_GB full date "EEEE d MMMM y", de "EEEE, d. MMMM y";
    # German writes a space before the percent sign (DIN 5008), from memory.
    ("en", "Thursday 14 January 2027", "58 %"),
    ("de", "Donnerstag, 14. Januar 2027", "58 %"),
])
def test_dates_and_numbers_follow_the_language(language, long, percent):
    w = Words(language)
    assert w.long_date("2027-01-14").replace(",", "") == long.replace(",", "")
    assert w.percent(0.58).replace("\xa0", " ") == percent
    assert w.number(3.5) == ("3.5" if language == "en" else "3,5")
    assert w.clock("2027-01-14T21:40+01:00") == "21:40"


def test_unknown_text_falls_back_to_english_and_fields_fill():
    w = Words("de")
    assert w("Pick-up") == "Abholung"
    assert w("no such text {x}", x=1) == "no such text 1"
    assert w("{n} guests", n=12) == "12 Gäste"
    with pytest.raises(ValueError, match="choose one of en, de"):
        Words("xx")


@pytest.fixture(scope="module")
def demo_de(tmp_path_factory):
    """The demo workspace with [print] language = "de"."""
    folder = tmp_path_factory.mktemp("de") / "ws"
    shutil.copytree(ROOT / "demo_sites", folder)
    toml = folder / "operator.toml"
    toml.write_text(toml.read_text(encoding="utf-8").replace('language = "en"', 'language = "de"'),
                    encoding="utf-8")
    ws = load_workspace(folder)
    assert runsheet.language(ws.settings) == "de"
    return ws, report.bookings_report(ws)


def test_every_text_of_the_german_outputs_has_a_translation(demo_de, monkeypatch):
    """Record each English text looked up while making German outputs: all are in the
    catalogue, so no English sentence is left in a German page, PDF or calendar."""
    ws, plan = demo_de
    asked = set()
    lookup = Words.__call__

    def record(self, text, **fields):
        asked.add(text)
        return lookup(self, text, **fields)

    monkeypatch.setattr(Words, "__call__", record)
    tonight = report.tonight_report(ws, dt.date(2027, 1, 12))
    for trip in ("T01", "T02", "T03"):
        sheet = runsheet.run_sheet(tonight, plan, trip, ws.settings)
        run_sheet_html(sheet, tonight, "de")
    phone_page_html(tonight, "de")
    itinerary_pdf(plan, "T01", operator_settings=ws.settings)
    plan_ics(plan, "de")
    missing = sorted(t for t in asked if not Words("de").has(t))
    assert len(asked) > 60
    assert not missing, missing


def test_german_itinerary_prints_its_letters_and_the_operator_entries(demo_de):
    ws, plan = demo_de
    pdf = itinerary_pdf(plan, "T01", operator_settings=ws.settings)
    text = _flat(" ".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages))
    assert "Polarlicht-Abende für Riverbend camera club" in text
    assert "Treffpunkt: Harbour office, front steps · Kaiveien 3, Tromsø" in text
    assert "69,6492° N, 18,9553° O" in text  # Babel: German decimal comma
    assert "Telefon des Veranstalters: +47 700 00 100" in text
    assert "Notfall: 112" in text
    assert "Wenn die Nacht bewölkt ist oder ausfällt" in text
    assert "If the whole region is under cloud" in text  # the operator's own words, as given
    assert "Eine Chance von 30 % bedeutet" in text.replace("\xa0", " ")
    # German letters print as themselves; nothing is replaced by "?".
    assert all(ch in text for ch in "äöüß")
    assert "?" not in text
    # Babel's German dates: "Sa. 09.01.2027" style weekday and medium date.
    assert re.search(r"(Mo|Di|Mi|Do|Fr|Sa|So)\. \d\d\.\d\d\.2027", text)


def test_missing_contact_entries_are_left_out(demo_de):
    ws, plan = demo_de
    from auroraplan.runsheet import ContactSettings, PrintSettings

    settings = dataclasses.replace(ws.settings, contact=ContactSettings(phone="+47 1"),
                                   print=PrintSettings(language="en"))
    pdf = itinerary_pdf(plan, "T01", operator_settings=settings)
    text = _flat(" ".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages))
    assert "Operator phone: +47 1" in text
    for label in ("Meeting point", "Emergency", "If the night is cloudy"):
        assert label not in text
    assert "None" not in text and ": ·" not in text
    assert "A chance of 30 % means" in text


def test_german_calendar_text(demo_de):
    ws, plan = demo_de
    cal = Calendar.from_ical(plan_ics(plan, "de"))
    events = list(cal.walk("VEVENT"))
    assert events
    first = events[0]
    assert str(first["SUMMARY"]).startswith("Polarlicht-Ausfahrt: ")
    assert "Bestes Zeitfenster: " in str(first["DESCRIPTION"])


def test_catalogue_is_a_valid_po_file_with_python_format_fields():
    """Every translation keeps the same {fields} as its English text (else .format fails)."""
    texts = i18n._catalogue("de")
    assert len(texts) > 100
    for english, german in texts.items():
        assert set(re.findall(r"{(\w+)}", english)) == set(re.findall(r"{(\w+)}", german)), english
