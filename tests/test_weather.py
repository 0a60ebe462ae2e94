"""P(clear sky) per site: hourly cloud forecast, else the site's month, else a default."""

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from auroraplan.weather import DEFAULT_CLEAR, clear_probability, cloud_at, local_month_index
from auroraplan.workspace import Site

JANUARY = (0.25, 0.3, 0.35, 0.4, 0.35, 0.3, 0.25, 0.25, 0.3, 0.3, 0.25, 0.2)


def site(name, lon=19.0, clear_by_month=JANUARY):
    return Site(name=name, lat=69.6, lon=lon, clear_by_month=clear_by_month)


def clouds(rows):
    return pd.DataFrame({
        "site": [r[0] for r in rows],
        "time_utc": pd.to_datetime([r[1] for r in rows], utc=True),
        "cloud_pct": [float(r[2]) for r in rows],
    })


def utc(*texts):
    return np.array(texts, dtype="datetime64[s]")


def seconds(*texts):
    return utc(*texts).astype(np.int64)


# --- interpolation in time, hand-checked -------------------------------------------------


def test_cloud_between_two_hours_is_linear():
    hours = seconds("2027-01-12T10:00", "2027-01-12T11:00")
    got = cloud_at(seconds("2027-01-12T10:00", "2027-01-12T10:15", "2027-01-12T10:40"),
                   hours, np.array([40.0, 80.0]))
    # by hand: 40 + 40 * 15/60 = 50; 40 + 40 * 40/60 = 66.67
    np.testing.assert_allclose(got, [40.0, 50.0, 200 / 3])


def test_cloud_is_held_at_most_an_hour_past_either_end_never_sloped():
    hours = seconds("2027-01-12T10:00", "2027-01-12T11:00")
    got = cloud_at(seconds("2027-01-12T08:59", "2027-01-12T09:30", "2027-01-12T11:30",
                           "2027-01-12T12:00", "2027-01-12T12:01"),
                   hours, np.array([40.0, 80.0]))
    assert np.isnan(got[0]) and np.isnan(got[4])
    np.testing.assert_allclose(got[1:4], [40.0, 80.0, 80.0])


def test_a_three_hourly_forecast_is_bridged_hour_by_hour():
    # 3-hourly steps, as many open-data services issue them: the hours between are linear
    hours = seconds("2027-01-12T09:00", "2027-01-12T12:00")
    got = cloud_at(seconds("2027-01-12T10:00", "2027-01-12T11:00"), hours, np.array([0.0, 90.0]))
    np.testing.assert_allclose(got, [30.0, 60.0])  # by hand: 0 + 90/3, 0 + 2 * 90/3


def test_a_gap_longer_than_the_limit_is_held_an_hour_each_side_and_unknown_between():
    hours = seconds("2027-01-12T10:00", "2027-01-12T17:00")  # 7 h > the default 6 h
    got = cloud_at(seconds("2027-01-12T11:00", "2027-01-12T13:30", "2027-01-12T16:00"),
                   hours, np.array([10.0, 70.0]))
    assert got[0] == pytest.approx(10.0) and got[2] == pytest.approx(70.0)
    assert np.isnan(got[1])
    # the same gap is bridged when the operator allows 8 h: 10 + 60 * 3.5/7 = 40
    assert cloud_at(seconds("2027-01-12T13:30"), hours, np.array([10.0, 70.0]),
                    max_gap_h=8.0)[0] == pytest.approx(40.0)


def test_a_three_hourly_clear_file_gives_steady_hourly_chances():
    # an all-clear 3-hourly forecast must not dip to climatology between its steps
    sites = [site("Open Fell")]
    steps = [f"2027-01-12T{h:02d}:00Z" for h in (15, 18, 21, 0)]
    steps[-1] = "2027-01-13T00:00Z"
    df = clouds([("Open Fell", t, 0) for t in steps])
    times = np.arange(np.datetime64("2027-01-12T15:00"), np.datetime64("2027-01-13T00:00"),
                      np.timedelta64(1, "h")).astype("datetime64[s]")
    p, cloud, _ = clear_probability(sites, df, times)
    np.testing.assert_allclose(p, 1.0)
    np.testing.assert_allclose(cloud, 0.0)


def test_clear_chance_is_the_cloud_free_fraction():
    sites = [site("Open Fell")]
    df = clouds([("Open Fell", "2027-01-12T18:00Z", 20), ("Open Fell", "2027-01-12T19:00Z", 60)])
    p, cloud, warnings = clear_probability(sites, df, utc("2027-01-12T18:30"))
    assert cloud[0, 0] == pytest.approx(40.0)
    assert p[0, 0] == pytest.approx(0.6)
    assert warnings == []


# --- the fallback chain ------------------------------------------------------------------


