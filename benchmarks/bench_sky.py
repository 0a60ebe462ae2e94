"""How fast sun and moon positions come for a season of sites, against a per-site PyEphem loop.

A full season: 100 sites x 225 nights at 5-minute steps (about 6.5 million
site-steps). A sample is checked against Skyfield evaluated per site and time;
PyEphem, looped over sites and times as a simple script would, is timed on a
subset and scaled per site-step.
"""

import datetime as dt
import resource
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from timing import repeats_for, timed  # noqa: E402

from auroraplan import sky  # noqa: E402

FIRST_NIGHT = dt.date(2026, 9, 1)
ZONE = "Europe/Oslo"
STEP_MIN = 5
# Accuracy asked of the fast path against per-site Skyfield, degrees.
SUN_TOL_DEG = 0.01
MOON_TOL_DEG = 0.02


def invented_sites(n: int, seed: int = 11):
    """Sites scattered over 66-71 N, 14-30 E, heights 0-600 m (a benchmark scenario)."""
    rng = np.random.default_rng(seed)
    return rng.uniform(66.0, 71.0, n), rng.uniform(14.0, 30.0, n), rng.uniform(0.0, 600.0, n)


def check_against_skyfield(lat, lon, h, times, track, samples=300, seed=5):
    """Largest altitude differences (sun, moon) from Skyfield topocentric altaz on a sample."""
    from skyfield.api import wgs84

    ts, eph = sky.load_ephemeris()
    rng = np.random.default_rng(seed)
    site_idx = rng.integers(0, lat.size, samples)
    time_idx = rng.integers(0, times.size, samples)
    when = [x.replace(tzinfo=dt.UTC) for x in times[time_idx].astype(dt.datetime)]
    t = ts.from_datetimes(when)
    worst = {"sun": 0.0, "moon": 0.0}
    for site in np.unique(site_idx):
        pick = site_idx == site
        place = eph["earth"] + wgs84.latlon(lat[site], lon[site], elevation_m=h[site])
        for body, alt in (("sun", track.sun_alt), ("moon", track.moon_alt)):
            ref, _, _ = place.at(t[pick]).observe(eph[body]).apparent().altaz()
            diff = np.abs(alt[site, time_idx[pick]] - ref.degrees).max()
            worst[body] = max(worst[body], float(diff))
    return worst


def pyephem_rate(lat, lon, h, times, n_sites=3, n_times=600):
    """Site-steps per second of a PyEphem loop over sites and times (sun and moon altitude)."""
    import ephem

    subset = times[:: max(1, times.size // n_times)][:n_times]
    dates = [ephem.Date(x) for x in subset.astype(dt.datetime)]
    sun, moon = ephem.Sun(), ephem.Moon()
    start = time.perf_counter()
    for i in range(n_sites):
        obs = ephem.Observer()
        obs.lat, obs.lon, obs.elevation = np.radians(lat[i]), np.radians(lon[i]), float(h[i])
        obs.pressure = 0.0
        for d in dates:
            obs.date = d
            sun.compute(obs)
            moon.compute(obs)
            _ = (sun.alt, moon.alt)
    return n_sites * len(dates) / (time.perf_counter() - start)


def skyfield_rate(lat, lon, h, times, n_sites=3):
    """Site-steps per second of Skyfield looped over sites, vectorised over the times.

    Each site gets its own topocentric position and one ``observe().apparent().altaz()``
    per body over the whole time array: the usual way to use Skyfield for a few sites.
    """
    from skyfield.api import wgs84

    ts, eph = sky.load_ephemeris()
    when = [x.replace(tzinfo=dt.UTC) for x in times.astype(dt.datetime)]
    t = ts.from_datetimes(when)
    start = time.perf_counter()
    for i in range(n_sites):
        place = eph["earth"] + wgs84.latlon(lat[i], lon[i], elevation_m=h[i])
        for body in ("sun", "moon"):
            place.at(t).observe(eph[body]).apparent().altaz()
    return n_sites * times.size / (time.perf_counter() - start)


def run(quick: bool = False) -> dict:
    """Time the season (median of 5 runs; baselines' rates the median of 5 each); return the
    figures (rates with their ranges, ratio, errors, memory)."""
    n_sites, nights = (20, 30) if quick else (100, 225)
    lat, lon, h = invented_sites(n_sites)
    times, _ = sky.night_times(FIRST_NIGHT, nights, ZONE, step_min=STEP_MIN)
    sky.load_ephemeris()  # reading the ephemeris file is not part of the work per season

    repeats = repeats_for(quick)
    runs, track = timed(lambda: sky.sun_moon_altaz(lat, lon, h, times), repeats)
    site_steps = n_sites * times.size
    rate = site_steps / runs.median

    worst = check_against_skyfield(lat, lon, h, times, track)
    pyephem = sorted(pyephem_rate(lat, lon, h, times) for _ in range(repeats))
    skyfield_loop = sorted(skyfield_rate(lat, lon, h, times) for _ in range(repeats))
    return {
        "sites": n_sites,
        "nights": nights,
        "site_steps": site_steps,
        **runs.fields(),
        "rate": rate,
        "pyephem_rate": pyephem[len(pyephem) // 2],
        "pyephem_rate_range": (pyephem[0], pyephem[-1]),
        "ratio": rate / pyephem[len(pyephem) // 2],
        "skyfield_rate": skyfield_loop[len(skyfield_loop) // 2],
        "skyfield_rate_range": (skyfield_loop[0], skyfield_loop[-1]),
        "max_sun_error_deg": worst["sun"],
        "max_moon_error_deg": worst["moon"],
        "peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
    }


def main(argv=None) -> int:
    quick = "--quick" in (argv if argv is not None else sys.argv[1:])
    r = run(quick=quick)
    print(
        f"{r['sites']} sites x {r['nights']} nights at {STEP_MIN} min: {r['site_steps']:,} site-steps"
    )
    print(f"fast path: {r['seconds']:.2f} s; PyEphem loop: {r['pyephem_rate']:,.0f} site-steps/s")
    print(
        f"largest difference from per-site Skyfield: sun {r['max_sun_error_deg']:.5f} deg "
        f"(limit {SUN_TOL_DEG}), moon {r['max_moon_error_deg']:.5f} deg (limit {MOON_TOL_DEG})"
    )
    print(f"peak memory {r['peak_rss_mb']:.0f} MB")
    ok = r["max_sun_error_deg"] <= SUN_TOL_DEG and r["max_moon_error_deg"] <= MOON_TOL_DEG
    if not ok:
        print("accuracy check FAILED")
    print(
        f"sky: {r['rate']:.0f} site-steps/s, {r['ratio']:.1f} times faster than a per-site PyEphem loop"
    )
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
