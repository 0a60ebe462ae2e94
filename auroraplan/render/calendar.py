"""The operator's calendar export: each planned outing as an iCalendar (RFC 5545) event."""

from __future__ import annotations

import datetime as dt
import re
from zoneinfo import ZoneInfo

from auroraplan.render import style

PRODID = "-//auroraplan//excursion plan//EN"


def outing_uid(trip: str, date: str, site: str) -> str:
    """A stable UID for one outing (RFC 5545 section 3.8.4.7): same plan, same UID."""
    slug = re.sub(r"\W+", "-", f"{trip}-{date}-{site}").strip("-").lower()
    return f"{slug}@auroraplan"


def _local(iso_text: str, zone: ZoneInfo) -> dt.datetime:
    return dt.datetime.fromisoformat(iso_text).astimezone(zone)


def _description(outing: dict, report: dict) -> str:
    chance = outing.get("chance")
    lines = [
        f"Group: {outing.get('group', '')} (trip {outing['trip']})",
        f"Chance: {style.chance_in_words(chance or 0)} ({style.percent(chance)}), "
        f"from the {style.KIND_WORDS.get(outing.get('kind'), outing.get('kind'))}",
        f"Best window: {style.time_span(outing.get('window_start'), outing.get('window_end'))}",
    ]
    if outing.get("look_azimuth") is not None:
        az = outing["look_azimuth"]
        lines.append(f"Look towards: {round(az) % 360}° true ({style.compass_point(az)})")
    if outing.get("backup"):
        lines.append(f"Backup site: {outing['backup']} "
                     f"({style.percent(outing.get('backup_chance'))})")
    fc = report.get("forecast") or {}
    lines.append(f"Forecast: {fc.get('file', '—')}; {fc.get('note', '')}".rstrip("; "))
    lines.append(report.get("notice") or "Chances are forecasts, not promises.")
    return "\n".join(lines)


def plan_ics(report: dict) -> bytes:
    """Every planned outing of a ``week`` report as one iCalendar file.

    Parameters
    ----------
    report : dict
        The JSON-ready dict the ``week`` command prints with ``--json``; ``plan[]`` holds
        the outings with local ISO 8601 ``pickup`` and ``return`` times.

    Returns
    -------
    bytes
        An RFC 5545 VCALENDAR: one VEVENT per outing with DTSTART/DTEND at pick-up and
        return in the base's IANA zone (TZID, with the VTIMEZONE made from the tz database
        by icalendar), SUMMARY, LOCATION, GEO (RFC 5545 section 3.8.1.6), DESCRIPTION,
        a stable UID and DTSTAMP at the time the plan was made (UTC).
    """
    from icalendar import Calendar, Event

    zone = ZoneInfo((report.get("base") or {}).get("timezone", "UTC"))
    made = dt.datetime.fromisoformat(report["made_at"]).astimezone(dt.UTC)
    cal = Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", f"{report.get('operator', 'auroraplan')} outings")
    dates = []
    for outing in report.get("plan", []):
        start, end = _local(outing["pickup"], zone), _local(outing["return"], zone)
        dates += [start.date(), end.date()]
        ev = Event()
        ev.add("uid", outing_uid(outing["trip"], outing["date"], outing["site"]))
        ev.add("dtstamp", made)
        ev.add("dtstart", start)
        ev.add("dtend", end)
        ev.add("summary", f"Aurora outing: {outing.get('group', outing['trip'])} to "
                          f"{outing['site']}")
        ev.add("location", outing["site"])
        if outing.get("lat") is not None and outing.get("lon") is not None:
            ev.add("geo", (float(outing["lat"]), float(outing["lon"])))
        ev.add("description", _description(outing, report))
        ev.add("categories", ["aurora outing"])
        cal.add_component(ev)
    if dates:
        # Only the transitions around the plan, not the zone's whole history.
        cal.add_missing_timezones(first_date=min(dates) - dt.timedelta(days=366),
                                  last_date=max(dates) + dt.timedelta(days=366))
    return cal.to_ical()
