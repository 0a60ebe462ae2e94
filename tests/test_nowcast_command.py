"""The nowcast in use: tonight's hours and the `nowcast` command on a fresh workspace."""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from auroraplan import solarwind as sw

OPERATOR = """
[base]
name = "Lakeshore depot"
lat = 62.60
lon = 29.76
timezone = "Europe/Helsinki"

[operator]
name = "Kettle Lake Night Walks"

[fleet]
vehicles = 1

[viewing]
darkness = "nautical"
"""

SITES = {"type": "FeatureCollection", "features": [
    {"type": "Feature", "geometry": {"type": "Point", "coordinates": lon_lat},
     "properties": {"name": name, "drive_min": 20, "capacity": 12}}
    for name, lon_lat in (("Birch Shore", [29.81, 62.70]), ("Fell Top", [29.52, 62.58]),
                          ("River Bend", [30.00, 62.75]))]}

TRIPS = "trip,group,guests,arrive,depart,outings\nK1,Walkers,4,2027-02-08,2027-02-11,1\n"

ACTIVITY = "start_utc,kp\n" + "".join(
    f"2027-02-09T{h:02d}:00Z,2o\n" for h in range(0, 24, 3)) + "".join(
    f"2027-02-10T{h:02d}:00Z,2o\n" for h in range(0, 24, 3))


