"""Small invented workspaces written by the tests, and the night's chance recomputed from hour
rows: helpers shared by several test files (not tests themselves)."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path


def make_workspace(folder, *, base, tz, sites, trips=(), kp=None, first_block=None, blocks=0,
                   darkness="nautical", extra_toml="", drive_min=20, clear=0.3):
    """A small workspace: sites are (name, lat, lon, closed); trips (id, arrive, depart),
    each wanting two outings; activity.csv holds ``blocks`` 3-hour blocks of one Kp from
    ``first_block`` (UTC). Every site is ``drive_min`` from the base with clear skies a
    ``clear`` share of the time in every month."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "operator.toml").write_text(
        f'[base]\nname = "Test base"\nlat = {base[0]}\nlon = {base[1]}\ntimezone = "{tz}"\n'
        '[operator]\nname = "Invented test operator"\n[fleet]\nvehicles = 2\n'
        f'[viewing]\ndarkness = "{darkness}"\n{extra_toml}')
    features = [{"type": "Feature", "geometry": {"type": "Point", "coordinates": [lon, lat, 0]},
                 "properties": {"name": name, "drive_min": drive_min, "capacity": 30,
                                "closed": closed, "clear_by_month": [clear] * 12}}
                for name, lat, lon, closed in sites]
    (folder / "sites.geojson").write_text(
        json.dumps({"type": "FeatureCollection", "features": features}))
    rows = ["trip,group,guests,arrive,depart,outings,blocked"]
    rows += [f"{t},Group {t},4,{a},{d},2," for t, a, d in trips]
    (folder / "trips.csv").write_text("\n".join(rows) + "\n")
    if kp is not None:
        t0 = dt.datetime.fromisoformat(first_block)
        lines = ["start_utc,kp,kp_sd"] + [
            f"{(t0 + dt.timedelta(hours=3 * i)):%Y-%m-%dT%H:%MZ},{kp}," for i in range(blocks)]
        (folder / "activity.csv").write_text("\n".join(lines) + "\n")
    return folder


def night_from_hours(hours):
    """The night's chance recomputed from the hour rows by its definition: cloud one weather
    state through the night (hours coupled comonotonically, clearest first), displays
    independent from hour to hour (Notes of chance.p_display_seen)."""
    rows = sorted(hours, key=lambda h: -h["p_clear"])
    clear = [h["p_clear"] for h in rows] + [0.0]
    total, missed = 0.0, 1.0
    for k, h in enumerate(rows):
        missed *= 1.0 - h["chance_if_clear"]
        total += (clear[k] - clear[k + 1]) * (1.0 - missed)
    return total
