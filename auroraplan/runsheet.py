"""A guide's run sheet: one group's outing tonight, and whether to go, wait or swap to the backup.

Built from two reports that exist already: tonight's ranked sites (every open site) and
the plan of the group's stay (the same plan as the itineraries). Nothing is computed
again; the sheet picks the group's outing, the two sites' figures for tonight, and makes
one call with its reason, plus plain sentences about the age of the data.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from auroraplan import checks, wording
from auroraplan.checks import setting
from auroraplan.errors import InputError

PRINT_LANGUAGES = ("en", "de")
"""Languages with a message catalogue (the keys of auroraplan.i18n.LANGUAGES, which needs
babel; a test keeps the two equal)."""


@dataclass(frozen=True)
class ContactSettings:
    """operator.toml [contact]: who guests and guides call, and where groups are met."""

    phone: str | None = setting(None, checks.text, "text", "the operator's phone number")
    emergency: str | None = setting(None, checks.text, "text", "emergency number to call")
    meeting_point: str | None = setting(None, checks.text, "text",
                                        "where groups are picked up (default: the base)")
    meeting_address: str | None = setting(None, checks.text, "text",
                                          "street address of the meeting point")
    meeting_lat: float | None = setting(None, checks.number(-90, 90, "degrees"), "degrees",
                                        "latitude of the meeting point")
    meeting_lon: float | None = setting(None, checks.number(-180, 180, "degrees"), "degrees",
                                        "longitude of the meeting point")


@dataclass(frozen=True)
class PrintSettings:
    """operator.toml [print]: what guests and guides read besides the plan."""

    language: str = setting("en", checks.choice(PRINT_LANGUAGES), "code",
                            "language of the itinerary and the phone page")
    cloudy_night_policy: str | None = setting(
        None, checks.paragraph, "text", "the operator's own words for a cloudy or cancelled night")
    chance_meaning: str | None = setting(None, checks.paragraph, "text",
                                         "the operator's own words for what a chance means")
    forecast_max_age_hours: float = setting(
        12.0, checks.positive(240, "hours"), "hours",
        "a Kp forecast issued longer ago than this is called old (forecast centres reissue "
        "the 3-day Kp forecast at least twice a day, from memory)")
    font: str | None = setting(
        None, checks.text, "file", "a TrueType font for the printed itinerary, relative to "
        "the workspace, for scripts the bundled DejaVu Sans lacks (auroraplan.pdffonts)")
    font_bold: str | None = setting(None, checks.text, "file",
                                    "its bold face (optional; else the same font)")


@dataclass(frozen=True)
class RunSheetSettings:
    """When the sheet says go, wait or swap, and when data counts as old.

    go_min_chance : the chance of a sighting below which the sheet says wait rather than
        go (common practice, no source: a one-in-ten night is where guides start to hold).
    swap_margin : how much better the backup's chance must be (absolute, 0..1) before the
        sheet says swap; smaller differences are within the forecast's noise (common
        practice, no source).
    forecast_max_age_h : a Kp forecast issued longer ago than this is called old (hours;
        ``[print] forecast_max_age_hours``, default 12: forecast centres reissue the
        3-day Kp forecast at least twice a day, from memory).
    """

    go_min_chance: float = 0.10
    swap_margin: float = 0.10
    forecast_max_age_h: float = 12.0


def settings_from(operator_settings) -> RunSheetSettings:
    """The run-sheet settings from the workspace's settings (``[print]``)."""
    printing = operator_settings.print if operator_settings is not None else PrintSettings()
    return RunSheetSettings(forecast_max_age_h=float(printing.forecast_max_age_hours))


def language(operator_settings) -> str:
    """The language for guests and guides: ``[print] language``."""
    return operator_settings.print.language if operator_settings is not None else "en"


def meeting_point(operator_settings, base: dict) -> dict:
    """Where groups are picked up: [contact] meeting_* from operator.toml, else the base."""
    contact = operator_settings.contact if operator_settings is not None else ContactSettings()
    if contact.meeting_point:
        return {"name": contact.meeting_point, "address": contact.meeting_address,
                "lat": contact.meeting_lat, "lon": contact.meeting_lon}
    return {"name": base.get("name"), "address": contact.meeting_address,
            "lat": base.get("lat"), "lon": base.get("lon")}


def find_trip(week: dict, trip_id: str) -> dict:
    """The trip's row of a week report; InputError naming the known trips otherwise."""
    for trip in week.get("trips", []):
        if str(trip["trip"]) == str(trip_id):
            return trip
    known = ", ".join(str(t["trip"]) for t in week.get("trips", [])) or "none"
    raise InputError(f"trip {trip_id!r} is not in this plan; known trips: {known}")


def _by_name(tonight: dict) -> dict:
    return {s["name"]: s for s in tonight.get("sites") or []}


