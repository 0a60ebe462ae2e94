"""The drag-based model of CME arrival, and the `arrival` command a tour operator runs."""

import datetime as dt
import json
import subprocess
import sys

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from auroraplan import arrival
from auroraplan.errors import InputError

LAUNCH = dt.datetime(2027, 1, 10, 12, 0, tzinfo=dt.UTC)


def numerical_transit_h(v0, gamma, w):
    """Integrate dv/dt = −γ (v − w)|v − w| from 20 R☉ to 1 AU (Vršnak et al. 2013, eq. 1)."""

    def motion(_t, y):
        r, v = y
        return [v, -gamma * (v - w) * abs(v - w)]

    def at_1au(_t, y):
        return y[0] - arrival.AU_KM

    at_1au.terminal = True
    solved = solve_ivp(
        motion, (0, 30 * 86400), [arrival.START_DISTANCE_KM, v0], events=at_1au,
        rtol=1e-10, atol=1e-3, max_step=3600,
    )
    return solved.t_events[0][0] / 3600.0


@pytest.mark.parametrize(
    "v0, gamma, w",
    [(1000, 0.2e-7, 400), (2500, 2.0e-7, 300), (300, 1.0e-7, 500), (450, 0.5e-7, 450)],
)
def test_closed_form_agrees_with_numerical_integration(v0, gamma, w):
    # scipy solve_ivp of the drag equation; decelerating, accelerating and v0 = w cases.
    analytic = arrival.dbm_transit_s(v0, gamma, w) / 3600.0
    assert analytic == pytest.approx(numerical_transit_h(v0, gamma, w), abs=0.5)


def test_speed_and_distance_are_consistent():
    # v(t) must be the time derivative of r(t) (central differences, 1 s apart).
    t = np.linspace(1, 3 * 86400, 7)
    v = arrival.dbm_speed_km_s(t, 1500, 1e-7, 400)
    r_plus, r_minus = (arrival.dbm_distance_km(t + s, 1500, 1e-7, 400) for s in (0.5, -0.5))
    np.testing.assert_allclose(r_plus - r_minus, v, rtol=1e-6)
    assert arrival.dbm_distance_km(0.0, 1500, 1e-7, 400) == pytest.approx(20 * 695_700.0)
    assert np.all(np.diff(v) < 0) and v[-1] > 400  # a fast CME slows toward the wind


def test_a_1000_km_s_cme_arrives_in_one_to_three_days():
    # Fact of the trade: fast CMEs (~1000 km/s) reach Earth in 1–3 days.
    hours = arrival.dbm_transit_s(1000, 0.2e-7, 400) / 3600.0
    assert 24 <= hours <= 72


def test_faster_launches_arrive_sooner():
    speeds = np.linspace(150, 4000, 40)
    transit = arrival.dbm_transit_s(speeds, 0.2e-7, 450)
    assert np.all(np.diff(transit) < 0)


@pytest.mark.parametrize("speed", [150, 400, 800, 1500, 3000])
def test_window_contains_the_likely_arrival(speed):
    window = arrival.arrival_window(LAUNCH, speed)
    assert window["earliest"] <= window["arrival"] <= window["latest"]
    assert window["earliest_hours"] <= window["transit_hours"] <= window["latest_hours"]
    assert window["arrival"] - LAUNCH == pytest.approx(
        dt.timedelta(hours=window["transit_hours"]), abs=dt.timedelta(minutes=1)
    )


def test_window_corners_are_the_published_parameter_extremes():
    # Earliest: lowest drag and fastest wind; latest: strongest drag and slowest wind
    # (for a CME faster than the wind), per the ranges of Vršnak et al. (2013).
    window = arrival.arrival_window(LAUNCH, 1200)
    g, w = arrival.GAMMA_PER_KM, arrival.WIND_KM_S
    assert window["earliest_hours"] == pytest.approx(
        arrival.dbm_transit_s(1200, g["low"], w["high"]) / 3600, abs=0.01
    )
    assert window["latest_hours"] == pytest.approx(
        arrival.dbm_transit_s(1200, g["high"], w["low"]) / 3600, abs=0.01
    )


@pytest.mark.parametrize("speed", [50, 99.9, 5001, 10000, float("nan")])
def test_speeds_outside_the_model_range_are_refused(speed):
    with pytest.raises(InputError, match="--speed"):
        arrival.arrival_window(LAUNCH, speed)


