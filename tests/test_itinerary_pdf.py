"""The sales agent's printed itinerary, and the `itinerary` command that writes it."""

import datetime as dt
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from pypdf import PdfReader

from auroraplan.cautions import CAUTIONS
from auroraplan.cli import main
from auroraplan.commands.itinerary import itinerary_file_names
from auroraplan.errors import InputError
from auroraplan.plans import WeekPlan
from auroraplan.render.itinerary_pdf import KIT_LIST, itinerary_pdf, printable
from auroraplan.workspace import Operator, Trip, Workspace

FIXTURES = Path(__file__).parent / "fixtures"


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


def _printed(report_date: str) -> str:
    d = dt.date.fromisoformat(report_date)
    return f"{d.strftime('%a')} {d.day} {d.strftime('%b %Y')}"


@pytest.fixture(scope="module")
def week():
    return json.loads((FIXTURES / "week_report.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def pdf_a4(week):
    return itinerary_pdf(week, "T-0327", paper="A4")


@pytest.fixture(scope="module")
def text(pdf_a4, tmp_path_factory):
    path = tmp_path_factory.mktemp("pdf") / "it.pdf"
    path.write_bytes(pdf_a4)
    return _flat("\n".join(p.extract_text() for p in PdfReader(path).pages))


def test_itinerary_names_the_group_its_stay_and_every_night(week, text):
    trip = next(t for t in week["trips"] if t["trip"] == "T-0327")
    # Accents and the en dash survive the standard fonts' WinAnsi encoding.
    assert "Rivière école d'astronomie" in text
    assert "11 guests" in text
    for night in trip["nights"]:
        assert _printed(night["date"]) in text
    # The stay's first outing crosses the change to summer time: pick-up 21:00, back 01:30.
    assert "21:00 – 01:30" in text


def test_each_outing_shows_site_backup_and_chance_in_words(week, text):
    for outing in (p for p in week["plan"] if p["trip"] == "T-0327"):
        assert outing["site"] in text
        assert f"backup: {outing['backup']}" in text
    assert "good (61 %)" in text  # 0.61 on our own word scale (style.CHANCE_WORDS)
    assert "Free evening" in text  # 30 March: no outing planned


def test_forecast_and_outlook_nights_are_told_apart(text):
    assert "Kp forecast" in text and "outlook from Kp history" in text
    assert "Made 24 Mar 2027, 16:10 (UTC+01:00) from activity.csv" in text
    assert "forecasts, not promises" in text


def test_cautions_and_kit_list_are_printed(text):
    for caution in CAUTIONS:
        assert _flat(caution) in text
    for item in KIT_LIST:
        assert _flat(item) in text


@pytest.mark.parametrize("paper, width_mm, height_mm", [
    ("A4", 210.0, 297.0),  # ISO 216
    ("Letter", 215.9, 279.4),  # ANSI/ASME Y14.1 letter, 8.5 × 11 in
])
def test_paper_size(week, paper, width_mm, height_mm, tmp_path):
    path = tmp_path / "it.pdf"
    path.write_bytes(itinerary_pdf(week, "T-0325", paper=paper))
    box = PdfReader(path).pages[0].mediabox
    assert float(box.width) * 25.4 / 72 == pytest.approx(width_mm, abs=0.1)
    assert float(box.height) * 25.4 / 72 == pytest.approx(height_mm, abs=0.1)


def test_unknown_trip_or_paper_is_one_clear_line(week):
    with pytest.raises(InputError, match=r"'T-9999' is not in this plan; known trips: T-0325"):
        itinerary_pdf(week, "T-9999")
    with pytest.raises(InputError, match="choose A4 or Letter"):
        itinerary_pdf(week, "T-0325", paper="A3")


def test_names_are_printed_as_written_never_folded():
    # Sámi letters (Č, Ŋ, Đ, Ŧ) and a decomposed é are kept, composed (Unicode NFC).
    assert printable("Čázádat − Ŋiŋgu Đ ŧ ø å ä ° –") == "Čázádat − Ŋiŋgu Đ ŧ ø å ä ° –"
    assert printable("Cafe\u0301") == "Café"


@pytest.mark.parametrize("group", ["Группа Иванова", "Ομάδα Παπαδόπουλου", "Čáhppesjávri ŋ"])
def test_greek_and_cyrillic_groups_are_printed_in_the_text_and_title(week, group, tmp_path):
    report = json.loads(json.dumps(week))
    report["trips"][-1]["group"] = group
    path = tmp_path / "it.pdf"
    path.write_bytes(itinerary_pdf(report, report["trips"][-1]["trip"]))
    reader = PdfReader(path)
    assert group in _flat(reader.pages[0].extract_text())
    assert reader.metadata.title == f"Aurora evenings: {group}"
    embedded = {str(ref.get_object()["/BaseFont"]).split("+")[-1]
                for page in reader.pages for ref in page["/Resources"]["/Font"].values()}
    assert {"DejaVuSans", "DejaVuSans-Bold"} <= embedded, embedded


def test_a_script_the_font_lacks_is_one_line_naming_the_characters(week):
    report = json.loads(json.dumps(week))
    report["trips"][-1]["group"] = "张伟 family"
    with pytest.raises(InputError) as err:
        itinerary_pdf(report, report["trips"][-1]["trip"])
    (line,) = err.value.problems
    assert "张 (U+5F20), 伟 (U+4F1F)" in line and "group" in line
    assert '[print] font = "FILE.ttf"' in line


def test_the_operator_names_the_font(week):
    from auroraplan.pdffonts import dejavu_folder, pdf_fonts

    # DejaVu Serif stands in for an operator's own TrueType font.
    serif = pdf_fonts(dejavu_folder() / "DejaVuSerif.ttf", dejavu_folder() / "DejaVuSerif-Bold.ttf")
    assert serif.label == "DejaVuSerif.ttf" and serif.missing("Группа Ω") == []
    pdf = itinerary_pdf(week, "T-0327", fonts=serif)
    assert b"DejaVuSerif" in pdf or b"auroraplan" in pdf


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="poppler-utils not installed")
def test_page_one_renders_with_poppler(pdf_a4, tmp_path):
    src = tmp_path / "it.pdf"
    src.write_bytes(pdf_a4)
    subprocess.run(["pdftoppm", "-png", "-r", "50", "-f", "1", "-l", "1", str(src),
                    str(tmp_path / "page")], check=True, capture_output=True, timeout=60)
    page = next(tmp_path.glob("page*.png"))
    with page.open("rb") as fh:
        head = fh.read(24)
    width, height = int.from_bytes(head[16:20], "big"), int.from_bytes(head[20:24], "big")
    # A4 at 50 dpi: 210 mm = 413 px, 297 mm = 585 px (ISO 216).
    assert abs(width - 413) <= 1 and abs(height - 585) <= 1


# --- the command ------------------------------------------------------------------------

@pytest.fixture
def fake_workspace(week, tmp_path, monkeypatch):
    """A workspace whose week plan is the fixture (the planning itself is tested elsewhere)."""
    folder = tmp_path / "ws"
    folder.mkdir()
    trips_csv = folder / "trips.csv"
    trips_csv.write_text("trip,group,guests,arrive,depart,outings,blocked\n", encoding="utf-8")
    trips = [Trip(t["trip"], t["group"], t["guests"], dt.date.fromisoformat(t["arrive"]),
                  dt.date.fromisoformat(t["depart"]), t["outings"]) for t in week["trips"]]
    operator = Operator(name="Lanternfjell Excursions", base_name="Nordvik harbour",
                        base_lat=69.65, base_lon=18.96, timezone="Europe/Oslo")
    ws = Workspace(path=folder, operator=operator, sites=[], trips=trips, activity=None,
                   clouds=None, files={"trips": trips_csv})
    calls = []

    def fake_week_report(workspace, start, nights=7, **kw):
        calls.append((start, nights))
        return WeekPlan.from_json(week)

    monkeypatch.setattr("auroraplan.workspace.load_workspace", lambda path: ws)
    monkeypatch.setattr("auroraplan.report.week_report", fake_week_report)
    return ws, calls


def test_command_writes_one_trip(fake_workspace, tmp_path, capsys):
    ws, calls = fake_workspace
    out = tmp_path / "hansen.pdf"
    assert main(["itinerary", str(ws.path), "--trip", "T-0326", "--pdf", str(out),
                 "--paper", "letter"]) == 0
    assert out.read_bytes().startswith(b"%PDF-")
    # One plan over every booked stay, so all itineraries share the fleet.
    first = min(t.arrive for t in ws.trips)
    assert calls == [(first, (max(t.depart for t in ws.trips) - first).days)]
    assert "Hansen family" in PdfReader(out).pages[0].extract_text()


def test_command_unknown_trip_lists_known_trips_and_writes_nothing(fake_workspace, tmp_path,
                                                                   capsys):
    ws, _ = fake_workspace
    out = tmp_path / "x.pdf"
    assert main(["itinerary", str(ws.path), "--trip", "T-1", "--pdf", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == ["auroraplan itinerary: --trip 'T-1' is not in trips.csv; "
                   "known trips: T-0325, T-0326, T-0327"]
    assert not out.exists()


def test_command_refuses_to_overwrite_an_input_file(fake_workspace, capsys):
    ws, _ = fake_workspace
    before = ws.files["trips"].read_bytes()
    assert main(["itinerary", str(ws.path), "--trip", "T-0325",
                 "--pdf", str(ws.files["trips"])]) == 2
    assert "one of your input files" in capsys.readouterr().err
    assert ws.files["trips"].read_bytes() == before


def test_command_all_writes_one_pdf_per_trip(fake_workspace, tmp_path):
    ws, calls = fake_workspace
    folder = tmp_path / "out"
    folder.mkdir()
    assert main(["itinerary", str(ws.path), "--all", str(folder)]) == 0
    assert sorted(p.name for p in folder.iterdir()) == [
        "itinerary-T-0325.pdf", "itinerary-T-0326.pdf", "itinerary-T-0327.pdf"]
    assert len(calls) == 1


def test_command_all_needs_an_existing_folder(fake_workspace, tmp_path, capsys):
    ws, _ = fake_workspace
    assert main(["itinerary", str(ws.path), "--all", str(tmp_path / "missing")]) == 2
    assert "no such folder" in capsys.readouterr().err


def test_command_trip_without_pdf_is_one_line(fake_workspace, capsys):
    ws, _ = fake_workspace
    assert main(["itinerary", str(ws.path), "--trip", "T-0325"]) == 2
    assert capsys.readouterr().err.count("\n") == 1


@pytest.mark.parametrize("trip, name", [
    ("T-0325", "itinerary-T-0325.pdf"),
    ("../../etc/passwd", "itinerary-etc-passwd.pdf"),
    ("Smith & Co / week 3", "itinerary-Smith-Co-week-3.pdf"),
    ("///", "itinerary-trip.pdf"),
    ("x/../../escaped", "itinerary-x-escaped.pdf"),
    ("T/02", "itinerary-T-02.pdf"),
    ("a#b?c:d", "itinerary-a-b-c-d.pdf"),
    ("..", "itinerary-trip.pdf"),
    ("CON", "itinerary-CON-.pdf"),
    ("Группа 7", "itinerary-Группа-7.pdf"),
])
def test_file_names_are_safe(trip, name):
    assert itinerary_file_names([trip]) == {trip: name}