def decide(main: dict | None, backup: dict | None, settings: RunSheetSettings) -> dict:
    """Go, wait or swap for tonight's planned site and its backup.

    Parameters
    ----------
    main, backup : dict or None
        The two sites' rows of tonight's report (``name``, ``chance``, ``limiting``,
        ``cloud_pct``, ``window_start`` ...); None when a site has no row (closed since
        the plan was made, or no backup).

    Returns
    -------
    dict
        ``call`` ("go" | "wait" | "swap"), ``site`` (the site the call sends the group to,
        or None for wait), ``reason`` (a key of :data:`REASONS`) and the figures the
        reason quotes.
    """
    main_p = None if main is None else main.get("chance")
    backup_p = None if backup is None else backup.get("chance")
    if backup_p is not None and (main_p is None or backup_p - main_p >= settings.swap_margin):
        reason = "main closed" if main is None else (
            "main no forecast" if main_p is None else f"main {main.get('limiting') or 'lower'}")
        return {"call": "swap", "site": backup["name"], "reason": reason,
                "main_chance": main_p, "backup_chance": backup_p}
    if main is None or main_p is None or main_p < settings.go_min_chance:
        limiting = (main or {}).get("limiting")
        return {"call": "wait", "site": None, "reason": f"low {limiting or 'chance'}",
                "main_chance": main_p, "backup_chance": backup_p}
    return {"call": "go", "site": main["name"], "reason": "go",
            "main_chance": main_p, "backup_chance": backup_p}


def data_age(tonight: dict, site: dict | None, settings: RunSheetSettings) -> list[dict]:
    """What is old or missing in tonight's data, as keyed facts for plain sentences.

    Each item has ``key`` (what is wrong) and the figures its sentence needs:
    no Kp forecast for tonight (an outlook from Kp history instead), a Kp forecast older
    than ``forecast_max_age_h`` when the sheet was made, a forecast that ends before the
    night does, and no cloud forecast for the site.
    """
    fc = tonight.get("forecast") or {}
    out = []
    if fc.get("kind") != "forecast":
        out.append({"key": "no kp forecast"})
    issued, made = fc.get("issued_utc"), tonight.get("made_at")
    if fc.get("kind") == "forecast" and issued and made:
        age_h = (_instant(made) - _instant(issued)).total_seconds() / 3600.0
        if age_h > settings.forecast_max_age_h:
            out.append({"key": "kp forecast old", "hours": round(age_h),
                        "limit": settings.forecast_max_age_h})
    last, dark_end = fc.get("last_block_utc"), tonight.get("dark_end")
    if fc.get("kind") == "forecast" and last and dark_end:
        # A Kp block covers three hours from its start.
        if _instant(last) + dt.timedelta(hours=3) < _instant(dark_end):
            out.append({"key": "kp forecast ends", "until_utc": last})
    if site is not None and site.get("cloud_pct") is None:
        out.append({"key": "no cloud forecast", "site": site["name"]})
    return out


def _instant(iso_text: str) -> dt.datetime:
    t = dt.datetime.fromisoformat(iso_text.replace("Z", "+00:00"))
    return t if t.tzinfo else t.replace(tzinfo=dt.UTC)


def run_sheet(tonight: dict, week: dict, trip_id: str, operator_settings=None,
              settings: RunSheetSettings | None = None) -> dict:
    """One group's run sheet for tonight.

    Parameters
    ----------
    tonight : dict
        ``tonight_report`` of the night (every open site, so that the planned site and its
        backup have rows).
    week : dict
        A ``week_report`` whose plan covers the night (the plan of the group's stay).
    trip_id : str
        The trip's id in trips.csv.
    operator_settings : auroraplan.settings.Settings, optional
        The workspace's settings (``contact`` and ``print``); None = defaults.

    Returns
    -------
    dict
        ``kind`` "run_sheet", ``trip``, ``group``, ``guests``, ``pickup`` (local ISO),
        ``pickup_place`` (meeting point), ``return``, ``site`` and ``backup`` (tonight's
        rows, or None), ``drive_min``, ``window_start``/``window_end``, ``decision``
        (see :func:`decide`), ``data_age`` (see :func:`data_age`), ``outing`` (the plan's
        entry, or None with ``no_outing`` saying why).
    """
    settings = settings or settings_from(operator_settings)
    trip = find_trip(week, trip_id)
    date = tonight["date"]
    outing = next((p for p in week.get("plan", [])
                   if str(p["trip"]) == str(trip_id) and p["date"] == date), None)
    night = next((n for n in trip.get("nights", []) if n["date"] == date), None)
    sites = _by_name(tonight)
    main = sites.get(outing["site"]) if outing else None
    backup = sites.get(outing["backup"]) if outing and outing.get("backup") else None
    if outing is None:
        why = ("not staying" if night is None else "blocked" if night.get("blocked")
               else "free evening")
        decision = None
    else:
        why = None
        decision = decide(main, backup, settings)
    return {
        "kind": "run_sheet",
        "date": date,
        "trip": trip["trip"],
        "group": trip["group"],
        "guests": trip["guests"],
        "outing": outing,
        "no_outing": why,
        "pickup": outing.get("pickup") if outing else None,
        "return": outing.get("return") if outing else None,
        "pickup_place": meeting_point(operator_settings, tonight.get("base") or {}),
        "site": main,
        "site_name": outing["site"] if outing else None,
        "backup": backup,
        "backup_name": outing.get("backup") if outing else None,
        "drive_min": outing.get("drive_min") if outing else None,
        # Back at the base after the operator's [planner] outing_until (week_report flags it).
        "back_after_hours": bool(outing.get("back_after_hours")) if outing else False,
        "window_start": (main or {}).get("window_start") or (outing or {}).get("window_start"),
        "window_end": (main or {}).get("window_end") or (outing or {}).get("window_end"),
        "decision": decision,
        "data_age": data_age(tonight, main, settings),
        "settings": {"forecast_max_age_h": settings.forecast_max_age_h},
    }


