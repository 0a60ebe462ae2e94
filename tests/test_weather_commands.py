"""Weather-model files through the commands: tonight and week read them, say where cloud
came from, fall back when a file is removed, and take the sky seen at a site."""

import json
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator

from auroraplan.weathersamples import write_grib2

HERE = Path(__file__).resolve().parent
SOUTH = HERE / "southern_sites"
NIGHT = "2027-06-20"
RUN = np.datetime64("2027-06-20T00:00", "s")


def run_cli(*argv):
    return subprocess.run([sys.executable, "-m", "auroraplan.cli", *argv],
                          capture_output=True, text=True)


def wavy(lat, lon, step_h):
    """A field with structure in space and time, percent (invented)."""
    return np.clip(50 + 35 * np.sin(lat * 2.1 + step_h * 0.4) * np.cos(lon * 1.7 - step_h * 0.25)
                   + 0.8 * step_h, 0, 100)


@pytest.fixture
def southern_with_grib(tmp_path):
    """The southern workspace (New Zealand, June) with an hourly GRIB2 total-cloud file on a
    0..360 longitude grid, latitudes south to north."""
    ws = tmp_path / "south"
    shutil.copytree(SOUTH, ws)
    lats = np.arange(-48.0, -44.99, 0.125)
    lons = np.arange(166.0, 171.01, 0.125)
    steps = np.arange(0, 37)
    lat2, lon2 = np.meshgrid(lats, lons, indexing="ij")
    fields = np.array([wavy(lat2, lon2, s) for s in steps])
    (ws / "weather").mkdir()
    write_grib2(ws / "weather" / "southmodel.grib2", lats, lons, RUN, steps, fields, centre=255)
    return ws, lats, lons, steps, fields


def test_tonight_hourly_cloud_is_the_bilinear_value_of_the_file(southern_with_grib):
    ws, lats, lons, steps, fields = southern_with_grib
    result = run_cli("tonight", str(ws), "--date", NIGHT, "--json", "--top", "20")
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    assert report["cloud_models"] == ["southmodel"]
    assert "weather models southmodel" in report["cloud_note"]
    sites = {f["properties"]["name"]: f["geometry"]["coordinates"]
             for f in json.loads((ws / "sites.geojson").read_text())["features"]}
    checked = 0
    for site in report["sites"]:
        lon, lat = sites[site["name"]][:2]
        for hour in site["hourly"]:
            t = np.datetime64(np.datetime64(hour["time"][:16]) - np.timedelta64(
                int(hour["time"][16:19]), "h"), "s")  # local time with offset -> UTC
            step = (t - RUN) / np.timedelta64(1, "h")
            assert step == int(step)
            # scipy's RegularGridInterpolator on the file's own grid at that step
            want = RegularGridInterpolator((lats, lons), fields[int(step)])([[lat, lon]])[0]
            assert hour["cloud_pct"] == pytest.approx(want, abs=1.0)
            assert hour["cloud_source"] == "weather models"
            checked += 1
    assert checked > 50


def test_removing_the_file_falls_back_and_says_so(southern_with_grib):
    ws = southern_with_grib[0]
    shutil.rmtree(ws / "weather")
    result = run_cli("tonight", str(ws), "--date", NIGHT, "--json")
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    assert report["cloud_models"] == []
    assert "no weather-model files" in report["cloud_note"]
    assert "climate average" in report["cloud_note"]
    hours = [h for s in report["sites"] for h in s["hourly"]]
    assert all(h["cloud_pct"] is None and h["cloud_source"] == "climate average" for h in hours)


def test_weather_option_adds_a_file_and_week_reads_it(southern_with_grib, tmp_path):
    ws = southern_with_grib[0]
    elsewhere = tmp_path / "downloads"
    elsewhere.mkdir()
    shutil.move(ws / "weather" / "southmodel.grib2", elsewhere / "southmodel.grib2")
    result = run_cli("week", str(ws), "--start", NIGHT, "--nights", "1", "--json",
                     "--weather", str(elsewhere / "southmodel.grib2"))
    assert result.returncode == 0, result.stderr
    assert json.loads(result.stdout)["cloud_models"] == ["southmodel"]


def test_an_output_may_not_overwrite_a_weather_file(southern_with_grib):
    ws = southern_with_grib[0]
    target = ws / "weather" / "southmodel.grib2"
    before = target.read_bytes()
    result = run_cli("tonight", str(ws), "--date", NIGHT, "--html", str(target))
    assert result.returncode == 2 and "Traceback" not in result.stderr
    assert target.read_bytes() == before


def test_sky_report_reweights_the_models_and_says_so(workspace_copy):
    # the demo on 15 January: beyond clouds.csv, the two demo models disagree
    args = ("tonight", str(workspace_copy), "--date", "2027-01-15", "--json", "--top", "20")
    plain = json.loads(run_cli(*args).stdout)
    seen = run_cli(*args, "--sky", "Delta Flats=0@21:00")
    assert seen.returncode == 0, seen.stderr
    told = json.loads(seen.stdout)
    assert any(w.startswith("sky reported at Delta Flats: 0 % cloud") for w in told["warnings"])

    def cloud(report, site, clock):
        row = next(s for s in report["sites"] if s["name"] == site)
        return next(h for h in row["hourly"] if h["time"][11:16] == clock)

    before, after = cloud(plain, "Delta Flats", "22:00"), cloud(told, "Delta Flats", "22:00")
    models = before["cloud_models"]
    assert len(models) == 2 and before["cloud_spread_pct"] > 1
    # the figure moves toward the model that was nearer the report at 21:00 ...
    assert min(models.values()) <= after["cloud_pct"] < before["cloud_pct"]
    # ... and nowhere far away or long before
    assert cloud(told, "Delta Flats", "19:00")["cloud_pct"] == cloud(plain, "Delta Flats", "19:00")["cloud_pct"]
    assert cloud(told, "Sound Bay", "22:00")["cloud_pct"] == cloud(plain, "Sound Bay", "22:00")["cloud_pct"]


@pytest.mark.parametrize("argv, fragment", [
    (["--sky", "Nowhere Ridge=40@21:00"], "no site of that name"),
    (["--sky", "Delta Flats=140"], "outside 0 to 100"),
    (["--sky", "Delta Flats"], "is not SITE=PCT"),
    (["--sky", "Delta Flats=20@25:00"], "is not a clock time"),
    (["--sky", "Delta Flats=20"], "for tonight only"),
    (["--weather", "/nonexistent/model.grib2"], "weather file not found"),
])
def test_bad_weather_options_are_one_line(demo_dir, argv, fragment):
    result = run_cli("tonight", str(demo_dir), "--date", "2027-01-15", *argv)
    assert result.returncode == 2
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr
    assert fragment in result.stderr and "Traceback" not in result.stderr


def test_demo_phone_page_shows_the_model_spread(demo_dir, tmp_path):
    page = tmp_path / "tonight.html"
    result = run_cli("tonight", str(demo_dir), "--date", "2027-01-15", "--html", str(page))
    assert result.returncode == 0, result.stderr
    html = page.read_text()
    assert "models: Skerry EPS (invented demo model)" in html and "fjordline" in html
    assert "spread" in html and "from weather models" in html
