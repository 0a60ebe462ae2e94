"""The calendar export: one event per planned outing, right local times across a DST change."""

import datetime as dt
import json
from pathlib import Path

import pytest
from icalendar import Calendar

from auroraplan.render.calendar import outing_uid, plan_ics

FIXTURES = Path(__file__).parent / "fixtures"


@pytest.fixture(scope="module")
def week():
    return json.loads((FIXTURES / "week_report.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def ics(week):
    return plan_ics(week)


@pytest.fixture(scope="module")
def events(ics):
    return Calendar.from_ical(ics).walk("VEVENT")


def test_one_event_per_planned_outing(week, events):
    assert len(events) == len(week["plan"]) == 8
    assert {(str(e["LOCATION"]), e.decoded("DTSTART").date().isoformat()) for e in events} == {
        (p["site"], p["date"]) for p in week["plan"]}


def test_times_are_local_with_the_right_offset_across_the_spring_change(events):
    # EU summer time starts on the last Sunday of March at 01:00 UTC (Directive 2000/84/EC):
    # 28 March 2027. Oslo is UTC+1 before it and UTC+2 after it (IANA tz database).
    by_night = {}
    for e in events:
        by_night.setdefault(e.decoded("DTSTART").date(), e)
    before, after = by_night[dt.date(2027, 3, 27)], by_night[dt.date(2027, 3, 28)]
    for e in (before, after):
        start = e.decoded("DTSTART")
        assert (start.hour, start.minute) == (21, 0)
        assert str(start.tzinfo) == "Europe/Oslo"
    assert before.decoded("DTSTART").utcoffset() == dt.timedelta(hours=1)
    assert after.decoded("DTSTART").utcoffset() == dt.timedelta(hours=2)
    # 21:00 local is 20:00 UTC before the change and 19:00 UTC after it.
    assert before.decoded("DTSTART").astimezone(dt.UTC).hour == 20
    assert after.decoded("DTSTART").astimezone(dt.UTC).hour == 19
    # The return at 01:30 on the morning of the change is still winter time.
    assert before.decoded("DTEND").utcoffset() == dt.timedelta(hours=1)
    assert before.decoded("DTEND") - before.decoded("DTSTART") == dt.timedelta(hours=4, minutes=30)


def test_events_carry_tzid_and_the_calendar_its_vtimezone(ics):
    text = ics.decode("utf-8")
    assert "DTSTART;TZID=Europe/Oslo:20270327T210000" in text
    assert "DTSTART;TZID=Europe/Oslo:20270328T210000" in text
    cal = Calendar.from_ical(ics)
    zones = cal.walk("VTIMEZONE")
    assert [str(z["TZID"]) for z in zones] == ["Europe/Oslo"]
    offsets = {str(c["TZNAME"]): c["TZOFFSETTO"].td for c in zones[0].subcomponents}
    assert offsets == {"CET": dt.timedelta(hours=1), "CEST": dt.timedelta(hours=2)}


def test_event_fields_for_the_guide(week, events):
    plan = week["plan"][0]
    first = next(e for e in events if "(trip T-0325)" in str(e["DESCRIPTION"])
                 and str(e["UID"]).startswith("2027-03-25-"))
    # RFC 5545 section 3.8.1.6: GEO is latitude;longitude.
    assert "GEO:69.81;19.42" in first.to_ical().decode("utf-8")
    assert tuple(first.decoded("GEO")) == pytest.approx((plan["lat"], plan["lon"]))
    assert str(first["LOCATION"]) == "Gåsvika lay-by"
    description = str(first["DESCRIPTION"])
    assert "good (52 %)" in description
    assert "Backup site: Storbakken ridge" in description
    assert "not promises" in description
    assert "Brightwater Walking Club" in str(first["SUMMARY"])
    # DTSTAMP is when the plan was made, in UTC: 16:10 at UTC+01:00 is 15:10Z.
    assert first.decoded("DTSTAMP") == dt.datetime(2027, 3, 24, 15, 10, tzinfo=dt.UTC)


def test_uids_are_unique_and_stable(week, events):
    uids = [str(e["UID"]) for e in events]
    assert len(set(uids)) == len(uids)
    again = [str(e["UID"]) for e in Calendar.from_ical(plan_ics(week)).walk("VEVENT")]
    assert again == uids
    uid = outing_uid("T-0325", "2027-03-25", "Gåsvika lay-by", "Op")
    assert uid == outing_uid("T-0325", "2027-03-25", "Gåsvika lay-by", "Op")
    assert uid.startswith("2027-03-25-") and uid.endswith("@auroraplan")


def test_trips_that_differ_only_in_punctuation_get_different_uids():
    # A slug of "A.1" and "A-1" would be the same; a calendar app would merge the outings.
    assert outing_uid("A.1", "2027-03-25", "Ridge") != outing_uid("A-1", "2027-03-25", "Ridge")
    assert outing_uid("A", "1-2027", "Ridge") != outing_uid("A-1", "2027", "Ridge")
    # Two workspaces planning the same trip id at the same site stay apart too.
    assert outing_uid("T1", "2027-03-25", "Ridge", "Op A") != \
        outing_uid("T1", "2027-03-25", "Ridge", "Op B")


def test_an_empty_plan_is_still_a_valid_calendar(week):
    empty = dict(week, plan=[])
    cal = Calendar.from_ical(plan_ics(empty))
    assert cal.walk("VEVENT") == [] and str(cal["VERSION"]) == "2.0"


def test_timezone_onsets_are_in_local_time_before_the_change():
    # EU summer time (Directive 2000/84/EC) starts and ends at 01:00 UTC on the last
    # Sundays of March and October; RFC 5545 section 3.6.5 writes each onset in the
    # local time before the change: 02:00 CET in spring, 03:00 CEST in autumn.
    from zoneinfo import ZoneInfo

    from auroraplan.render.calendar import vtimezone

    text = vtimezone(ZoneInfo("Europe/Oslo"), dt.date(2027, 1, 1), dt.date(2027, 12, 31)).to_ical()
    assert b"DTSTART:20270328T020000" in text
    assert b"DTSTART:20271031T030000" in text
    assert text.count(b"BEGIN:DAYLIGHT") == 1 and text.count(b"BEGIN:STANDARD") == 2
