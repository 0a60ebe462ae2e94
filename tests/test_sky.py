"""Sun, moon and darkness at aurora latitudes, checked against outside almanacs."""

import datetime as dt
import json
import subprocess
import sys
import zoneinfo

import numpy as np
import pytest
from ephem_reference import pyephem_dark_window

from auroraplan import nights, sky

# High-latitude places where tours run: (name, lat, lon, height m, IANA zone).
PLACES = [
    ("Tromsø", 69.65, 18.96, 10.0, "Europe/Oslo"),
    ("Fairbanks", 64.84, -147.72, 140.0, "America/Anchorage"),
    ("Rovaniemi", 66.50, 25.73, 100.0, "Europe/Helsinki"),
    ("Yellowknife", 62.45, -114.37, 200.0, "America/Edmonton"),
]

# 2024 times, inside the Earth-orientation tables bundled with astropy.
TIMES_2024 = np.datetime64("2024-01-03T05:00:00", "s") + np.arange(16) * np.timedelta64(
    555_557, "s"
)


def _lat_lon_h():
    lat = np.array([p[1] for p in PLACES])
    lon = np.array([p[2] for p in PLACES])
    h = np.array([p[3] for p in PLACES])
    return lat, lon, h


@pytest.fixture(scope="module")
def astropy_altaz():
    """Sun and moon altitude from astropy (AltAz, refraction off, builtin ephemeris)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body, solar_system_ephemeris
    from astropy.time import Time
    from astropy.utils import iers

    iers.conf.auto_download = False
    when = Time(TIMES_2024.astype(str), scale="utc")
    out = {"sun": [], "moon": []}
    with solar_system_ephemeris.set("builtin"):
        for _, lat, lon, h, _ in PLACES:
            place = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.m)
            frame = AltAz(obstime=when, location=place, pressure=0 * u.hPa)
            for body in out:
                out[body].append(get_body(body, when, place).transform_to(frame).alt.deg)
    return {k: np.array(v) for k, v in out.items()}


def test_sun_altitude_matches_astropy(astropy_altaz):
    # Source: astropy AltAz with pressure 0 (no refraction), builtin ephemeris.
    track = sky.sun_moon_altaz(*_lat_lon_h(), TIMES_2024)
    assert track.sun_alt.shape == (len(PLACES), TIMES_2024.size)
    np.testing.assert_allclose(track.sun_alt, astropy_altaz["sun"], atol=0.02)


def test_moon_altitude_with_parallax_matches_astropy(astropy_altaz):
    # Source: astropy AltAz (topocentric, so the moon's ~1° parallax is in it).
    track = sky.sun_moon_altaz(*_lat_lon_h(), TIMES_2024)
    np.testing.assert_allclose(track.moon_alt, astropy_altaz["moon"], atol=0.05)


# Nights across the season that have a clean dusk and dawn at every place for
# each level (the sun's lowest point at least a degree below the level).
TWILIGHT_NIGHTS = {
    "nautical": [
        dt.date(2026, 9, 20),
        dt.date(2026, 11, 14),
        dt.date(2027, 1, 9),
        dt.date(2027, 3, 6),
    ],
    "astronomical": [dt.date(2026, 10, 10), dt.date(2026, 12, 5), dt.date(2027, 2, 12)],
}


@pytest.mark.parametrize("level", ["nautical", "astronomical"])
@pytest.mark.parametrize("place", PLACES[:3], ids=[p[0] for p in PLACES[:3]])
def test_dusk_and_dawn_match_pyephem_within_a_minute(place, level):
    # Source: PyEphem next_setting/next_rising, horizon -12/-18, use_center, pressure 0.
    name, lat, lon, _, tz = place
    horizon = f"{sky.DARKNESS_DEG[level]:.0f}"
    for day in TWILIGHT_NIGHTS[level]:
        (night,) = sky.darkness_windows(lat, lon, day, 1, tz, level)
        dusk, dawn = pyephem_dark_window(lat, lon, day, tz, horizon)
        start = dt.datetime.fromisoformat(night["dark_start"])
        end = dt.datetime.fromisoformat(night["dark_end"])
        assert abs((start - dusk).total_seconds()) <= 60, (name, day, "dusk")
        assert abs((end - dawn).total_seconds()) <= 60, (name, day, "dawn")
        assert night["dark_hours"] == pytest.approx((end - start).total_seconds() / 3600, abs=0.02)


def _minutes_of_local_day(day, tz):
    start = dt.datetime(day.year, day.month, day.day, tzinfo=zoneinfo.ZoneInfo(tz))
    first = np.datetime64(start.astimezone(dt.UTC).replace(tzinfo=None), "s")
    return first + np.arange(24 * 60) * np.timedelta64(60, "s")


def test_tromso_polar_night_and_midnight_sun():
    # Common practice (no source): at Tromsø the sun does not rise on 21 December
    # and does not set on 21 June.
    tz = "Europe/Oslo"
    winter = sky.sun_moon_altaz(
        [69.65], [18.96], [0], _minutes_of_local_day(dt.date(2026, 12, 21), tz)
    )
    summer = sky.sun_moon_altaz(
        [69.65], [18.96], [0], _minutes_of_local_day(dt.date(2027, 6, 21), tz)
    )
    assert winter.sun_alt.max() < 0.0
    assert summer.sun_alt.min() > 0.0


def test_moon_illumination_matches_pyephem():
    # Source: PyEphem Moon().moon_phase (geocentric illuminated fraction).
    import ephem

    times = np.datetime64("2027-01-01T00:00:00", "s") + np.arange(40) * np.timedelta64(77_777, "s")
    track = sky.sun_moon_altaz([69.65], [18.96], [0], times)
    expected = []
    for t in times.astype(dt.datetime):
        moon = ephem.Moon()
        moon.compute(ephem.Date(t))
        expected.append(moon.moon_phase)
    np.testing.assert_allclose(track.moon_illumination, expected, atol=0.01)
    # phase angle and fraction agree with k = (1 + cos i) / 2 (Meeus 1998, eq. 48.1)
    np.testing.assert_allclose(
        track.moon_illumination, (1 + np.cos(np.radians(track.moon_phase_angle_deg))) / 2
    )


def test_sunlight_takes_about_eight_point_three_minutes():
    # Fact of the trade: light from the sun reaches the Earth in about 8.3 minutes.
    ts, eph = sky.load_ephemeris()
    t = ts.utc(2027, np.arange(1, 13), 1)
    minutes = eph["earth"].at(t).observe(eph["sun"]).light_time * 24 * 60
    np.testing.assert_allclose(minutes, 8.3, atol=0.2)


def test_coarse_grid_interpolation_error_is_tiny():
    # Source: Skyfield itself, evaluated at every time without the coarse grid.
    rng = np.random.default_rng(7)
    seconds = np.sort(rng.uniform(1.80e9, 1.80e9 + 40 * 86400, 300))
    geo = sky._Geocentre(seconds)
    sun_i, moon_i, gast_i = geo.at(seconds)
    sun_d, moon_d, gast_d = sky._geocentric_true_of_date(seconds)

    def angle_deg(a, b):
        cos = np.einsum("ij,ij->i", a, b) / np.linalg.norm(a, axis=1) / np.linalg.norm(b, axis=1)
        return np.degrees(np.arccos(np.clip(cos, -1, 1)))

    assert angle_deg(sun_i, sun_d).max() < 1e-5
    assert angle_deg(moon_i, moon_d).max() < 1e-4
    assert np.abs(np.linalg.norm(moon_i, axis=1) - np.linalg.norm(moon_d, axis=1)).max() < 0.1  # km
    gast_error_deg = np.degrees(np.angle(np.exp(1j * (gast_i - gast_d))))
    assert np.abs(gast_error_deg).max() < 1e-6


def test_site_positions_match_skyfield_topocentric():
    # Source: Skyfield wgs84 topocentric observe().apparent().altaz(), per site and time.
    from skyfield.api import wgs84

    ts, eph = sky.load_ephemeris()
    lat, lon, h = _lat_lon_h()
    times = np.datetime64("2026-11-01T00:00:00", "s") + np.arange(60) * np.timedelta64(9_876, "s")
    track = sky.sun_moon_altaz(lat, lon, h, times)
    t = ts.from_datetimes([x.replace(tzinfo=dt.UTC) for x in times.astype(dt.datetime)])
    for i in range(len(PLACES)):
        site = eph["earth"] + wgs84.latlon(lat[i], lon[i], elevation_m=h[i])
        for body, alt, az in (
            ("sun", track.sun_alt, track.sun_az),
            ("moon", track.moon_alt, track.moon_az),
        ):
            a, z, _ = site.at(t).observe(eph[body]).apparent().altaz()
            np.testing.assert_allclose(alt[i], a.degrees, atol=0.003)
            dz = (az[i] - z.degrees + 180) % 360 - 180
            assert np.abs(dz * np.cos(np.radians(a.degrees))).max() < 0.003


def test_nights_run_local_noon_to_noon_across_clock_changes():
    # Source: IANA tz database: Norway leaves summer time on 2026-10-25 and starts
    # it on 2027-03-28, so those nights last 25 and 23 hours.
    tz = zoneinfo.ZoneInfo("Europe/Oslo")
    for first, hours in (
        (dt.date(2026, 10, 24), 25),
        (dt.date(2027, 3, 27), 23),
        (dt.date(2027, 1, 5), 24),
    ):
        times, index = nights.night_times(first, 1, "Europe/Oslo", step_min=10)
        assert times.size == hours * 6
        assert set(index) == {0}
        start = times[0].astype(dt.datetime).replace(tzinfo=dt.UTC).astimezone(tz)
        assert (start.date(), start.hour, start.minute) == (first, 12, 0)


def test_night_index_counts_nights():
    times, index = nights.night_times(dt.date(2027, 1, 1), 3, "America/Anchorage", step_min=30)
    assert times.size == 3 * 48
    assert list(np.bincount(index)) == [48, 48, 48]
    assert np.all(np.diff(times) == np.timedelta64(30 * 60, "s"))


def test_polar_night_is_dark_from_noon_to_noon():
    # Convention: a night dark throughout runs from that day's local noon to the next.
    # Longyearbyen at 78.2 N: the noon sun on 21 December is near -11.7°, below civil -6°.
    (night,) = sky.darkness_windows(
        78.22, 15.65, dt.date(2026, 12, 21), 1, "Arctic/Longyearbyen", "civil"
    )
    assert night["dark_start"] == "2026-12-21T12:00+01:00"
    assert night["dark_end"] == "2026-12-22T12:00+01:00"
    assert night["dark_hours"] == 24.0
    assert 0.0 <= night["moon_up_dark_hours"] <= 24.0


def test_midnight_sun_has_no_dark_time():
    (night,) = sky.darkness_windows(69.65, 18.96, dt.date(2027, 6, 21), 1, "Europe/Oslo")
    assert night["dark_start"] is None and night["dark_end"] is None
    assert night["dark_hours"] == 0.0 and night["moon_up_dark_hours"] == 0.0


def test_moon_up_hours_never_exceed_dark_hours():
    nights = sky.darkness_windows(64.84, -147.72, dt.date(2026, 12, 1), 30, "America/Anchorage")
    assert all(0 <= n["moon_up_dark_hours"] <= n["dark_hours"] + 1e-9 for n in nights)
    # over a month the moon is up for roughly half of the dark time (a lunation is ~29.5 days)
    share = sum(n["moon_up_dark_hours"] for n in nights) / sum(n["dark_hours"] for n in nights)
    assert 0.3 < share < 0.7


def test_deeper_darkness_is_shorter():
    hours = {
        level: sky.darkness_windows(66.5, 25.73, dt.date(2026, 11, 1), 1, "Europe/Helsinki", level)[
            0
        ]["dark_hours"]
        for level in sky.DARKNESS_DEG
    }
    assert hours["civil"] > hours["nautical"] > hours["astronomical"] > 0


# --- the command line ------------------------------------------------------------


def run_sky(*argv):
    return subprocess.run(
        [sys.executable, "-m", "auroraplan.cli", "sky", *argv], capture_output=True, text=True
    )


def test_cli_three_winter_nights_at_tromso():
    result = run_sky(
        "--lat", "69.65", "--lon", "18.96", "--date", "2027-01-10", "--nights", "3", "--json"
    )
    assert result.returncode == 0, result.stderr
    out = json.loads(result.stdout)
    assert out["timezone"] == "Europe/Oslo" and out["darkness"] == "nautical"
    assert [n["date"] for n in out["nights"]] == ["2027-01-10", "2027-01-11", "2027-01-12"]
    for night in out["nights"]:
        assert night["dark_hours"] > 14
        assert 0 <= night["moon_illumination"] <= 1
        assert 0 <= night["moon_up_dark_hours"] <= night["dark_hours"]


def test_cli_midsummer_at_tromso_has_no_darkness():
    result = run_sky("--lat", "69.65", "--lon", "18.96", "--date", "2027-06-21", "--json")
    assert result.returncode == 0, result.stderr
    (night,) = json.loads(result.stdout)["nights"]
    assert night["dark_hours"] == 0 and night["dark_start"] is None


def test_cli_table_in_local_time():
    result = run_sky("--lat", "69.65", "--lon", "18.96", "--date", "2027-01-10", "--tz", "UTC")
    assert result.returncode == 0, result.stderr
    assert "15:07" in result.stdout  # 16:07 in Oslo is 15:07 UTC


@pytest.mark.parametrize(
    "argv, named",
    [
        (["--lat", "95", "--lon", "18", "--date", "2027-01-10"], "--lat"),
        (["--lat", "69", "--lon", "18", "--date", "2027-13-01"], "--date"),
        (["--lat", "69", "--lon", "18", "--date", "2027-01-10", "--tz", "Mars/Base"], "--tz"),
        (["--lat", "69", "--lon", "18", "--date", "2027-01-10", "--nights", "0"], "--nights"),
        (["--lat", "69", "--lon", "18", "--date", "2070-01-10"], "ephemeris"),
    ],
)
def test_cli_bad_input_is_one_line_and_exit_2(argv, named):
    result = run_sky(*argv)
    assert result.returncode == 2
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and named in lines[0]
    assert "Traceback" not in result.stderr
