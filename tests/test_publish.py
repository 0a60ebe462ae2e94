"""`publish`: every output for the operator's own workspace and dates; `week --png`, `tonight --png`."""

import json
import shutil
from html.parser import HTMLParser
from pathlib import Path

import pytest

from auroraplan.cli import main

ROOT = Path(__file__).resolve().parents[1]
PNG = b"\x89PNG\r\n\x1a\n"


class Links(HTMLParser):
    def __init__(self):
        super().__init__()
        self.hrefs = []

    def handle_starttag(self, tag, attrs):
        self.hrefs += [v for k, v in attrs if k == "href"]


@pytest.fixture(scope="module")
def published(tmp_path_factory):
    """The demo workspace copied as an operator's own, published for two nights."""
    home = tmp_path_factory.mktemp("operator")
    ws = home / "my-workspace"
    shutil.copytree(ROOT / "demo_sites", ws)
    before = {str(p.relative_to(ws)): p.read_bytes() for p in ws.rglob("*") if p.is_file()}
    out = home / "outputs"
    code = main(["publish", str(ws), "--start", "2027-01-13", "--nights", "2", "--out", str(out)])
    return ws, out, before, code


def test_publish_writes_the_week_run_sheets_itineraries_calendar_charts_and_index(published):
    ws, out, before, code = published
    assert code == 0
    week = json.loads((out / "week.json").read_text(encoding="utf-8"))
    # The stays of the groups in these nights are planned whole (as `week` does).
    assert week["start"] <= "2027-01-13"
    # One run sheet per planned outing in these nights, one phone page per night.
    outings = [p for p in week["plan"] if p["date"] in ("2027-01-13", "2027-01-14")]
    assert outings
    for p in outings:
        page = (out / f"run-sheet-{p['date']}-{p['trip']}.html").read_text(encoding="utf-8")
        assert p["group"] in page and p["site"] in page
    assert (out / "tonight-2027-01-13.html").exists() and (out / "tonight-2027-01-14.html").exists()
    others = [p for p in week["plan"] if p not in outings]
    assert others  # outside the two nights: planned, but no run sheet is written for them
    for p in others:
        assert not (out / f"run-sheet-{p['date']}-{p['trip']}.html").exists()
    assert not (out / "tonight-2027-01-15.html").exists()
    for trip in (t for t in week["trips"] if t["nights"]):
        assert (out / f"itinerary-{trip['trip']}.pdf").read_bytes().startswith(b"%PDF-")
    assert (out / "excursions.ics").read_bytes().startswith(b"BEGIN:VCALENDAR")
    assert (out / "week-heatmap.png").read_bytes().startswith(PNG)
    assert (out / "night-timeline-2027-01-13.png").read_bytes().startswith(PNG)
    # The index links every file made and nothing else; the operator's data is not
    # called an invented scenario.
    links = Links()
    index = (out / "index.html").read_text(encoding="utf-8")
    links.feed(index)
    made = sorted(p.name for p in out.iterdir() if p.name != "index.html")
    assert sorted(links.hrefs) == made
    assert "invented" not in index
    # The user's files are untouched (the plan of record is the only new file).
    for name, data in before.items():
        assert (ws / name).read_bytes() == data


def test_publish_refuses_the_workspace_as_output(published, capsys):
    ws, out, before, code = published
    assert main(["publish", str(ws), "--start", "2027-01-13", "--out", str(ws / "out")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "is the workspace or inside it" in err[0]
    assert not (ws / "out").exists()


def test_week_and_tonight_write_their_charts(published, tmp_path, capsys):
    ws, out, before, code = published
    heat, night = tmp_path / "week.png", tmp_path / "night.png"
    assert main(["week", str(ws), "--start", "2027-01-13", "--nights", "2",
                 "--png", str(heat)]) == 0
    assert main(["tonight", str(ws), "--date", "2027-01-13", "--png", str(night)]) == 0
    for path in (heat, night):
        data = path.read_bytes()
        assert data.startswith(PNG) and len(data) > 20_000
    # An input file is never overwritten by a chart.
    assert main(["tonight", str(ws), "--date", "2027-01-13", "--png", str(ws / "trips.csv")]) == 2
    assert (ws / "trips.csv").read_bytes() == before["trips.csv"]
