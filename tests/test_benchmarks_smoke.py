"""The benchmark's generated workspaces are ones the workspace loader accepts as they are."""

import datetime as dt
import sys
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))

from make_workspace import make_workspace, vehicles_for  # noqa: E402

from auroraplan.workspace import load_workspace  # noqa: E402

FIRST = dt.date(2027, 1, 11)


def test_generated_week_loads_without_problems_or_warnings(tmp_path):
    folder = make_workspace(tmp_path / "ws", n_sites=30, n_trips=8, first_night=FIRST, nights=7)
    ws = load_workspace(folder)
    assert len(ws.sites) == 30 and len(ws.trips) == 8
    assert ws.warnings == []
    assert ws.operator.vehicles == vehicles_for(8)
    lat = np.array([s.lat for s in ws.sites])
    lon = np.array([s.lon for s in ws.sites])
    assert lat.min() >= 68.5 and lat.max() <= 70.5
    assert lon.min() >= 16.0 and lon.max() <= 23.0
    assert any(s.horizon is not None for s in ws.sites)
    assert any(s.horizon is None for s in ws.sites)


def test_every_trip_has_an_evening_inside_the_week(tmp_path):
    ws = load_workspace(make_workspace(tmp_path, 10, 25, FIRST, nights=7, seed=3))
    week = {FIRST + dt.timedelta(days=i) for i in range(7)}
    assert all(week & set(t.nights()) for t in ws.trips)


def test_forecasts_cover_the_first_three_nights_for_every_site(tmp_path):
    ws = load_workspace(make_workspace(tmp_path, 12, 3, FIRST, nights=7))
    evening = pd.Timestamp("2027-01-11T12:00Z")
    last_morning = pd.Timestamp("2027-01-14T11:00Z")
    per_site = ws.clouds.to_frame().groupby("site")["time_utc"].agg(["min", "max", "count"])
    assert len(per_site) == 12
    assert (per_site["min"] == evening).all() and (per_site["max"] == last_morning).all()
    assert (per_site["count"] == 72).all()  # hourly, 3 x 24 hours
    blocks = ws.activity.to_frame()["start_utc"]
    assert blocks.min() <= evening and blocks.max() >= pd.Timestamp("2027-01-14T09:00Z")
    assert (blocks.diff().dropna() == pd.Timedelta(hours=3)).all()


def test_same_seed_same_files_and_no_forecast_files_when_left_out(tmp_path):
    a = make_workspace(tmp_path / "a", 5, 2, FIRST, 3, seed=9)
    b = make_workspace(tmp_path / "b", 5, 2, FIRST, 3, seed=9)
    for name in ("sites.geojson", "trips.csv", "clouds.csv", "activity.csv"):
        assert (a / name).read_bytes() == (b / name).read_bytes()
    bare = make_workspace(tmp_path / "bare", 5, 2, FIRST, 3, forecasts=False)
    assert not (bare / "clouds.csv").exists() and not (bare / "activity.csv").exists()
    assert len(load_workspace(bare).warnings) == 2


def test_figures_are_the_median_of_at_least_five_runs_with_their_spread():
    from timing import REPEATS, Runs, alternately, repeats_for

    runs = Runs((3.0, 1.0, 2.0, 10.0, 4.0))
    assert (runs.median, runs.low, runs.high) == (3.0, 1.0, 10.0)
    assert runs.fields("baseline_") == {"baseline_seconds": 3.0, "baseline_min_s": 1.0,
                                        "baseline_max_s": 10.0}
    assert runs.fields()["repeats"] == 5
    assert REPEATS >= 5 and repeats_for(False, 3) == REPEATS and repeats_for(True) == 1
    order = []
    a, b = alternately(lambda: order.append("a"), lambda: order.append("b"), 3)
    assert order == ["a", "b"] * 3 and len(a.seconds) == len(b.seconds) == 3
