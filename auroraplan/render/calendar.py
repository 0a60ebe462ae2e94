"""The operator's calendar export: each planned outing as an iCalendar (RFC 5545) event."""

from __future__ import annotations

import datetime as dt
import hashlib
from zoneinfo import ZoneInfo

from auroraplan.i18n import Words
from auroraplan.render import style

PRODID = "-//auroraplan//excursion plan//EN"


def outing_uid(trip: str, date: str, site: str, workspace: str = "") -> str:
    """A UID for one outing (RFC 5545 section 3.8.4.7), unique and the same on every run.

    A SHA-256 digest of the workspace's identity (operator and base), the trip id, the
    night and the site, each kept whole and apart (trips "A.1" and "A-1" differ), so two
    outings never share a UID and a calendar app that imports the file again updates
    the same events instead of adding copies.
    """
    key = "\x1f".join(str(part) for part in (workspace, trip, date, site))
    digest = hashlib.sha256(key.encode("utf-8", "surrogatepass")).hexdigest()[:32]
    return f"{date}-{digest}@auroraplan"


def workspace_identity(report: dict) -> str:
    """The operator and base of a report: what makes one workspace's outings its own."""
    base = report.get("base") or {}
    return "\x1f".join(str(v) for v in (report.get("operator", ""), base.get("name", ""),
                                         base.get("lat", ""), base.get("lon", "")))


def _local(iso_text: str, zone: ZoneInfo) -> dt.datetime:
    return dt.datetime.fromisoformat(iso_text).astimezone(zone)


def _description(outing: dict, report: dict, w: Words) -> str:
    chance = outing.get("chance")
    lines = [
        w("Group: {group} (trip {trip})", group=outing.get("group", ""), trip=outing["trip"]),
        w("Chance: {words} ({percent}), from the {basis}",
          words=w(style.chance_in_words(chance or 0)), percent=w.percent(chance),
          basis=w(style.KIND_WORDS.get(outing.get("kind"), outing.get("kind")))),
        w("Best window: {window}",
          window=style.time_span(outing.get("window_start"), outing.get("window_end"))),
    ]
    if outing.get("look_words"):
        lines.append(f"Look: {outing['look_words']} (true bearing)")
    elif outing.get("look_azimuth") is not None:
        az = outing["look_azimuth"]
        lines.append(w("Look towards: {deg}° true ({compass})", deg=round(az) % 360,
                       compass=w(style.compass_point(az))))
    if outing.get("backup"):
        lines.append(w("Backup site: {site} ({percent})", site=outing["backup"],
                       percent=w.percent(outing.get("backup_chance"))))
    fc = report.get("forecast") or {}
    note = w(fc["note"]) if fc.get("note") else ""
    lines.append(w("Forecast: {file}; {note}", file=fc.get("file") or "—", note=note)
                 .rstrip("; "))
    lines.append(w(report.get("notice") or "Chances are forecasts, not promises."))
    return "\n".join(lines)