def _workspace(tmp_path: Path, south_nt: float) -> Path:
    ws = tmp_path / f"ws_{south_nt:+.0f}"
    ws.mkdir()
    (ws / "operator.toml").write_text(OPERATOR, encoding="utf-8")
    (ws / "sites.geojson").write_text(json.dumps(SITES), encoding="utf-8")
    (ws / "trips.csv").write_text(TRIPS, encoding="utf-8")
    (ws / "activity.csv").write_text(ACTIVITY, encoding="utf-8")
    clear = [f"{site['properties']['name']},2027-02-09T{h:02d}:00Z,0"
             for site in SITES["features"] for h in range(14, 24)]
    (ws / "clouds.csv").write_text("site,time_utc,cloud_pct\n" + "\n".join(clear) + "\n",
                                   encoding="utf-8")
    # 5 nT north until 19:30 UTC at the spacecraft, then `south_nt` at 650 km/s.
    rows = ["time_utc,by_gsm_nt,bz_gsm_nt,speed_km_s,density_cm3"]
    for m in range(0, 180):
        h, mm = divmod(18 * 60 + m, 60)
        bz = 5.0 if m < 90 else south_nt
        rows.append(f"2027-02-09T{h:02d}:{mm:02d}Z,0.5,{bz},650,4")
    (ws / "solarwind.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    return ws


def _run(*argv):
    done = subprocess.run([sys.executable, "-m", "auroraplan.cli", *argv], capture_output=True,
                          text=True)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


@pytest.fixture(scope="module")
def turning(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("nowcast")
    return {"south": _workspace(tmp, -15.0), "north": _workspace(tmp, 5.0)}


def test_activity_rises_within_the_propagation_delay(turning):
    # Acceptance: a field turning from 5 nT north to 15 nT south at 650 km/s. The flat delay
    # (Case & Wild 2012) from L1 at 650 km/s is (1.5e6 - 63,710) km / 650 km/s = 36.8 min, so
    # the turning measured at 19:30 UTC reaches the Earth at about 20:07 UTC (22:07 EET).
    got = _run("nowcast", str(turning["south"]), "--at", "2027-02-09T20:00Z", "--json",
               "--hours", "2")
    kp = [h["kp"] for h in got["hours"]]
    assert kp[1] > kp[0] + 2.0             # the next hours rise
    assert got["hours"][1]["kp_from"] == "solar wind"
    estimate = got["nowcast"]["estimate"]
    before = [e["kp"] for e in estimate if e["time"] < "2027-02-09T22:07"]
    assert max(before) < 3.0
    # The estimate starts rising within one 10-minute step of the arrival ...
    first_rise = next(e["time"] for e in estimate if e["kp"] > max(before) + 0.5)
    assert "2027-02-09T22:07" <= first_rise <= "2027-02-09T22:20"
    # ... and reads storm once the trailing hour is all southward field.
    assert min(e["kp"] for e in estimate if e["time"] >= "2027-02-09T23:10") > 5.0
    assert got["nowcast"]["trend"] == "rising"
    delay = sw.flat_delay_s(650.0, sw.L1_DISTANCE_KM) / 60
    assert got["nowcast"]["delay_min"] == pytest.approx(delay, abs=0.5)


def test_tonight_hours_after_the_turning_rise_against_a_field_staying_north(turning):
    south = _run("tonight", str(turning["south"]), "--date", "2027-02-09", "--json")
    north = _run("tonight", str(turning["north"]), "--date", "2027-02-09", "--json")
    assert north["nowcast"]["activity"] == "quiet"
    assert south["nowcast"]["activity"] == "storm"

    def hour(report, site, clock):
        row = next(s for s in report["sites"] if s["name"] == site)
        return next(h for h in row["hourly"] if h["time"][11:16] == clock)

    for site in ("Birch Shore", "Fell Top", "River Bend"):
        after_s, after_n = hour(south, site, "23:00"), hour(north, site, "23:00")
        assert after_s["kp_from"] == after_n["kp_from"] == "solar wind"
        assert after_s["chance_in_hour"] > after_n["chance_in_hour"] + 0.2
        # Before the turning arrives both files say the same.
        assert hour(south, site, "21:00")["chance_in_hour"] == pytest.approx(
            hour(north, site, "21:00")["chance_in_hour"], abs=1e-3)


def test_a_quiet_file_reads_quiet(turning):
    got = _run("nowcast", str(turning["north"]), "--json")
    assert got["nowcast"]["activity"] == "quiet"
    assert all(h["kp"] < 3 for h in got["hours"])
    assert got["notes"] and "last measurement" in got["notes"][0]


def test_a_file_outside_the_night_is_said_not_to_be_used(turning):
    got = _run("tonight", str(turning["south"]), "--date", "2027-02-10", "--json")
    assert got["nowcast"]["used"] is False
    assert "outside these hours" in got["nowcast"]["note"]
    assert all(h["kp_from"] != "solar wind" for s in got["sites"] for h in s["hourly"])


def test_weight_hands_back_to_the_forecast():
    # Internal consistency: nowcast_weight is 1 up to valid_until and e-folds after it.
    times = np.datetime64("2027-02-09T18:00", "s") + np.arange(60) * np.timedelta64(60, "s")
    cast = sw.estimate(times, np.full(60, 500.0), np.full(60, 5.0), np.zeros(60),
                       np.full(60, -5.0))
    later = cast.valid_until_utc + np.timedelta64(120, "m")
    w = sw.nowcast_weight(np.array([cast.valid_until_utc, later]), cast)
    assert w[0] == 1.0 and w[1] == pytest.approx(np.exp(-2.0))


def test_demo_run_sheet_and_phone_page_show_the_nowcast():
    # The demo's solar-wind file turns south an hour before the storm night's best window;
    # the guide's pages say from when and until when the solar wind speaks.
    from auroraplan import report
    from auroraplan.render.phone import phone_page_html
    from auroraplan.workspace import load_workspace, solar_wind_for

    demo = Path(__file__).resolve().parents[1] / "demo_sites"
    ws = load_workspace(demo)
    tonight = report.tonight_report(ws, __import__("datetime").date(2027, 1, 12),
                                    solar_wind=solar_wind_for(ws))
    assert tonight["nowcast"]["used"] and tonight["nowcast"]["trend"] == "rising"
    page = phone_page_html(tonight)
    assert 'id="nowcast"' in page
    assert "From solar wind measured at 20:10, valid until 20:52" in page


def test_an_assumed_kp_sets_the_solar_wind_aside(turning):
    # A what-if Kp is meant to hold for every hour; the measured solar wind would overrule
    # it for the hours it covers, so it is set aside and the run says so.
    got = _run("tonight", str(turning["south"]), "--date", "2027-02-09", "--json",
               "--assume-kp", "3")
    assert got["nowcast"] is None
    assert "solar-wind estimate set aside for the assumed Kp" in got["what_if"]
    assert all(h["kp_from"] != "solar wind" for s in got["sites"] for h in s["hourly"])
