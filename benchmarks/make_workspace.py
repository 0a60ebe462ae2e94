"""Writes a generated workspace of any size, so the commands can be timed on large inputs.

Everything written here is invented for benchmarking only: the sites are random
points in northern Norway (68.5-70.5 N, 16-23 E) with random horizons, trips,
Kp blocks and cloud cover. None of it describes a real place, group or forecast.
operator.toml is the demo workspace's, with the fleet and the forecast issue time
adjusted.

Usage::

    python benchmarks/make_workspace.py DIR --sites 50 --trips 6 --start 2027-01-11 --nights 7
"""

from __future__ import annotations

import argparse
import csv
import datetime as dt
import json
import re
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_sites"

LAT_RANGE = (68.5, 70.5)
LON_RANGE = (16.0, 23.0)
HEIGHT_RANGE_M = (0.0, 600.0)
DRIVE_RANGE_MIN = (10, 150)
CAPACITY_RANGE = (8, 60)
SKY_MAG_RANGE = (20.0, 21.9)
SHARE_WITH_HORIZON = 0.6
SHARE_CLOSED = 0.05
FORECAST_NIGHTS = 3
"""Nights covered by activity.csv and clouds.csv, as a short-range forecast would be."""

KP_TEXTS = ("0o", "1-", "1o", "1+", "2-", "2o", "2+", "3-", "3o", "3+", "4-", "4o", "4+",
            "5-", "5o", "6-", "G1", "G2")
CLEAR_BY_MONTH = (0.22, 0.24, 0.28, 0.3, 0.27, 0.22, 0.2, 0.22, 0.24, 0.22, 0.21, 0.2)
"""A coastal monthly clear-sky fraction, the same invented row as in demo_sites."""


