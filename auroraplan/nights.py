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


DEFAULT_OUTING_H = (6.0, 3.0)
"""Default outing hours: from six hours before the sites' magnetic midnight to three after,
on the clock. Magnetic midnight is the instant the sites' mean magnetic local time (AACGM-v2
MLT, Shepherd 2014, JGR 119, 7501, from the ``aacgmv2`` package) passes 0. Substorm onsets,
and with them the brightest and most active displays, cluster shortly before magnetic
midnight (Frey et al. 2004, JGR 109, A10304: the median onset near 23 MLT, from memory);
the evening arcs come earlier and the morning's patchy aurora later. The six-before,
three-after span is common practice, no source: evening tours go out after dinner, and the
hours after are left to the operator's own ``outing_until``."""

OUTING_SPAN_H = DEFAULT_OUTING_H[0] + DEFAULT_OUTING_H[1]
"""Length of the default outing hours, hours (9)."""


def night_minute(minute_of_day, closing: bool = False):
    """Minutes after the local noon that opens a night (0-1439); with ``closing`` an end
    of hours: noon itself is the night's close (1440), not its opening."""
    shift = np.asarray(minute_of_day) - NOON.hour * 60
    if closing:
        return (shift - 1) % 1440 + 1
    return shift % 1440


def local_datetime64(times_utc, tz: str) -> np.ndarray:
    """Local wall-clock times (naive datetime64[s], any shape) of UTC instants on ``tz``'s
    clock, from the IANA tz database (zoneinfo).

    The zone's UTC offset is looked up at the start and end of each distinct UTC hour;
    only within an hour whose offset changes (a clock change, at any minute) is each
    time looked up alone.
    """
    times = np.asarray(times_utc, "datetime64[s]")
    seconds = times.ravel().astype(np.int64)
    if not seconds.size:
        return times.copy()
    zone = zone_of(tz)

    def offset(second) -> int:
        when = dt.datetime.fromtimestamp(int(second), dt.UTC).astimezone(zone)
        return int(when.utcoffset().total_seconds())

    hours, back = np.unique(seconds // 3600, return_inverse=True)
    at_start = np.array([offset(h * 3600) for h in hours])
    at_end = np.array([offset(h * 3600 + 3599) for h in hours])
    shift = at_start[back]
    for i in np.flatnonzero((at_start != at_end)[back]):
        shift[i] = offset(seconds[i])
    return (seconds + shift).astype("datetime64[s]").reshape(times.shape)


def local_minutes(times_utc, tz: str) -> np.ndarray:
    """Local clock minute of the day (0-1439) of UTC instants (any shape), on ``tz``'s clock."""
    local = local_datetime64(times_utc, tz).astype(np.int64)
    return (local % 86400) // 60


@dataclass(frozen=True)
class OutingHours:
    """The operator's limits on the local clock hours when groups are out.

    Written in operator.toml [planner] (or [chance]). Unset ends are derived each night
    from the sites' magnetic midnight and darkness (:func:`derived_outing`), so a base west
    of Greenwich, whose magnetic midnight falls at 02:00-03:00 local, is not cut off at
    02:00. ``outing_from`` is when a group leaves the base, ``outing_until`` when it is back:
    a site's viewing hours are shortened by its drive at each end the operator set
    (:func:`at_site`). Equal ends mean all day.
    """

    outing_from: str | None = checks.setting(
        None, checks.clock, "HH:MM local",
        "first clock time of an outing, leaving the base; default: derived from the sites' "
        "magnetic midnight (six hours before it) within darkness")
    outing_until: str | None = checks.setting(
        None, checks.clock, "HH:MM local",
        "clock time by which groups are back at the base; default: derived (three hours "
        "after the sites' magnetic midnight) within darkness, with no return limit")

    @property
    def set_by_operator(self) -> bool:
        """True when the operator wrote either end."""
        return self.outing_from is not None or self.outing_until is not None

    def mask(self, times_utc, tz: str) -> np.ndarray:
        """True at times inside the operator's limits (any shape of UTC times).

        Both ends set: the local clock time lies in [from, until), wrapping past midnight
        (equal ends: all day). One end set: the other is open up to the noon that opens or
        closes the night. No end set: True everywhere (the derived hours apply alone).
        """
        times = np.asarray(times_utc, "datetime64[s]")
        if not self.set_by_operator:
            return np.ones(times.shape, bool)
        minute = local_minutes(times, tz)
        if self.outing_from is not None and self.outing_until is not None:
            start, end = clock_minutes(self.outing_from), clock_minutes(self.outing_until)
            if start == end:
                return np.ones(minute.shape, bool)
            if start < end:
                return (minute >= start) & (minute < end)
            return (minute >= start) | (minute < end)
        at = night_minute(minute)
        if self.outing_from is not None:
            return at >= night_minute(clock_minutes(self.outing_from))
        return at < night_minute(clock_minutes(self.outing_until), closing=True)

    def text(self) -> str:
        """The limits as written, 'HH:MM–HH:MM', with 'derived' for an unset end."""
        return f"{self.outing_from or 'derived'}–{self.outing_until or 'derived'}"

    def end_instant(self, night: dt.date, tz: str) -> dt.datetime | None:
        """The aware instant of ``outing_until`` in the night of evening ``night`` (None
        when unset): the first time at that clock reading after the night's opening noon."""
        if self.outing_until is None:
            return None
        start = night_start(night, tz)
        minutes = night_minute(clock_minutes(self.outing_until), closing=True)
        wall = start.replace(tzinfo=None) + dt.timedelta(minutes=int(minutes))
        return wall.replace(tzinfo=start.tzinfo)


    def back_late(self, night: dt.date, back_utc, tz: str) -> bool:
        """True when a return at ``back_utc`` (datetime64, UTC) is after ``outing_until`` of
        the night of evening ``night``; False when unset or not known."""
        end = self.end_instant(night, tz)
        back = np.datetime64(back_utc, "s")
        return bool(end is not None and not np.isnat(back) and back > _as_utc64(end))


def mean_mlt(mlt_h) -> np.ndarray:
    """Circular mean (T,) of the sites' magnetic local times (N, T), hours 0-24; NaN where
    no site has one (AACGM-v2 is undefined near the magnetic equator)."""
    angle = np.asarray(mlt_h, float) * (np.pi / 12.0)
    with np.errstate(invalid="ignore"):
        sin, cos = np.nanmean(np.sin(angle), axis=0), np.nanmean(np.cos(angle), axis=0)
    return np.mod(np.arctan2(sin, cos) * (12.0 / np.pi), 24.0)


def hours_from_midnight(mlt_h) -> np.ndarray:
    """Signed hours from magnetic midnight, -12 (before) to +12 (after)."""
    return (np.asarray(mlt_h, float) + 12.0) % 24.0 - 12.0


def derived_outing(times_utc, mlt_mean, dark, night_index, step_min) -> np.ndarray:
    """Default outing steps (T,): ``DEFAULT_OUTING_H`` around each night's magnetic midnight.

    Parameters
    ----------
    times_utc : ndarray of datetime64 (T,)
    mlt_mean : ndarray (T,)
        The sites' mean magnetic local time (:func:`mean_mlt`).
    dark : ndarray (T,) of bool
        Whether any site is dark at the operator's level.
    night_index : ndarray (T,) of int
    step_min : float

    Returns
    -------
    ndarray (T,) of bool

    Notes
    -----
    Magnetic midnight is taken at the step whose MLT is nearest 0, less that step's hours
    from midnight (MLT runs at about the clock's rate, within a fifth, so the error is under
    a minute on a 10-minute grid). On a night whose darkness lies wholly outside those hours
    (short summer nights far from the magnetic midnight meridian), the hours slide to the
    darkness: the ``OUTING_SPAN_H`` hours of darkness that start (or end) at the dark step
    nearest magnetic midnight. So the hours always hold the darkness nearest magnetic
    midnight.
    """
    times = np.asarray(times_utc, "datetime64[s]")
    from_midnight = hours_from_midnight(mlt_mean)
    dark = np.asarray(dark, bool)
    night_index = np.asarray(night_index)
    outing = np.zeros(times.shape, bool)
    span = max(1, int(round(OUTING_SPAN_H * 60.0 / step_min)))
    before, after = (np.timedelta64(int(round(h * 3600)), "s") for h in DEFAULT_OUTING_H)
    for night in np.unique(night_index):
        cols = np.flatnonzero(night_index == night)
        known = cols[np.isfinite(from_midnight[cols])]
        if known.size == 0:
            continue
        k = known[np.argmin(np.abs(from_midnight[known]))]
        midnight = times[k] - np.timedelta64(int(round(from_midnight[k] * 3600)), "s")
        outing[cols] = (times[cols] >= midnight - before) & (times[cols] < midnight + after)
        dark_cols = cols[dark[cols]]
        if dark_cols.size == 0 or outing[dark_cols].any():
            continue
        distance = np.abs(np.nan_to_num(from_midnight[dark_cols], nan=12.0))
        nearest = int(np.argmin(distance))
        outing[cols] = False
        if times[dark_cols[nearest]] >= midnight:  # darkness begins after the hours
            outing[dark_cols[nearest:nearest + span]] = True
        else:  # darkness ends before them
            outing[dark_cols[max(0, nearest - span + 1):nearest + 1]] = True
    return outing


def at_site(hours: OutingHours, times_utc, tz: str, drive_min, step_min) -> np.ndarray:
    """Steps (N, T) a group can spend at each site within the operator's limits.

    A group leaves the base at ``outing_from`` or later and is back by ``outing_until``:
    a step [t, t + step) at a site ``drive_min`` away is usable when t - drive and
    t + step + drive (less one second) both lie within the limits. An end the operator did
    not set is not shortened. Sites sharing a drive time share one row of work.
    """
    times = np.asarray(times_utc, "datetime64[s]")
    drive = np.asarray(drive_min, float)
    if not hours.set_by_operator:
        return np.ones((drive.size, times.size), bool)
    step = np.timedelta64(int(round(step_min * 60)), "s")
    unique, row = np.unique(np.round(drive * 60.0).astype(np.int64), return_inverse=True)
    shift = unique.astype("timedelta64[s]")[:, None]
    leave = hours.mask(times[None, :] - shift, tz) if hours.outing_from is not None else True
    back = (hours.mask(times[None, :] + step + shift - np.timedelta64(1, "s"), tz)
            if hours.outing_until is not None else True)
    usable = np.broadcast_to(np.asarray(leave & back, bool), (unique.size, times.size))
    return usable[row.ravel()]


def outing_steps(hours: OutingHours, times_utc, night_index, tz: str, step_min, mlt_mean,
                 dark_any):
    """(T,) outing hours: the derived hours, with the operator's ends in their place.

    ``mlt_mean`` (T,) is the sites' mean MLT (:func:`mean_mlt`), ``dark_any`` (T,) whether
    any site is dark. Both ends set: the operator's hours alone. One end set: that end, and
    the derived hours' other end (when that would leave no hours, the ``OUTING_SPAN_H``
    hours next to the operator's end). None: :func:`derived_outing`.
    """
    times = np.asarray(times_utc, "datetime64[s]")
    if hours.outing_from is not None and hours.outing_until is not None:
        return hours.mask(times, tz)
    derived = derived_outing(times, mlt_mean, dark_any, night_index, step_min)
    if not hours.set_by_operator:
        return derived
    limit = hours.mask(times, tz)
    night_index = np.asarray(night_index)
    span = max(1, int(round(OUTING_SPAN_H * 60.0 / step_min)))
    out = np.zeros(times.shape, bool)
    for night in np.unique(night_index):
        cols = np.flatnonzero(night_index == night)
        allowed = cols[limit[cols]]
        if allowed.size == 0:
            continue
        inside = cols[derived[cols]]
        if hours.outing_until is not None:  # the derived start, the operator's end
            first = inside[0] if inside.size and inside[0] <= allowed[-1] else allowed[-1] - span + 1
            out[cols] = (cols >= first) & limit[cols]
        else:  # the operator's start, the derived end
            last = inside[-1] if inside.size and inside[-1] >= allowed[0] else allowed[0] + span - 1
            out[cols] = (cols <= last) & limit[cols]
    return out


def hours_text(times_utc, outing, tz: str) -> str:
    """'HH:MM–HH:MM' local of the first run of outing steps, or 'none'."""
    times = np.asarray(times_utc, "datetime64[s]")
    idx = np.flatnonzero(outing)
    if idx.size == 0:
        return "none"
    step = np.median(np.diff(times)) if times.size > 1 else np.timedelta64(600, "s")
    gaps = np.flatnonzero(np.diff(idx) > 1)
    last = idx[gaps[0]] if gaps.size else idx[-1]
    ends = local_minutes(np.array([times[idx[0]], times[last] + step]), tz)
    return "–".join(f"{m // 60:02d}:{m % 60:02d}" for m in ends)
