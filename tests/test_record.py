"""The plan of record: proposals, confirmation, release, the change list and crash safety.

The demo workspace is copied to a temporary folder in every test, so no
database is ever left in the checked-in workspaces. The reference for the
crash test is SQLite's atomic-commit guarantee (https://sqlite.org/atomiccommit.html):
a transaction that committed is in the file after the writer dies; one that had
not committed leaves no trace.
"""

import datetime as dt
import json
import re
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from auroraplan import record, store
from auroraplan.cli import main
from auroraplan.workspace import load_workspace

DEMO = Path(__file__).resolve().parents[1] / "demo_sites"
START = dt.date(2027, 1, 11)

TWO_TRIPS = """trip,group,guests,arrive,depart,outings,blocked
T01,Test group one,4,2027-01-11,2027-01-15,1,
T02,Test group two,4,2027-01-11,2027-01-15,1,
"""


@pytest.fixture
def demo(tmp_path):
    folder = tmp_path / "ws"
    shutil.copytree(DEMO, folder)
    return folder


def _storm_on(folder: Path, night: str) -> None:
    """activity.csv with Kp 5 through the evening of ``night`` and Kp 0 on the others
    (invented test data)."""
    lines = ["start_utc,kp,kp_sd"]
    t = dt.datetime(2027, 1, 11)
    while t < dt.datetime(2027, 1, 16):
        evening = (t - dt.timedelta(hours=12)).date().isoformat()
        lines.append(f"{t:%Y-%m-%dT%H:%MZ},{5 if evening == night else 0},")
        t += dt.timedelta(hours=3)
    (folder / "activity.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


@pytest.fixture
def two_trips(demo):
    """Two groups of four wanting one outing each in 11-14 January, no cloud forecast, so
    the Kp forecast decides the night."""
    (demo / "trips.csv").write_text(TWO_TRIPS, encoding="utf-8")
    (demo / "clouds.csv").unlink()
    _storm_on(demo, "2027-01-11")
    return demo


def _week_json(folder, capsys, *extra):
    assert main(["week", str(folder), "--start", START.isoformat(), "--nights", "4",
                 "--json", *extra]) == 0
    return json.loads(capsys.readouterr().out)


def test_week_saves_its_proposal_and_the_record_holds_it(demo, capsys):
    week = _week_json(demo, capsys)
    db = store.open_store(store.database_path(demo), create=False)
    with db:
        live = record.live_outings(db)
    assert {(p["trip"], p["date"]): p["site"] for p in week["plan"]} == {
        k: o.site for k, o in live.items()}
    assert {o.state for o in live.values()} == {"proposed"}
    assert week["record"]["saved"] and week["changes"]
    # The whole stays of the trips in these nights are planned: T01 arrives on the 9th.
    assert week["start"] == "2027-01-09" and week["asked"] == {"start": "2027-01-11",
                                                                "nights": 4}


def test_week_calendar_and_itinerary_agree_for_every_trip_and_night(demo, capsys, tmp_path):
    week = _week_json(demo, capsys, "--ics", str(tmp_path / "plan.ics"))
    ws = load_workspace(demo)
    with store.open_store(store.database_path(demo)) as db:
        booked = record.bookings_plan(ws, db)
    in_week = {(p["trip"], p["date"]): p["site"] for p in week["plan"]}
    in_bookings = {(p["trip"], p["date"]): p["site"] for p in booked["plan"]}
    assert in_week == {k: v for k, v in in_bookings.items() if k[0] in week["record"]["replanned"]}
    from icalendar import Calendar

    cal = Calendar.from_ical((tmp_path / "plan.ics").read_bytes())
    in_calendar = {}
    for event in cal.walk("VEVENT"):
        trip = re.search(r"\(trip (\S+)\)", str(event["DESCRIPTION"])).group(1)
        night = event.decoded("DTSTART").date().isoformat()  # pick-up on the evening itself
        in_calendar[(trip, night)] = str(event["LOCATION"])
    assert in_calendar == in_week
    # The itinerary command reads the same record: its report is `bookings_plan`.
    assert main(["itinerary", str(demo), "--all", str(tmp_path)]) == 0
    with store.open_store(store.database_path(demo)) as db:
        after = {k: o.site for k, o in record.live_outings(db).items()}
    assert {k: v for k, v in after.items() if k in in_week} == in_week


def test_confirmed_outings_stay_when_the_forecast_changes_and_the_rest_move(two_trips,
                                                                              capsys):
    first = _week_json(two_trips, capsys)
    assert {(p["trip"], p["date"]) for p in first["plan"]} == {
        ("T01", "2027-01-11"), ("T02", "2027-01-11")}
    assert main(["confirm", str(two_trips), "--trip", "T02", "--by", "desk"]) == 0
    capsys.readouterr()
    _storm_on(two_trips, "2027-01-13")
    second = _week_json(two_trips, capsys)
    plan = {p["trip"]: (p["date"], p["state"]) for p in second["plan"]}
    assert plan["T02"] == ("2027-01-11", "confirmed")
    assert plan["T01"] == ("2027-01-13", "proposed")
    assert second["changes"] == [{
        "trip": "T01", "change": "moved", "from_night": "2027-01-11",
        "to_night": "2027-01-13", "from_site": first["plan"][0]["site"],
        "to_site": [p for p in second["plan"] if p["trip"] == "T01"][0]["site"],
        "state": "proposed", "reasons": ["forecast changed"]}]


def test_a_closed_site_and_a_smaller_fleet_are_named_as_reasons(two_trips, capsys):
    first = _week_json(two_trips, capsys)
    site = first["plan"][0]["site"]
    geo = json.loads((two_trips / "sites.geojson").read_text(encoding="utf-8"))
    for f in geo["features"]:
        if f["properties"]["name"] == site:
            f["properties"]["closed"] = True
    (two_trips / "sites.geojson").write_text(json.dumps(geo), encoding="utf-8")
    second = _week_json(two_trips, capsys)
    assert second["changes"] and all(f"site closed: {site}" in c["reasons"]
                                     for c in second["changes"])


def test_release_lets_a_confirmed_outing_move_and_keeps_its_history(two_trips, capsys):
    _week_json(two_trips, capsys)
    assert main(["confirm", str(two_trips), "--by", "desk"]) == 0
    assert main(["release", str(two_trips), "--trip", "T01", "--by", "guide",
                 "--note", "group ill"]) == 0
    capsys.readouterr()
    with store.open_store(store.database_path(two_trips)) as db:
        states = [(h["state"], h["by"], h["note"]) for h in record.history(db, "T01")]
    assert states == [("proposed", states[0][1], "plan 1"), ("confirmed", "desk", ""),
                      ("released", "guide", "group ill")]


def test_confirm_without_a_record_and_unknown_trips_are_one_line(demo, capsys):
    assert main(["confirm", str(demo)]) == 2
    assert "no plan of record yet" in capsys.readouterr().err
    assert not store.database_path(demo).exists()
    _week_json(demo, capsys)
    assert main(["confirm", str(demo), "--trip", "T99"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "known trips" in err[0]
    assert main(["release", str(demo)]) == 2


def test_read_only_commands_do_not_create_the_database(demo, capsys):
    assert main(["tonight", str(demo), "--date", "2027-01-12", "--json"]) == 0
    assert not store.database_path(demo).exists()


def test_a_group_that_gets_fewer_outings_is_named_with_its_reason(demo, capsys):
    """With one van for four overlapping groups (invented demo data) some groups fall short;
    every one of them is named, in JSON and on the terminal."""
    toml = (demo / "operator.toml").read_text(encoding="utf-8")
    (demo / "operator.toml").write_text(toml.replace("vehicles = 2", "vehicles = 1"),
                                        encoding="utf-8")
    week = _week_json(demo, capsys)
    planned = {}
    for p in week["plan"]:
        planned[p["trip"]] = planned.get(p["trip"], 0) + 1
    short = {w["trip"]: w for w in week["warnings"] if w["trip"]}
    for trip in week["trips"]:
        if not trip["nights"] or trip["trip"] not in week["record"]["replanned"]:
            continue
        got = planned.get(trip["trip"], 0)
        if got < trip["outings"]:
            assert short[trip["trip"]]["planned"] == got
            assert short[trip["trip"]]["asked"] == trip["outings"]
            assert short[trip["trip"]]["reason"] in report_reasons()
        else:
            assert trip["trip"] not in short
    assert short, "one van for four groups leaves someone short"
    assert main(["week", str(demo), "--start", "2027-01-11", "--nights", "4"]) == 0
    text = capsys.readouterr().out
    assert all(t in text for t in short)


def report_reasons():
    from auroraplan.report import SHORTFALL_REASONS

    return set(SHORTFALL_REASONS)


def test_blocked_nights_are_the_reason_when_they_leave_too_few_evenings(demo, capsys):
    (demo / "trips.csv").write_text(
        "trip,group,guests,arrive,depart,outings,blocked\n"
        "T01,Test group one,4,2027-01-11,2027-01-14,3,2027-01-12\n", encoding="utf-8")
    week = _week_json(demo, capsys)
    assert [(w["trip"], w["asked"], w["reason"]) for w in week["warnings"] if w["trip"]] == [
        ("T01", 3, "blocked nights")]


WRITER = """
import sys, datetime as dt
from auroraplan import record, store
db = store.open_store(sys.argv[1])
outings = [{"trip": f"T{i:03d}", "date": "2027-01-12", "site": "Delta Flats",
            "backup": None, "chance": 0.5} for i in range(400)]
trips = [o["trip"] for o in outings]
print("writing", flush=True)
n = 0
while True:
    n += 1
    record.save_proposal(db, outings, trips, "2027-01-12", "2027-01-12", {"n": n}, "w", "test")
"""


def test_sigkill_while_writing_leaves_the_last_confirmed_plan(tmp_path):
    path = store.database_path(tmp_path)
    with store.open_store(path) as db:
        record.save_proposal(db, [{"trip": "T001", "date": "2027-01-11", "site": "Fjord Head"}],
                             ["T001"], "2027-01-11", "2027-01-11", {}, "desk", "week")
        record.set_state(db, "confirmed", ("proposed",), by="desk")
    child = subprocess.Popen([sys.executable, "-c", WRITER, str(path)], stdout=subprocess.PIPE)
    assert child.stdout.readline().strip() == b"writing"
    time.sleep(1.5)  # several proposals of 400 outings are written each second
    child.send_signal(signal.SIGKILL)
    child.wait()
    assert child.returncode == -signal.SIGKILL
    with store.open_store(path) as db:
        assert db.query("PRAGMA integrity_check")[0][0] == "ok"
        live = record.live_outings(db)
        confirmed = {k: o.site for k, o in live.items() if o.state == "confirmed"}
        assert confirmed == {("T001", "2027-01-11"): "Fjord Head"}
        # Every proposal is whole: the live proposed outings come from one plan.
        proposed = [o for o in live.values() if o.state == "proposed"]
        plans = db.query("SELECT count(*) FROM plans")[0][0]
    assert plans >= 2, "the writer committed at least one proposal before it was killed"
    assert len(proposed) in (0, 400) and len({o.plan_id for o in proposed}) <= 1


@pytest.mark.parametrize("option", ["--csv", "--ics"])
def test_no_output_option_overwrites_the_database(demo, capsys, option):
    _week_json(demo, capsys)
    path = store.database_path(demo)
    before = path.read_bytes()
    assert main(["week", str(demo), "--start", "2027-01-11", option, str(path)]) == 2
    assert "input" in capsys.readouterr().err
    assert path.read_bytes() == before
    other = demo.parent / "elsewhere.sqlite"
    assert main(["week", str(demo), "--start", "2027-01-11", "--database", str(other),
                 "--json"]) == 0
    capsys.readouterr()
    kept = other.read_bytes()
    assert main(["itinerary", str(demo), "--trip", "T01", "--pdf", str(other),
                 "--database", str(other)]) == 2
    assert other.read_bytes() == kept


SOUTHERN = Path(__file__).resolve().parent / "southern_sites"


def test_the_southern_workspace_agrees_across_week_calendar_and_itinerary(tmp_path, capsys):
    """A second invented workspace (southern New Zealand, June 2027): the week plan, the
    calendar written beside it and the record the itineraries read agree for every trip and
    night, and every group planned fewer outings than it asked is named with a reason."""
    folder = tmp_path / "south"
    shutil.copytree(SOUTHERN, folder)
    ics = tmp_path / "south.ics"
    assert main(["week", str(folder), "--start", "2027-06-06", "--json", "--ics",
                 str(ics)]) == 0
    week = json.loads(capsys.readouterr().out)
    in_week = {(p["trip"], p["date"]): p["site"] for p in week["plan"]}
    from icalendar import Calendar

    in_calendar = {}
    for event in Calendar.from_ical(ics.read_bytes()).walk("VEVENT"):
        trip = re.search(r"\(trip (\S+)\)", str(event["DESCRIPTION"])).group(1)
        in_calendar[(trip, event.decoded("DTSTART").date().isoformat())] = str(event["LOCATION"])
    assert in_calendar == in_week
    assert main(["itinerary", str(folder), "--all", str(tmp_path)]) == 0
    capsys.readouterr()
    with store.open_store(store.database_path(folder)) as db:
        record_now = {k: o.site for k, o in record.live_outings(db).items()}
    assert {k: v for k, v in record_now.items() if k in in_week} == in_week
    counts = {}
    for p in week["plan"]:
        counts[p["trip"]] = counts.get(p["trip"], 0) + 1
    named = {w["trip"] for w in week["warnings"] if w["trip"]}
    for trip in week["trips"]:
        if trip["trip"] in week["record"]["replanned"]:
            short = counts.get(trip["trip"], 0) < trip["outings"]
            assert short == (trip["trip"] in named), trip["trip"]