# ---------------------------------------------------------------------------------------
# The sheet in words (English message ids; auroraplan.i18n translates them).

VERDICTS = {
    "go": "Go: {site}",
    "wait": "Wait: not yet worth leaving",
    "swap": "Swap to the backup: {site}",
}


def _reason(sheet: dict, w) -> str:
    """The reason under the go / wait / swap line, in one or two short sentences."""
    d = sheet["decision"]
    main, backup = sheet.get("site") or {}, sheet.get("backup") or {}
    window = wording.time_span(sheet.get("window_start"), sheet.get("window_end"))
    limiting = w(wording.limiting_in_words(main.get("limiting")))
    if d["call"] == "go":
        text = w("{words} chance of a sighting ({percent}) in the window {window}.",
                 words=w(wording.chance_in_words(d["main_chance"])).capitalize(),
                 percent=w.percent(d["main_chance"]), window=window)
        if main.get("limiting"):
            text += " " + w("Held back most by {limiting}.", limiting=limiting)
        return text
    if d["call"] == "swap":
        if d["reason"] == "main closed":
            return w("{site} is closed tonight; {backup} has {percent}.",
                     site=sheet["site_name"], backup=backup.get("name"),
                     percent=w.percent(d["backup_chance"]))
        return w("{backup} has {backup_percent} against {percent} at {site}, held back by "
                 "{limiting}.", backup=backup.get("name"),
                 backup_percent=w.percent(d["backup_chance"]),
                 percent=w.percent(d["main_chance"]), site=sheet["site_name"],
                 limiting=limiting)
    return w("Only {percent} at {site}, held back by {limiting}. Check again before the "
             "pick-up at {time}.", percent=w.percent(d["main_chance"]),
             site=sheet["site_name"], limiting=limiting, time=w.clock(sheet.get("pickup")))


NO_OUTING = {
    "blocked": "The group is not available tonight.",
    "free evening": "No outing is planned for this group tonight.",
    "not staying": "The group is not staying tonight.",
}

AGE_WORDS = {
    "no kp forecast": "No Kp forecast covers tonight: the chance is an outlook from past "
                      "years. Get a current forecast before you go.",
    "kp forecast old": "The Kp forecast is {hours} hours old. Get a fresh one before you go.",
    "kp forecast ends": "The Kp forecast ends at {time}, before the night does.",
    "no cloud forecast": "No cloud forecast for {site}: the cloud figure is the climate "
                         "average. Check the weather before you go.",
}
AGE_LIVE = "The Kp forecast is now {hours} hours old. Get a fresh one before you go."


def call_words(sheet: dict, w) -> tuple[str, str]:
    """The go / wait / swap line and its reason, in the language of ``w`` (a Words)."""
    d = sheet.get("decision")
    if d is None:
        return w("No outing tonight"), w(NO_OUTING[sheet["no_outing"]])
    return w(VERDICTS[d["call"]], site=d.get("site") or ""), _reason(sheet, w)


def age_sentences(sheet: dict, w) -> list[str]:
    """One plain sentence per old or missing piece of data (see :func:`data_age`)."""
    out = []
    for item in sheet.get("data_age") or []:
        fields = {k: v for k, v in item.items() if k != "key"}
        if "until_utc" in fields:
            t = _instant(fields.pop("until_utc"))
            fields["time"] = f"{t.day} {t:%b %H:%M} UTC"
        out.append(w(AGE_WORDS[item["key"]], **fields))
    return out


BACK_AFTER_HOURS = ("Back at {time}, after the operator's outing hours: agree the return "
                    "with the office before you leave.")


def notice_sentences(sheet: dict, w) -> list[str]:
    """The sheet's notices: old or missing data (:func:`age_sentences`), then a return
    after the operator's outing hours."""
    out = age_sentences(sheet, w)
    if sheet.get("back_after_hours"):
        out.append(w(BACK_AFTER_HOURS, time=w.clock(sheet.get("return"))))
    return out