def test_nights_are_local_noon_to_noon_dates():
    # A window from 10:00 to 14:00 local touches the night before (until noon) and
    # the night of the same date: Europe/Oslo is UTC+1 in January.
    start = dt.datetime(2027, 1, 12, 9, 0, tzinfo=dt.UTC)
    end = dt.datetime(2027, 1, 12, 13, 0, tzinfo=dt.UTC)
    nights = arrival.nights_touched(start, end, "Europe/Oslo")
    assert [n["date"] for n in nights] == ["2027-01-11", "2027-01-12"]
    assert [n["window_hours"] for n in nights] == [2.0, 2.0]


def test_dark_overlap_uses_the_darkness_windows():
    darkness = [
        {"date": "2027-01-11", "dark_start": "2027-01-11T16:30+01:00",
         "dark_end": "2027-01-12T07:30+01:00"},
        {"date": "2027-01-12", "dark_start": None, "dark_end": None},
    ]
    start = dt.datetime(2027, 1, 12, 0, 0, tzinfo=dt.UTC)
    end = dt.datetime(2027, 1, 12, 18, 0, tzinfo=dt.UTC)
    nights = arrival.nights_touched(start, end, "Europe/Oslo", darkness)
    assert nights[0]["dark_overlap_hours"] == pytest.approx(6.5)  # 01:00–07:30 local
    assert nights[1]["dark_overlap_hours"] == 0.0 and nights[1]["dark_start"] is None


def run_cli(*argv):
    return subprocess.run(
        [sys.executable, "-m", "auroraplan.cli", "arrival", *argv], capture_output=True, text=True
    )


def test_arrival_command_json():
    result = run_cli("--launch", "2027-01-10T12:00Z", "--speed", "1000", "--json")
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    assert 24 <= report["transit_hours"] <= 72
    for field in ("arrival", "earliest", "latest"):
        dt.datetime.fromisoformat(report[field])
    assert "Vršnak" in report["model"]["citation"]
    assert report["nights"] and "uncertain" in report["note"]


def test_arrival_command_screen_shows_local_times_and_the_caveat():
    result = run_cli("--launch", "2027-01-10T12:00Z", "--speed", "1000", "--tz", "Europe/Oslo")
    assert result.returncode == 0, result.stderr
    assert "CET" in result.stdout and "uncertain" in result.stdout


@pytest.mark.parametrize(
    "argv, words",
    [
        (["--launch", "2027-01-10T12:00Z", "--speed", "50"], "--speed 50"),
        (["--launch", "2027-01-10T12:00Z", "--speed", "10000"], "--speed 10000"),
        (["--launch", "yesterday", "--speed", "800"], "ISO 8601"),
        (["--launch", "2027-01-10T12:00Z", "--speed", "fast"], "--speed"),
    ],
)
def test_arrival_command_bad_input_is_one_line_and_exit_2(argv, words):
    result = run_cli(*argv)
    assert result.returncode == 2
    assert len(result.stderr.strip().splitlines()) == 1
    assert words in result.stderr and "Traceback" not in result.stderr
    assert result.stdout == ""


def test_arrival_command_with_a_workspace_lists_dark_hours(monkeypatch, capsys):
    # The base's zone and darkness come from the workspace and sky.darkness_windows
    # (replaced here by stand-ins so that the wiring alone is checked).
    import types

    import auroraplan.sky
    import auroraplan.workspace
    from auroraplan.cli import main
    from auroraplan.settings import Settings

    operator = types.SimpleNamespace(
        base_name="Base", base_lat=69.6, base_lon=18.9, timezone="Europe/Oslo",
    )
    monkeypatch.setattr(
        auroraplan.workspace, "load_workspace",
        lambda path, forecasts=True: types.SimpleNamespace(operator=operator, settings=Settings()),
    )
    asked = {}

    def fake_darkness(lat, lon, first_night, nights, tz, level="nautical"):
        asked.update(lat=lat, first=first_night, nights=nights, tz=tz, level=level)
        return [
            {"date": (first_night + dt.timedelta(days=i)).isoformat(),
             "dark_start": f"{first_night + dt.timedelta(days=i)}T16:00+01:00",
             "dark_end": f"{first_night + dt.timedelta(days=i + 1)}T08:00+01:00"}
            for i in range(nights)
        ]

    monkeypatch.setattr(auroraplan.sky, "darkness_windows", fake_darkness)
    code = main(["arrival", "--launch", "2027-01-10T12:00Z", "--speed", "1000",
                 "--workspace", "ws", "--json"])
    assert code == 0
    report = json.loads(capsys.readouterr().out)
    assert report["timezone"] == "Europe/Oslo" and asked["tz"] == "Europe/Oslo"
    assert asked["first"] == dt.date(2027, 1, 12) and asked["nights"] == len(report["nights"])
    assert all(0 < n["dark_overlap_hours"] <= 16 for n in report["nights"])