def vehicles_for(n_trips: int) -> int:
    """Vans per night: enough that the fleet, not only the trips, limits the plan."""
    return max(1, min(100, (n_trips + 2) // 3))


def _operator_text(first_night: dt.date, n_trips: int) -> str:
    text = (DEMO / "operator.toml").read_text(encoding="utf-8")
    text = text.replace("# Invented operator for the auroraplan demo",
                        "# Generated for benchmarking only; invented like the demo")
    text = re.sub(r"(?m)^vehicles\s*=\s*\d+", f"vehicles = {vehicles_for(n_trips)}", text)
    text = re.sub(r'(?m)^issued_utc\s*=\s*"[^"]*"',
                  f'issued_utc = "{first_night.isoformat()}T00:00Z"', text)
    return text


def _horizon(rng) -> list:
    """A random horizon polyline: 5-9 azimuths, elevations 0-15 degrees, closed at 360."""
    n = int(rng.integers(5, 10))
    az = np.sort(rng.choice(np.arange(10, 350, 10), size=n - 1, replace=False))
    el = np.round(rng.uniform(0.0, 15.0, n), 1)
    points = [[0, float(el[0])]] + [[int(a), float(e)] for a, e in zip(az, el[1:], strict=True)]
    return points + [[360, float(el[0])]]


def site_names(n_sites: int) -> list[str]:
    width = max(3, len(str(n_sites)))
    return [f"Bench site {i:0{width}d}" for i in range(1, n_sites + 1)]


def _sites_geojson(n_sites: int, rng) -> tuple[dict, int]:
    lat = np.round(rng.uniform(*LAT_RANGE, n_sites), 4)
    lon = np.round(rng.uniform(*LON_RANGE, n_sites), 4)
    height = np.round(rng.uniform(*HEIGHT_RANGE_M, n_sites))
    drive = rng.integers(*DRIVE_RANGE_MIN, n_sites, endpoint=True)
    capacity = rng.integers(*CAPACITY_RANGE, n_sites, endpoint=True)
    sky_mag = np.round(rng.uniform(*SKY_MAG_RANGE, n_sites), 1)
    masked = rng.random(n_sites) < SHARE_WITH_HORIZON
    closed = rng.random(n_sites) < SHARE_CLOSED
    closed[0] = False  # at least one open site
    features = []
    for i, name in enumerate(site_names(n_sites)):
        props = {
            "name": name,
            "drive_min": int(drive[i]),
            "capacity": int(capacity[i]),
            "sky_mag": float(sky_mag[i]),
            "clear_by_month": list(CLEAR_BY_MONTH),
            "closed": bool(closed[i]),
            "notes": "generated for benchmarking",
        }
        if masked[i]:
            props["horizon"] = _horizon(rng)
        features.append({
            "type": "Feature",
            "geometry": {"type": "Point",
                         "coordinates": [float(lon[i]), float(lat[i]), float(height[i])]},
            "properties": props,
        })
    return {"type": "FeatureCollection", "features": features}, int(capacity[~closed].max())


def _trips_rows(n_trips: int, first_night: dt.date, nights: int, largest: int, rng):
    """Stays of 2-6 nights that overlap the nights asked for; some with a blocked evening."""
    rows = []
    for i in range(1, n_trips + 1):
        stay = int(rng.integers(2, 7))
        arrive = first_night + dt.timedelta(days=int(rng.integers(-stay + 1, nights)))
        depart = arrive + dt.timedelta(days=stay)
        blocked = ""
        if stay > 2 and rng.random() < 0.3:
            blocked = (arrive + dt.timedelta(days=int(rng.integers(0, stay)))).isoformat()
        free = stay - (1 if blocked else 0)
        rows.append({
            "trip": f"B{i:04d}",
            "group": f"Bench group {i}",
            "guests": int(rng.integers(2, min(16, largest) + 1)),
            "arrive": arrive.isoformat(),
            "depart": depart.isoformat(),
            "outings": int(rng.integers(1, free + 1)),
            "blocked": blocked,
        })
    return rows


def _forecast_hours(first_night: dt.date, step_h: int):
    """UTC times from 00 h of the first evening's date to noon after the last forecast night."""
    start = dt.datetime.combine(first_night, dt.time(0, 0))
    hours = 24 * FORECAST_NIGHTS + 12
    return [start + dt.timedelta(hours=h) for h in range(0, hours, step_h)]


def _activity_rows(first_night: dt.date, rng):
    """Kp blocks as a random walk over the forecast notations (thirds and G-scale)."""
    rows = []
    level = len(KP_TEXTS) // 3
    for when in _forecast_hours(first_night, 3):
        level = int(np.clip(level + rng.integers(-2, 3), 0, len(KP_TEXTS) - 1))
        rows.append({"start_utc": f"{when:%Y-%m-%dT%H:%MZ}", "kp": KP_TEXTS[level],
                     "kp_sd": f"{rng.uniform(0.5, 1.5):.1f}" if rng.random() < 0.2 else ""})
    return rows


def _write_clouds(path: Path, names, first_night: dt.date, rng) -> None:
    hours = [f"{t:%Y-%m-%dT%H:%MZ}" for t in _forecast_hours(first_night, 1)[12:]]
    cloud = np.clip(rng.normal(55, 35, (len(names), len(hours))), 0, 100).round().astype(int)
    with path.open("w", newline="", encoding="utf-8") as out:
        out.write("site,time_utc,cloud_pct\n")
        for name, row in zip(names, cloud, strict=True):
            out.writelines(f"{name},{h},{c}\n" for h, c in zip(hours, row, strict=True))


def _write_csv(path: Path, rows, columns) -> None:
    with path.open("w", newline="", encoding="utf-8") as out:
        writer = csv.DictWriter(out, fieldnames=columns, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)


def make_workspace(folder, n_sites: int, n_trips: int, first_night: dt.date, nights: int,
                   seed: int = 0, forecasts: bool = True) -> Path:
    """Write a generated workspace folder (invented data, for benchmarks only).

    Parameters
    ----------
    folder : str or Path
        Created if missing; the five workspace files in it are replaced.
    n_sites, n_trips : int
        Sites in sites.geojson and trips in trips.csv (at least 1 site).
    first_night : datetime.date
        Local date of the first evening.
    nights : int
        Nights the trips overlap.
    seed : int
        Seed of the random generator; the same arguments give the same files.
    forecasts : bool
        Write activity.csv (3-hour Kp blocks) and clouds.csv (hourly, every site) for
        the first three nights. Without them the commands fall back to climatology.

    Returns
    -------
    Path
        The folder.
    """
    if n_sites < 1 or n_trips < 0 or nights < 1:
        raise ValueError("need at least one site, no negative trips and at least one night")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    (folder / "operator.toml").write_text(_operator_text(first_night, n_trips), encoding="utf-8")
    collection, largest = _sites_geojson(n_sites, rng)
    (folder / "sites.geojson").write_text(json.dumps(collection), encoding="utf-8")
    _write_csv(folder / "trips.csv", _trips_rows(n_trips, first_night, nights, largest, rng),
               ("trip", "group", "guests", "arrive", "depart", "outings", "blocked"))
    for name in ("activity.csv", "clouds.csv"):
        (folder / name).unlink(missing_ok=True)
    if forecasts:
        _write_csv(folder / "activity.csv", _activity_rows(first_night, rng),
                   ("start_utc", "kp", "kp_sd"))
        _write_clouds(folder / "clouds.csv", site_names(n_sites), first_night, rng)
    return folder


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("folder")
    parser.add_argument("--sites", type=int, default=50)
    parser.add_argument("--trips", type=int, default=6)
    parser.add_argument("--start", type=dt.date.fromisoformat, default=dt.date(2027, 1, 11),
                        help="first night, YYYY-MM-DD")
    parser.add_argument("--nights", type=int, default=7)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--no-forecasts", action="store_true",
                        help="leave out activity.csv and clouds.csv")
    args = parser.parse_args(argv)
    try:
        folder = make_workspace(args.folder, args.sites, args.trips, args.start, args.nights,
                                seed=args.seed, forecasts=not args.no_forecasts)
    except ValueError as exc:
        parser.error(str(exc))
    print(f"wrote {folder}: {args.sites} sites, {args.trips} trips from {args.start}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