def test_without_forecast_the_sites_month_is_used_then_the_default_with_a_warning():
    sites = [site("Forecast Point"), site("Climate Only"), site("Unknown Sky", clear_by_month=None)]
    df = clouds([("Forecast Point", "2027-01-12T18:00Z", 90),
                 ("Forecast Point", "2027-01-12T19:00Z", 90)])
    times = utc("2027-01-12T18:00", "2027-01-12T23:00")
    p, cloud, warnings = clear_probability(sites, df, times)
    assert p.shape == cloud.shape == (3, 2)
    np.testing.assert_allclose(p[0], [0.1, JANUARY[0]])  # forecast, then past its reach
    np.testing.assert_allclose(p[1], [JANUARY[0], JANUARY[0]])
    np.testing.assert_allclose(p[2], [DEFAULT_CLEAR, DEFAULT_CLEAR])
    assert np.isnan(cloud[1:]).all() and np.isnan(cloud[0, 1])
    assert len(warnings) == 1 and "'Unknown Sky'" in warnings[0]


def test_a_site_with_a_forecast_everywhere_needs_no_climatology():
    sites = [site("Covered", clear_by_month=None)]
    df = clouds([("Covered", "2027-01-12T18:00Z", 30), ("Covered", "2027-01-12T19:00Z", 30)])
    p, _, warnings = clear_probability(sites, df, utc("2027-01-12T18:10", "2027-01-12T18:50"))
    np.testing.assert_allclose(p, [[0.7, 0.7]])
    assert warnings == []


def test_climatology_follows_the_local_month_not_the_utc_month():
    # 31 Jan 23:30 UTC is 1 Feb 00:30 in Oslo (UTC+1 in winter; IANA tz database)
    times = utc("2027-01-31T22:30", "2027-01-31T23:30")
    sites = [site("Fjord", lon=19.0)]
    p, _, _ = clear_probability(sites, None, times, tz="Europe/Oslo")
    np.testing.assert_allclose(p, [[JANUARY[0], JANUARY[1]]])
    # without a zone: mean solar time, 19 E is UTC + 1 h 16 min: same months here
    p_solar, _, _ = clear_probability(sites, None, times)
    np.testing.assert_allclose(p_solar, p)


def test_local_month_at_a_western_longitude():
    # 1 Feb 03:00 UTC at 150 W is 31 Jan 17:00 mean solar time
    months = local_month_index([-150.0, 0.0], utc("2027-02-01T03:00"))
    assert months.tolist() == [[0], [1]]


def test_demo_storm_night_is_clearer_inland(demo_dir):
    from auroraplan.workspace import load_workspace

    ws = load_workspace(demo_dir)
    times = np.arange(np.datetime64("2027-01-12T19:00"), np.datetime64("2027-01-13T03:00"),
                      np.timedelta64(10, "m")).astype("datetime64[s]")
    p, cloud, warnings = clear_probability(ws.sites, ws.clouds, times, tz=ws.operator.timezone)
    assert not np.isnan(cloud).any() and warnings == []
    by_name = {s.name: i for i, s in enumerate(ws.sites)}
    assert p[by_name["Delta Flats"]].mean() > 0.7
    assert p[by_name["Sound Bay"]].mean() < 0.2
    # every value lies between two forecast hours of that site
    frame = ws.clouds.to_frame()
    raw = frame[frame.site == "Delta Flats"].set_index("time_utc")["cloud_pct"]
    at_2210 = p[by_name["Delta Flats"], 19]  # 22:10Z
    lo, hi = sorted(raw[["2027-01-12T22:00Z", "2027-01-12T23:00Z"]].to_numpy())
    assert 1 - hi / 100 <= at_2210 <= 1 - lo / 100


def test_only_the_rows_near_the_nights_asked_for_are_used_and_give_the_same_cloud():
    # Reference: cloud_at on every row of each site's forecast (the whole file), against
    # cloud_grid, which keeps only the rows within the longest bridged gap of the nights;
    # also a pandas frame in shuffled row order, which cloud_grid sorts itself.
    from auroraplan.nights import night_times
    from auroraplan.weather import cloud_at, cloud_grid
    from auroraplan.workspace import load_workspace

    ws = load_workspace(Path(__file__).resolve().parents[1] / "demo_sites")
    times, _ = night_times(dt.date(2027, 1, 13), 2, ws.operator.timezone, 10)
    grid = cloud_grid(ws.sites, ws.clouds, times, tz=ws.operator.timezone)
    shuffled = ws.clouds.to_frame().sample(frac=1.0, random_state=3)
    again = cloud_grid(ws.sites, shuffled, times, tz=ws.operator.timezone)
    np.testing.assert_array_equal(again.cloud_pct, grid.cloud_pct)
    seconds = times.astype("datetime64[s]").astype(np.int64)
    for i, site in enumerate(ws.sites):
        rows = ws.clouds["site"] == site.name
        expected = cloud_at(seconds, ws.clouds["time_utc"][rows].astype(np.int64),
                            ws.clouds["cloud_pct"][rows])
        np.testing.assert_array_equal(grid.cloud_pct[i], expected, err_msg=site.name)
    assert np.isfinite(grid.cloud_pct).any() and np.isnan(grid.cloud_pct).any()
