"""What a value may be: one checker per kind of value, and settings fields that name theirs.

A checker takes a value as read (TOML, JSON, a CSV cell) and returns it in its normal form,
or raises ``ValueError`` saying what is wrong and what is allowed; the loader adds where
(file, row or feature, field). The settings records of the stages (``ViewingSettings`` in
view.py, ``ActivitySettings`` in activity.py, ``ChanceSettings`` in chance.py,
``OutingHours`` in nights.py, ``PlannerSettings`` in planner.py) declare each field with
:func:`setting`: its default, unit, checker and meaning in one place.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import math
import re
import zoneinfo
from pathlib import Path

SHOWN_CHARS = 60
"""Longest piece of a bad value quoted back in an error line."""

TIME_EXAMPLE = "2027-01-12T18:00Z"
_ISO_TIME_RE = re.compile(r"^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}")

FILE_YEARS = (1900, 2099)
"""Years allowed for times in activity.csv, clouds.csv and [activity] issued_utc: a wide
net for typos in the year. Times outside the nights being planned are never used, so the
bound is looser than the ephemeris span of the trip dates (pandas' nanosecond times end in
2262)."""


def is_missing(value) -> bool:
    """True for None and NaN (an empty GeoPackage cell)."""
    return value is None or (isinstance(value, float) and math.isnan(value))


def quote(value) -> str:
    """``repr`` of a bad value for an error line, cut to SHOWN_CHARS characters."""
    text = repr(value)
    return text if len(text) <= SHOWN_CHARS else text[: SHOWN_CHARS - 3] + "..."


def as_float(value) -> float:
    """A JSON/TOML number as float; integers too large for a float become infinity."""
    try:
        return float(value)
    except OverflowError:
        return math.inf if value > 0 else -math.inf


def number(low, high, unit=""):
    """Checker: a number (not a boolean, finite) from ``low`` to ``high``."""
    unit_text = f" {unit}" if unit else ""

    def check(value):
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ValueError(f"{quote(value)} is not a number; give {low} to {high}{unit_text}")
        value = as_float(value)
        if not (math.isfinite(value) and low <= value <= high):
            raise ValueError(f"{value:g} is outside {low} to {high}{unit_text}")
        return value

    return check


def whole(low, high, unit=""):
    """Checker: a whole number from ``low`` to ``high`` (2.0 reads as 2)."""
    as_number = number(low, high, unit)

    def check(value):
        value = as_number(value)
        if value != int(value):
            raise ValueError(f"{value:g} is not a whole number; give {low} to {high}")
        return int(value)

    return check


def numbers(names, low, high, unit=""):
    """Checker: a list of len(names) numbers, each from ``low`` to ``high``, as a tuple."""
    one = number(low, high, unit)

    def check(value):
        if not isinstance(value, list | tuple) or len(value) != len(names):
            count = {2: "two", 3: "three", 4: "four"}.get(len(names), str(len(names)))
            raise ValueError(f"{quote(value)} is not {count} numbers; give "
                             f"[{', '.join(names)}], each {low} to {high}")
        return tuple(one(v) for v in value)

    return check


def positive(high, unit=""):
    """Checker: a number above 0 and at most ``high``."""
    as_number = number(0, high, unit)

    def check(value):
        value = as_number(value)
        if value <= 0:
            raise ValueError(f"{value:g} must be above 0; give up to {high} {unit}".rstrip())
        return value

    return check


def choice(allowed):
    """Checker: one of the names ``allowed`` (any iterable of str, e.g. a dict's keys)."""
    allowed = tuple(allowed)

    def check(value):
        if not isinstance(value, str) or value not in allowed:
            raise ValueError(f"{quote(value)} is not known; allowed: {', '.join(allowed)}")
        return value

    return check


CONTROL_RE = re.compile(r"[\x00-\x1f\x7f]")
CONTROL_IN_NOTES_RE = re.compile(r"[\x00-\x08\x0b-\x1f\x7f]")  # tabs and line breaks allowed
_SURROGATE_RE = re.compile(r"[\ud800-\udfff]")


def printable(value: str, control=CONTROL_RE) -> str:
    """``value`` if it can be shown and written as UTF-8; ValueError naming the bad character."""
    bad = _SURROGATE_RE.search(value)
    if bad:
        raise ValueError(
            f"holds a broken character (lone surrogate U+{ord(bad.group()):04X}); retype the text"
        )
    bad = control.search(value)
    if bad:
        raise ValueError(
            f"holds a control character (U+{ord(bad.group()):04X}); retype the text"
        )
    return value


def text(value):
    """Checker: a non-empty, printable text, stripped."""
    if not isinstance(value, str) or not value.strip():
        raise ValueError("must be a non-empty text")
    return printable(value.strip())


def paragraph(value):
    """Checker: a non-empty text that may run over several lines (a policy, a note)."""
    if not isinstance(value, str) or not value.strip():
        raise ValueError("must be a non-empty text")
    return printable(value.strip(), CONTROL_IN_NOTES_RE)


MAX_NAME_CHARS = 80
"""Longest name (operator, base, site, trip id, group): one line of a printed itinerary's
heading and of a phone screen; a longer one is almost always a paste gone wrong
(common practice, no source)."""

MAX_NOTES_CHARS = 1000
"""Longest site note: a paragraph for the guide (common practice, no source)."""


def name(value):
    """Checker: a name, :func:`text` of at most MAX_NAME_CHARS characters."""
    value = text(value)
    if len(value) > MAX_NAME_CHARS:
        raise ValueError(f"is {len(value)} characters long; names may have at most "
                         f"{MAX_NAME_CHARS}, shorten it")
    return value


def latitude_off_pole(value):
    """Checker: a latitude from -90 to 90 but not a geographic pole, where every direction
    is south (or north) and no compass direction to look can be given."""
    lat = number(-90, 90, "degrees")(value)
    if abs(lat) == 90:
        raise ValueError(f"{lat:g} is a geographic pole, where no direction to look can be "
                         "given; give a latitude between -89.999 and 89.999")
    return lat


def not_a_file(path) -> str | None:
    """Why an input path that exists is not a file that can be read, or None.

    A folder, a pipe, a device or a broken link where a file is expected is named in one
    line; reading a pipe or device could wait for ever, so none is opened.
    """
    import os
    import stat

    try:
        if not os.path.lexists(path):
            return None
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        return f"{path}: is not a regular file (a broken link); point it at a file or remove it"
    except OSError as exc:
        return f"{path}: cannot be examined ({exc.strerror}); check the file"
    if stat.S_ISREG(mode):
        return None
    kind = "a folder" if stat.S_ISDIR(mode) else "not a regular file (a pipe or device)"
    return f"{path}: is {kind}; {Path(path).name} must be a file"


def zone(value):
    """Checker: an IANA time-zone name such as Europe/Oslo."""
    text(value)
    try:
        zoneinfo.ZoneInfo(value)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
        # OSError: a folder of the zone database ("Europe") or a name too long for a path
        raise ValueError(
            f"{quote(value)} is not a known IANA time zone; give a name such as Europe/Oslo"
        ) from None
    return value


def parse_utc(value) -> dt.datetime:
    """An ISO 8601 date and time as an aware UTC datetime: the one reader of times.

    "Z" or an offset ("+01:00") is honoured; a time without a zone is taken as UTC (the
    files hold UTC, and the command line reads times the same way). A ``datetime`` is
    converted the same way.
    """
    if isinstance(value, dt.datetime):
        moment = value
    else:
        raw = str(value).strip()
        if not _ISO_TIME_RE.match(raw):
            raise ValueError(
                f"{quote(raw)} is not an ISO 8601 date and time; give for example {TIME_EXAMPLE}"
            )
        try:
            moment = dt.datetime.fromisoformat(raw[:-1] + "+00:00" if raw.endswith(("z", "Z"))
                                               else raw)
        except ValueError:
            raise ValueError(
                f"{quote(raw)} is not an ISO 8601 date and time; give for example {TIME_EXAMPLE}"
            ) from None
    if moment.tzinfo is None:
        return moment.replace(tzinfo=dt.UTC)
    try:
        return moment.astimezone(dt.UTC)
    except OverflowError:  # 0001-01-01T00:00+01:00 or 9999-12-31T23:59-01:00
        raise ValueError(
            f"{quote(str(value).strip())} lies outside the calendar in UTC; give a time "
            f"such as {TIME_EXAMPLE}"
        ) from None


def file_time(value) -> dt.datetime:
    """Checker: :func:`parse_utc`, limited to the years FILE_YEARS the stages can compute."""
    moment = parse_utc(value)
    first, last = FILE_YEARS
    if not first <= moment.year <= last:
        raise ValueError(
            f"{moment:%Y-%m-%dT%H:%MZ} is outside the years {first} to {last}; check the year"
        )
    return moment


def time_setting(value) -> dt.datetime:
    """Checker: a date and time in operator.toml (text or a TOML datetime), as file_time."""
    if isinstance(value, dt.date | dt.time) and not isinstance(value, dt.datetime):
        raise ValueError(f"{value} is not a date and time; give for example \"{TIME_EXAMPLE}\"")
    return file_time(value)


def date(value) -> dt.date:
    """Checker: a calendar date YYYY-MM-DD."""
    raw = str(value).strip()
    try:
        return dt.date.fromisoformat(raw)
    except ValueError:
        raise ValueError(
            f"{quote(raw)} is not a date; give YYYY-MM-DD, for example 2027-01-12"
        ) from None


def date_within(first: dt.date, last: dt.date):
    """Checker: :func:`date` from ``first`` to ``last``."""

    def check(value) -> dt.date:
        day = date(value)
        if not first <= day <= last:
            raise ValueError(
                f"{day} is outside {first} to {last}, the dates the sky is computed for; "
                "check the year"
            )
        return day

    return check


_CLOCK_RE = re.compile(r"^\s*(\d{1,2}):(\d{2})\s*$")


def clock(value) -> str:
    """Checker: a local clock time "HH:MM" from 00:00 to 24:00 (a TOML time 18:00:00 too)."""
    if isinstance(value, dt.time):
        if value.second or value.microsecond or value.tzinfo is not None:
            raise ValueError(f"{value} is not a whole minute of the local clock; give \"HH:MM\"")
        return f"{value:%H:%M}"
    allowed = 'give "HH:MM" from 00:00 to 24:00, for example "18:00"'
    match = _CLOCK_RE.match(value) if isinstance(value, str) else None
    if match is None:
        raise ValueError(f"{quote(value)} is not a clock time; {allowed}")
    hours, minutes = int(match.group(1)), int(match.group(2))
    if minutes >= 60 or hours * 60 + minutes > 24 * 60:
        raise ValueError(f"{quote(value)} is not a clock time; {allowed}")
    return f"{hours:02d}:{minutes:02d}"


def cell(checker, what: str, low, high, unit=""):
    """Checker of a CSV cell: the text read as a number, then checked by ``checker``."""

    def check(value):
        raw = str(value).strip()
        try:
            parsed = float(raw)
        except ValueError:
            raise ValueError(
                f"{quote(raw)} is not {what}; give {low} to {high} {unit}".rstrip()
            ) from None
        return checker(parsed)

    return check


def cell_number(low, high, unit=""):
    """Checker: a CSV cell holding a number from ``low`` to ``high``."""
    return cell(number(low, high, unit), "a number", low, high, unit)


def cell_whole(low, high, unit=""):
    """Checker: a CSV cell holding a whole number from ``low`` to ``high``."""
    return cell(whole(low, high, unit), "a whole number", low, high)


# ---------------------------------------------------------------------------------------
# Fields of the workspace files (the loader in auroraplan/workspace/ says which field)
# ---------------------------------------------------------------------------------------


def remembered(checker):
    """``checker`` that keeps its answer (the value, or the ValueError's message) for each
    distinct cell: a large file repeats its site names and figures on every row."""
    answers = {}

    def check(value):
        answer = answers.get(value)
        if answer is None:
            try:
                answer = answers[value] = (True, checker(value))
            except ValueError as exc:
                answer = answers[value] = (False, str(exc))
        if answer[0]:
            return answer[1]
        raise ValueError(answer[1])

    return check


def optional(checker):
    """Checker of a CSV cell that may be left empty: NaN for an empty cell, else ``checker``."""

    def check(value):
        if not str(value).strip():
            return math.nan
        return checker(value)

    return check


def measurement(value) -> float:
    """Checker: a measurement cell, any finite number, or empty (NaN: a gap)."""
    raw = str(value).strip()
    if not raw:
        return math.nan
    try:
        number_read = float(raw)
    except ValueError:
        raise ValueError(f"{quote(raw)} is not a number; leave the cell empty for a gap") from None
    if math.isinf(number_read):
        raise ValueError(f"{quote(raw)} is not a finite number; leave the cell empty for a gap")
    return number_read


def block_start(hours: int, what: str):
    """Checker: a UTC time (:func:`file_time`) at the start of an ``hours``-hour block."""
    starts = ", ".join(f"{h:02d}" for h in range(0, 3 * hours, hours))
    allowed = f"give {starts}, ... {24 - hours:02d} h UTC"

    def check(value):
        start = file_time(value)
        if start.minute or start.second or start.microsecond or start.hour % hours:
            raise ValueError(f"{quote(str(value).strip())} is not the start of a {hours}-hour "
                             f"{what} block; {allowed}")
        return start

    return check


def word(meanings: dict, allowed: str):
    """Checker: a word (any case) among the keys of ``meanings``; returns its meaning."""

    def check(value):
        key = str(value).strip().lower()
        if key not in meanings:
            raise ValueError(f"{quote(str(value).strip())} is not known; {allowed}")
        return meanings[key]

    return check


PERCENT_CELLS = {"percent": (0, 100, 1.0, "%"), "fraction": (0, 1, 100.0, "(a fraction)")}
"""What a cloud cell in each unit may hold: (lowest, highest, factor to percent, unit word)."""


def percent_cell(unit: str):
    """Checker of a CSV cell in ``unit`` ("percent" or "fraction"): returns percent."""
    low, high, factor, word = PERCENT_CELLS[unit]
    check = cell_number(low, high, word)
    return check if factor == 1.0 else lambda value: factor * check(value)


def json_list(value, problem: str):
    """A list value as given, or parsed from JSON text (GeoPackage columns hold text)."""
    if not isinstance(value, str):
        return value
    try:
        return json.loads(value)
    except json.JSONDecodeError:
        raise ValueError(problem) from None


def horizon(elevation_range):
    """Checker: a horizon polyline [[azimuth°, elevation°], ...] (elevations within
    ``elevation_range``), returned as an (M, 2) array sorted by azimuth; None if missing."""
    low, high = elevation_range
    allowed = f"give a list of [azimuth 0-360, elevation {low} to {high}] pairs in degrees"

    def check(value):
        import numpy as np

        if is_missing(value):
            return None
        value = json_list(value, "is not a list of [azimuth, elevation] pairs")
        if not isinstance(value, list) or len(value) < 2:
            raise ValueError(f"needs at least two points; {allowed}")
        points = []
        for i, point in enumerate(value, start=1):
            if (
                not isinstance(point, list | tuple)
                or len(point) != 2
                or not all(isinstance(v, int | float) and not isinstance(v, bool) for v in point)
            ):
                raise ValueError(f"point {i} ({quote(point)}) is not an [azimuth, elevation] "
                                 f"pair; {allowed}")
            az, el = as_float(point[0]), as_float(point[1])
            if not (math.isfinite(az) and 0.0 <= az <= 360.0):
                raise ValueError(f"point {i}: azimuth {az:g} is outside 0 to 360 degrees")
            if not (math.isfinite(el) and low <= el <= high):
                raise ValueError(f"point {i}: elevation {el:g} is outside {low} to {high} degrees")
            points.append((az, el))
        arr = np.array(points, dtype=float)
        return arr[np.argsort(arr[:, 0], kind="stable")]

    return check


def monthly_fractions(value):
    """Checker: 12 fractions 0-1, January first (a list, or JSON text); None if missing."""
    if is_missing(value):
        return None
    value = json_list(value, "is not a list of 12 fractions")
    if not isinstance(value, list) or len(value) != 12:
        raise ValueError("give 12 fractions 0 to 1, January first")
    check = number(0, 1)
    return tuple(check(v) for v in value)


def yes_no(value) -> bool:
    """Checker: true or false (or 1/0); False if missing."""
    if is_missing(value):
        return False
    if isinstance(value, bool) or value in (0, 1):
        return bool(value)
    raise ValueError(f"{quote(value)} is not true or false")


def notes(value) -> str:
    """Checker: notes for the guide, text of at most MAX_NOTES_CHARS characters that may run
    over several lines; "" if missing."""
    if is_missing(value):
        return ""
    if not isinstance(value, str):
        raise ValueError("must be text")
    if len(value) > MAX_NOTES_CHARS:
        raise ValueError(f"is {len(value)} characters long; notes may have at most "
                         f"{MAX_NOTES_CHARS}, shorten them")
    return printable(value.replace("\r\n", "\n").replace("\r", "\n"), CONTROL_IN_NOTES_RE)


def date_cells(value) -> tuple:
    """Checker of a CSV cell: dates separated by semicolons (may be empty)."""
    parts = [p.strip() for p in str(value).split(";") if p.strip()]
    return tuple(date(p) for p in parts)


def date_list(value, where: str) -> tuple:
    """Checker: a TOML list of dates (TOML dates or "YYYY-MM-DD"), sorted, without repeats;
    ``where`` starts each error line."""
    if not isinstance(value, list):
        raise ValueError(f"{where}: give a list of dates such as [2027-01-12]")
    dates = []
    for item in value:
        if isinstance(item, dt.datetime) or not isinstance(item, dt.date | str):
            raise ValueError(f"{where}: {quote(item)} is not a date; "
                             "give YYYY-MM-DD, for example 2027-01-12")
        try:
            dates.append(item if isinstance(item, dt.date) else date(item))
        except ValueError as exc:
            raise ValueError(f"{where}: {exc}") from None
    return tuple(sorted(set(dates)))


# ---------------------------------------------------------------------------------------
# Settings fields
# ---------------------------------------------------------------------------------------


def setting(default, check, unit: str = "", doc: str = ""):
    """A field of a frozen settings record: default, checker, unit and meaning together.

    ``check`` is one of the checkers above; the loader runs it on the value written in
    operator.toml. ``doc`` says what the setting means and where its default comes from.
    """
    return dataclasses.field(default=default,
                             metadata={"check": check, "unit": unit, "doc": doc})


def setting_fields(record) -> dict:
    """Name -> dataclass field of a settings record (class or instance) that has a checker."""
    return {f.name: f for f in dataclasses.fields(record) if "check" in f.metadata}


def describe(record) -> list[tuple[str, object, str, str]]:
    """(name, default, unit, meaning) of each setting of a record, for help and docs."""
    return [(f.name, f.default, f.metadata["unit"], f.metadata["doc"])
            for f in setting_fields(record).values()]