def plan_ics(report: dict, language: str = "en") -> bytes:
    """Every planned outing of a ``week`` report as one iCalendar file.

    Parameters
    ----------
    report : dict
        The JSON-ready dict the ``week`` command prints with ``--json``; ``plan[]`` holds
        the outings with local ISO 8601 ``pickup`` and ``return`` times.
    language : str
        A language of :data:`auroraplan.i18n.LANGUAGES` for the event texts.

    Returns
    -------
    bytes
        An RFC 5545 VCALENDAR: one VEVENT per outing with DTSTART/DTEND at pick-up and
        return in the base's IANA zone (TZID, with a VTIMEZONE made from the tz database
        by :func:`vtimezone`), SUMMARY, LOCATION, GEO (RFC 5545 section 3.8.1.6), DESCRIPTION,
        a stable UID and DTSTAMP at the time the plan was made (UTC).
    """
    from icalendar import Calendar, Event

    w = Words(language)
    zone = ZoneInfo((report.get("base") or {}).get("timezone", "UTC"))
    made = dt.datetime.fromisoformat(report["made_at"]).astimezone(dt.UTC)
    cal = Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", w("{operator} outings", operator=report.get("operator", "auroraplan")))
    outings = [o for o in report.get("plan", []) if o.get("pickup") and o.get("return")]
    if outings:
        days = [_local(o[k], zone).date() for o in outings for k in ("pickup", "return")]
        # Only the transitions around the plan, not the zone's whole history.
        cal.add_component(vtimezone(zone, min(days) - dt.timedelta(days=366),
                                    max(days) + dt.timedelta(days=366)))
    for outing in outings:
        start, end = _local(outing["pickup"], zone), _local(outing["return"], zone)
        ev = Event()
        ev.add("uid", outing_uid(outing["trip"], outing["date"], outing["site"],
                                 workspace_identity(report)))
        ev.add("dtstamp", made)
        ev.add("dtstart", start)
        ev.add("dtend", end)
        ev.add("summary", w("Aurora outing: {group} to {site}",
                            group=outing.get("group", outing["trip"]), site=outing["site"]))
        ev.add("location", outing["site"])
        if outing.get("lat") is not None and outing.get("lon") is not None:
            ev.add("geo", (float(outing["lat"]), float(outing["lon"])))
        ev.add("description", _description(outing, report, w))
        ev.add("categories", [w("aurora outing")])
        cal.add_component(ev)
    return cal.to_ical()


def offset_changes(zone: ZoneInfo, first: dt.date, last: dt.date):
    """UTC instants (to the minute) where the zone's UTC offset changes, with the offsets.

    Returns a list of (utc_datetime, offset_before, offset_after, abbreviation_after).
    """
    def offset(t):
        return t.astimezone(zone).utcoffset()

    changes = []
    day = dt.datetime.combine(first, dt.time(), dt.UTC)
    end = dt.datetime.combine(last, dt.time(), dt.UTC)
    step = dt.timedelta(days=1)
    while day < end:
        before, after = offset(day), offset(day + step)
        if before != after:
            lo, hi = day, day + step  # offset(lo) == before, offset(hi) == after
            while hi - lo > dt.timedelta(minutes=1):
                mid = lo + (hi - lo) / 2
                lo, hi = (mid, hi) if offset(mid) == before else (lo, mid)
            hi = hi.replace(second=0, microsecond=0)
            changes.append((hi, before, after, hi.astimezone(zone).tzname()))
        day += step
    return changes


def vtimezone(zone: ZoneInfo, first: dt.date, last: dt.date):
    """A VTIMEZONE for ``zone`` between two dates, from the IANA tz database.

    Each sub-component's DTSTART is the onset in the local time *before* the
    change (RFC 5545, section 3.6.5: "the effective onset date and local
    time", read with TZOFFSETFROM), e.g. 02:00 for the EU spring change
    at 01:00 UTC and 03:00 for the autumn one.
    """
    from icalendar import Timezone, TimezoneDaylight, TimezoneStandard

    tz = Timezone()
    tz.add("tzid", zone.key)
    start = dt.datetime.combine(first, dt.time(), dt.UTC)
    initial = start.astimezone(zone)
    base = TimezoneStandard()
    base.add("dtstart", initial.replace(tzinfo=None))
    base.add("tzoffsetfrom", initial.utcoffset())
    base.add("tzoffsetto", initial.utcoffset())
    base.add("tzname", initial.tzname())
    tz.add_component(base)
    for when, before, after, name in offset_changes(zone, first, last):
        part = TimezoneDaylight() if after > before else TimezoneStandard()
        part.add("dtstart", (when + before).replace(tzinfo=None))
        part.add("tzoffsetfrom", before)
        part.add("tzoffsetto", after)
        part.add("tzname", name)
        tz.add_component(part)
    return tz
