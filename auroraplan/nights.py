"""What "a night" is: local noon to the next local noon, and the UTC time grids over nights.

A night is named by the local date of its evening. It runs from local noon on that date to
local noon on the next, on the base's clock, so a night that holds a daylight-saving change
lasts 23 or 25 hours. Every stage that needs nights, time grids or UTC instants as numpy
values takes them from here.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass

import numpy as np

from auroraplan import checks
from auroraplan.errors import InputError

NOON = dt.time(12)
"""A night begins and ends at local noon (common practice, no source: the evening's date
names the whole dark period, which never spans local noon outside the polar night)."""


def zone_of(tz: str) -> zoneinfo.ZoneInfo:
    """The zone of an IANA name; InputError in one line when it is not known."""
    try:
        return zoneinfo.ZoneInfo(tz)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
        raise InputError(
            f"time zone {tz!r} is not a known IANA zone; give a name such as Europe/Oslo"
        ) from None


def night_start(day: dt.date, tz) -> dt.datetime:
    """Local noon of the evening ``day``: the aware datetime at which that night begins."""
    zone = tz if isinstance(tz, dt.tzinfo) else zone_of(tz)
    return dt.datetime.combine(day, NOON, tzinfo=zone)


def night_bounds(day: dt.date, tz) -> tuple[dt.datetime, dt.datetime]:
    """(start, end) of the night of evening ``day``, aware, local noon to local noon."""
    return night_start(day, tz), night_start(day + dt.timedelta(days=1), tz)


def night_of(moment: dt.datetime, tz) -> dt.date:
    """The evening date of the night that holds the aware instant ``moment``.

    Before local noon an instant belongs to the night that began the evening before.
    """
    zone = tz if isinstance(tz, dt.tzinfo) else zone_of(tz)
    local = moment.astimezone(zone)
    return local.date() - dt.timedelta(days=1) if local.time() < NOON else local.date()


def tonight(tz: str) -> dt.date:
    """The evening date of the night in progress or coming at the base, from the clock."""
    return night_of(dt.datetime.now(dt.UTC), tz)


def _as_utc64(moment: dt.datetime) -> np.datetime64:
    return np.datetime64(moment.astimezone(dt.UTC).replace(tzinfo=None), "s")


def night_times(first_night: dt.date, nights: int, tz: str, step_min=10, include_end=False):
    """A UTC time grid running from local noon to the next local noon, night by night.

    Parameters
    ----------
    first_night : datetime.date
        Local date on which the first night begins (the evening's date).
    nights : int
        Number of consecutive nights.
    tz : str
        IANA time zone; noon is taken on the local clock, so nights that contain
        a daylight-saving change last 23 or 25 hours.
    step_min : float
        Spacing in minutes.
    include_end : bool
        Also give each night's closing noon (which is the next night's opening
        time) so that a night can be worked on as a closed interval.

    Returns
    -------
    times_utc : ndarray of datetime64[s] (T,)
    night_index : ndarray of int (T,)
        0 for the first night, 1 for the next, ...
    """
    zone = zone_of(tz)
    step = np.timedelta64(int(round(step_min * 60)), "s")
    times, index = [], []
    for k in range(nights):
        start, end = (_as_utc64(t) for t in night_bounds(first_night + dt.timedelta(days=k), zone))
        grid = np.arange(start, end, step)
        if include_end:
            grid = np.append(grid, end)
        times.append(grid)
        index.append(np.full(grid.size, k))
    if not times:
        return np.array([], dtype="datetime64[s]"), np.array([], dtype=int)
    return np.concatenate(times), np.concatenate(index)


def utc_datetime64(values) -> np.ndarray:
    """UTC times as numpy datetime64[s], from numpy, pandas (aware or naive), datetime or text.

    Naive times are taken as UTC; aware ones are converted; text is read by
    :func:`auroraplan.checks.parse_utc`.
    """
    tz = getattr(getattr(values, "dt", values), "tz", None)
    if tz is not None:
        import pandas as pd

        index = pd.DatetimeIndex(values).tz_convert("UTC").tz_localize(None)
        return index.to_numpy().astype("datetime64[s]")
    arr = np.asarray(values)
    if arr.dtype.kind == "M":
        return arr.astype("datetime64[s]")
    flat = [_one_utc(v) for v in arr.ravel()]
    return np.array(flat, dtype="datetime64[s]").reshape(arr.shape)


def _one_utc(value) -> np.datetime64:
    if isinstance(value, str | dt.datetime):
        return _as_utc64(checks.parse_utc(value))
    return np.datetime64(value, "s")


# ---------------------------------------------------------------------------------------
# Outing hours
# ---------------------------------------------------------------------------------------


def clock_minutes(text: str) -> int:
    """Minutes after local midnight of a checked clock time "HH:MM" (24:00 is 1440)."""
    hours, minutes = str(text).split(":")
    return int(hours) * 60 + int(minutes)


@dataclass(frozen=True)
class OutingHours:
    """Local clock hours when groups are taken out; chances and windows count only these.

    Written in operator.toml [planner] (or [chance]). Common practice, no source: evening
    tours leave after dinner and are back before the small hours. Equal ends mean all day.
    """

    outing_from: str = checks.setting("18:00", checks.clock, "HH:MM local",
                                      "first clock time of an outing")
    outing_until: str = checks.setting("02:00", checks.clock, "HH:MM local",
                                       "clock time by which groups are back")

    def mask(self, times_utc, tz: str) -> np.ndarray:
        """True at times whose local clock time lies in [from, until), wrapping past midnight."""
        import pandas as pd

        local = pd.DatetimeIndex(np.asarray(times_utc, "datetime64[s]")) \
            .tz_localize("UTC").tz_convert(tz)
        minute = np.asarray(local.hour * 60 + local.minute)
        start, end = clock_minutes(self.outing_from), clock_minutes(self.outing_until)
        if start == end:
            return np.ones(minute.shape, bool)
        if start < end:
            return (minute >= start) & (minute < end)
        return (minute >= start) | (minute < end)
