"""Checks across files: the base's time zone against its longitude, the sites against the base."""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
import zoneinfo

import numpy as np

from auroraplan import checks
from auroraplan.errors import ProblemList
from auroraplan.workspace.sites import (
    MAX_SITE_KM,
    ROAD_FACTOR,
    WINTER_ROAD_KMH,
    estimated_drive_min,
)

MAX_ZONE_HOURS_FROM_SOLAR = 3.5

"""Largest gap allowed between the base's time zone offset and its solar time (longitude
/ 15° per hour). Civil zones stray up to about 3 hours from solar time (western China);
a wider gap means the zone of another place (common practice, no source)."""


def _check_zone_near_base(lat: float, lon: float, zone: str, label: str,
                          problems: ProblemList) -> None:
    """One problem when the base's time zone is far from its solar time (a zone of another
    place: every local time, darkness window and outing hour would be shifted)."""
    tz = zoneinfo.ZoneInfo(zone)
    offsets = {tz.utcoffset(dt.datetime(2027, month, 15, 12)).total_seconds() / 3600.0
               for month in (1, 7)}
    solar = lon / 15.0
    gap = min(abs((o - solar + 12.0) % 24.0 - 12.0) for o in offsets)
    if gap <= MAX_ZONE_HOURS_FROM_SOLAR:
        return
    try:
        from timezonefinder import TimezoneFinder

        found = TimezoneFinder().timezone_at(lng=lon, lat=lat)
    except Exception:  # a suggestion only; the problem stands without it
        found = None
    hint = f"; the zone at the base is {found}" if found else ""
    shown = ", ".join(f"UTC{o:+g}" for o in sorted(offsets))
    problems.add(
        f"{label} [base] timezone: {zone} ({shown}) is {gap:.1f} h from the solar time of a "
        f"base at {abs(lon):.1f}° {'E' if lon >= 0 else 'W'} (UTC{solar:+.1f}){hint}; give "
        "the time zone of the base")


def _sites_near_base(operator, sites, label, problems: ProblemList, warnings: list):
    """Sites checked against the base: none beyond MAX_SITE_KM (with a hint when latitude
    and longitude look swapped), and a missing drive_min estimated from the distance."""
    from auroraplan.weather import _great_circle_km

    lat = np.array([s.lat for s in sites], float)
    lon = np.array([s.lon for s in sites], float)
    km = _great_circle_km(operator.base_lat, operator.base_lon, lat, lon)
    swapped_km = _great_circle_km(operator.base_lat, operator.base_lon,
                                  np.clip(lon, -90, 90), lat)
    out = []
    for i, site in enumerate(sites):
        where = f"{label} feature {i + 1} {checks.quote(site.name)}"
        if km[i] > MAX_SITE_KM:
            hint = (" latitude and longitude look swapped: GeoJSON gives [longitude, latitude]"
                    if abs(site.lon) <= 90 and swapped_km[i] <= MAX_SITE_KM else
                    " check the coordinates")
            problems.add(f"{where}, geometry: {km[i]:,.0f} km from the base "
                         f"{operator.base_name!r} (more than {MAX_SITE_KM:,.0f} km);{hint}")
            continue
        if math.isnan(site.drive_min):
            minutes = estimated_drive_min(float(km[i]))
            warnings.append(
                f"{where}: no drive_min; estimated {minutes:.0f} min from {km[i]:.0f} km in a "
                f"straight line × road factor {ROAD_FACTOR:g} at {WINTER_ROAD_KMH:g} km/h; "
                "give drive_min to use the real drive")
            site = dataclasses.replace(site, drive_min=minutes)
        out.append(site)
    return None if problems else out
