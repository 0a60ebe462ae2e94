"""Reading the operator's folder: the demo loads, and every broken file gets a clear line."""

import datetime as dt
import hashlib
import json
import re

import numpy as np
import pandas as pd
import pytest
from pyproj import Geod

from auroraplan.errors import InputError, ProblemList
from auroraplan.workspace import load_workspace

WGS84 = Geod(ellps="WGS84")  # pyproj: geodesic distances, an outside reference


def horizon_elevation(site, azimuth_deg):
    """Horizon elevation of a site at given azimuths (linear between the polyline points)."""
    if site.horizon is None:
        return np.zeros_like(np.asarray(azimuth_deg, dtype=float))
    return np.interp(azimuth_deg, site.horizon[:, 0], site.horizon[:, 1])


def distance_km(a, b):
    return WGS84.inv(a.lon, a.lat, b.lon, b.lat)[2] / 1000.0


def fingerprint(folder):
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def problems_after(folder):
    """Load a broken workspace; return the problem lines, checking the files are untouched."""
    before = fingerprint(folder)
    with pytest.raises(InputError) as caught:
        load_workspace(folder)
    assert fingerprint(folder) == before, "the loader must never change the user's files"
    for line in caught.value.problems:
        assert "\n" not in line
    return caught.value.problems


def one_problem(folder, *fragments):
    """Exactly one problem line, holding every fragment (file, row or feature, field, allowed)."""
    lines = problems_after(folder)
    assert len(lines) == 1, lines
    for fragment in fragments:
        assert fragment in lines[0], (fragment, lines[0])
    return lines[0]


def edit_csv(path, line_no, column, value):
    """Set one field of a CSV file; line numbers as an editor shows them (header = 1)."""
    lines = path.read_text(encoding="utf-8").splitlines()
    header = lines[0].split(",")
    fields = lines[line_no - 1].split(",")
    fields[header.index(column)] = value
    lines[line_no - 1] = ",".join(fields)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def edit_sites(folder, change):
    path = folder / "sites.geojson"
    doc = json.loads(path.read_text(encoding="utf-8"))
    change(doc["features"])
    path.write_text(json.dumps(doc), encoding="utf-8")


def edit_toml(folder, old, new):
    path = folder / "operator.toml"
    text = path.read_text(encoding="utf-8")
    assert old in text
    path.write_text(text.replace(old, new), encoding="utf-8")


# --- the demo workspace ------------------------------------------------------------------


@pytest.fixture(scope="module")
def demo():
    from pathlib import Path

    return load_workspace(Path(__file__).resolve().parents[1] / "demo_sites")


def test_demo_loads_with_expected_counts_and_types(demo):
    assert demo.operator.name == "Polar Lantern Excursions"
    assert demo.operator.timezone == "Europe/Oslo"
    assert demo.operator.vehicles == 2
    assert demo.settings.viewing.darkness == "nautical"
    assert demo.settings.viewing.oval_model == "starkov1994"
    assert len(demo.sites) == 14
    assert len({s.name for s in demo.sites}) == 14
    assert sum(s.closed for s in demo.sites) == 1
    assert len(demo.trips) == 6
    assert all(isinstance(t.arrive, dt.date) for t in demo.trips)
    assert len(demo.activity) == 32  # 4 days x 8 blocks
    assert str(demo.activity.to_frame()["start_utc"].dt.tz) == "UTC"
    assert demo.activity["start_utc"].dtype == np.dtype("datetime64[s]")
    assert len(demo.clouds) == 14 * 73  # hourly, 11 Jan 12Z to 14 Jan 12Z inclusive
    assert demo.warnings == []


def test_demo_sites_lie_around_69_to_70_north_in_northern_scandinavia(demo):
    lats = np.array([s.lat for s in demo.sites])
    lons = np.array([s.lon for s in demo.sites])
    assert lats.min() > 68.9 and lats.max() < 70.1
    assert lons.min() > 17.5 and lons.max() < 21.5
    drives = [s.drive_min for s in demo.sites]
    caps = [s.capacity for s in demo.sites]
    assert min(drives) <= 15 and max(drives) >= 120
    assert min(caps) <= 8 and max(caps) >= 50


def test_demo_has_a_ridge_site_and_an_open_neighbour_within_5_km(demo):
    by_name = {s.name: s for s in demo.sites}
    ridge, flat = by_name["Ridgeback Hollow"], by_name["Delta Flats"]
    north = np.r_[np.arange(300, 360, 5), np.arange(0, 61, 5)]
    assert horizon_elevation(ridge, north).min() >= 14.0
    assert horizon_elevation(flat, np.arange(0, 361, 5)).max() <= 2.0
    assert distance_km(ridge, flat) < 5.0  # pyproj geodesic
    assert "Delta Flats" in ridge.notes


def test_demo_has_a_site_with_open_sea_to_the_north(demo):
    beach = {s.name: s for s in demo.sites}["Northgate Beach"]
    north = np.r_[np.arange(315, 360, 5), np.arange(0, 46, 5)]
    assert horizon_elevation(beach, north).max() <= 2.0
    assert horizon_elevation(beach, [180.0])[0] >= 10.0


def test_demo_inland_sites_are_clearer_by_climate_than_the_coast(demo):
    by_name = {s.name: s for s in demo.sites}
    assert by_name["Border Lakes"].clear_by_month[0] > by_name["Sound Bay"].clear_by_month[0]


def test_demo_forecast_has_a_quiet_stretch_and_a_storm_on_the_evening_of_the_12th(demo):
    act = demo.activity.to_frame().set_index("start_utc")["kp"]
    quiet = act["2027-01-11T00:00Z":"2027-01-11T21:00Z"]
    storm = act["2027-01-12T18:00Z":"2027-01-13T03:00Z"]
    assert quiet.max() <= 2.0 and quiet.min() >= 1.0
    assert storm.min() >= 6.0
    assert np.isfinite(demo.activity["kp_sd"]).sum() >= 2
    assert np.isnan(demo.activity["kp_sd"]).sum() > 20


def test_demo_storm_night_is_cloudy_on_the_coast_and_clear_inland(demo):
    clouds = demo.clouds.to_frame()
    night = clouds[(clouds.time_utc >= "2027-01-12T19:00Z") & (clouds.time_utc <= "2027-01-13T02:00Z")]
    mean = night.groupby("site")["cloud_pct"].mean()
    for coastal in ("Sound Bay", "Northgate Beach", "Harbour Steps"):
        assert mean[coastal] > 80
    for inland in ("Delta Flats", "Border Lakes", "Eastshore Bench"):
        assert mean[inland] < 30


def test_demo_trips_overlap_on_the_storm_nights(demo):
    storm_night = dt.date(2027, 1, 12)
    staying = [t for t in demo.trips if storm_night in t.nights()]
    assert len(staying) >= 4
    assert len({t.guests for t in demo.trips}) >= 4
    assert min(t.guests for t in demo.trips) == 2 and max(t.guests for t in demo.trips) == 20
    assert any(t.blocked for t in demo.trips)


# --- the folder itself -------------------------------------------------------------------


def test_missing_folder_is_one_line(tmp_path):
    with pytest.raises(InputError) as caught:
        load_workspace(tmp_path / "no_such_workspace")
    assert len(caught.value.problems) == 1
    assert "no_such_workspace" in caught.value.problems[0]
    assert "folder not found" in caught.value.problems[0]


def test_missing_required_file_is_named(workspace_copy):
    (workspace_copy / "trips.csv").unlink()
    one_problem(workspace_copy, "trips.csv", "not found")


def test_missing_optional_files_give_empty_frames_and_warnings(workspace_copy):
    (workspace_copy / "activity.csv").unlink()
    (workspace_copy / "clouds.csv").unlink()
    ws = load_workspace(workspace_copy)
    assert len(ws.activity) == 0 and list(ws.activity.columns) == ["start_utc", "kp", "kp_sd"]
    assert len(ws.clouds) == 0 and list(ws.clouds.columns) == ["site", "time_utc", "cloud_pct"]
    assert any("activity.csv" in w for w in ws.warnings)
    assert any("clouds.csv" in w for w in ws.warnings)


def test_a_file_that_is_not_utf8(workspace_copy):
    path = workspace_copy / "trips.csv"
    text = path.read_text(encoding="utf-8") + "T09,Søndre ski club,4,2027-01-18,2027-01-20,1,\n"
    path.write_bytes(text.encode("latin-1"))
    one_problem(workspace_copy, "trips.csv line 8", "not UTF-8")


def test_an_empty_file(workspace_copy):
    (workspace_copy / "clouds.csv").write_text("", encoding="utf-8")
    one_problem(workspace_copy, "clouds.csv", "empty")


def test_a_missing_required_column(workspace_copy):
    path = workspace_copy / "trips.csv"
    path.write_text(path.read_text(encoding="utf-8").replace("guests,", "people,", 1),
                    encoding="utf-8")
    one_problem(workspace_copy, "trips.csv line 1", "guests", "trip, group, guests")


# --- operator.toml -----------------------------------------------------------------------


def test_unknown_time_zone(workspace_copy):
    edit_toml(workspace_copy, 'timezone = "Europe/Oslo"', 'timezone = "Europe/Tromso"')
    one_problem(workspace_copy, "operator.toml [base] timezone", "Europe/Tromso", "IANA")


def test_unknown_darkness_lists_the_levels(workspace_copy):
    edit_toml(workspace_copy, 'darkness = "nautical"', 'darkness = "pitch"')
    one_problem(workspace_copy, "operator.toml [viewing] darkness", "'pitch'",
                "civil, nautical, astronomical")


def test_unknown_oval_model_lists_the_models(workspace_copy):
    edit_toml(workspace_copy, 'oval_model = "starkov1994"', 'oval_model = "feldstein"')
    one_problem(workspace_copy, "[viewing] oval_model", "starkov1994, starkov1994-published")


def test_a_model_without_discrete_edges_is_refused_listing_the_ones_that_work(workspace_copy):
    # Gussenhoven et al. (1983) fit only the diffuse boundary: no band to look at.
    edit_toml(workspace_copy, 'oval_model = "starkov1994"', 'oval_model = "gussenhoven1983"')
    line = one_problem(workspace_copy, "[viewing] oval_model", "'gussenhoven1983'")
    assert line.endswith("allowed: starkov1994, starkov1994-published")


@pytest.mark.parametrize("model", ["starkov1994-published"])
def test_every_model_the_loader_accepts_gives_a_view(workspace_copy, model):
    from auroraplan import oval, report

    assert set(oval.VIEWING_MODELS) == {"starkov1994", "starkov1994-published"}
    edit_toml(workspace_copy, 'oval_model = "starkov1994"', f'oval_model = "{model}"')
    ws = load_workspace(workspace_copy)
    sheet = report.tonight_report(ws, dt.date(2027, 1, 12), top=2)
    assert sheet["sites"] and all(0.0 <= s["chance"] <= 1.0 for s in sheet["sites"])


def test_misspelt_key_is_reported_not_ignored(workspace_copy):
    edit_toml(workspace_copy, "darkness =", "darknes =")
    one_problem(workspace_copy, "[viewing] darknes", "unknown key", "darkness")


def test_spread_setting_out_of_range(workspace_copy):
    edit_toml(workspace_copy, "sd0 = 0.5", "sd0 = -1")
    one_problem(workspace_copy, "[activity] sd0", "outside")


# --- sites.geojson -----------------------------------------------------------------------


def test_site_latitude_95(workspace_copy):
    def change(features):
        features[2]["geometry"]["coordinates"][1] = 95.0

    edit_sites(workspace_copy, change)
    one_problem(workspace_copy, "sites.geojson feature 3 'Sound Bay'", "latitude", "-90 to 90")


def test_two_sites_with_the_same_name(workspace_copy):
    def change(features):
        features[4]["properties"]["name"] = "Sound Bay"

    edit_sites(workspace_copy, change)
    one_problem(workspace_copy, "feature 5 'Sound Bay', name", "feature 3", "unique")


def test_horizon_azimuth_400(workspace_copy):
    def change(features):
        features[0]["properties"]["horizon"][2] = [400, 5]

    edit_sites(workspace_copy, change)
    one_problem(workspace_copy, "feature 1 'Harbour Steps', horizon", "azimuth 400", "0 to 360")


def test_horizon_that_is_not_a_list_of_pairs(workspace_copy):
    def change(features):
        features[1]["properties"]["horizon"] = [0, 1, 90, 2]

    edit_sites(workspace_copy, change)
    one_problem(workspace_copy, "feature 2 'Northgate Beach', horizon", "[azimuth, elevation]")


def test_site_capacity_must_be_a_whole_number_of_guests(workspace_copy):
    def change(features):
        features[5]["properties"]["capacity"] = "twelve"

    edit_sites(workspace_copy, change)
    one_problem(workspace_copy, "feature 6 'Island Lake', capacity", "not a number")


def test_several_site_problems_are_all_reported(workspace_copy):
    def change(features):
        features[0]["geometry"]["coordinates"][0] = 200.0
        features[3]["properties"]["sky_mag"] = 30
        features[7]["properties"]["clear_by_month"] = [0.3] * 11

    edit_sites(workspace_copy, change)
    lines = problems_after(workspace_copy)
    assert len(lines) == 3
    assert "feature 1" in lines[0] and "longitude" in lines[0]
    assert "feature 4" in lines[1] and "sky_mag" in lines[1]
    assert "feature 8" in lines[2] and "clear_by_month" in lines[2]


def test_sites_from_a_geopackage_match_the_geojson(workspace_copy, demo):
    import geopandas

    doc = json.loads((workspace_copy / "sites.geojson").read_text(encoding="utf-8"))
    for feature in doc["features"]:  # a GeoPackage keeps lists as JSON text
        props = feature["properties"]
        props["horizon"] = json.dumps(props["horizon"])
        props["clear_by_month"] = json.dumps(props["clear_by_month"])
    frame = geopandas.GeoDataFrame.from_features(doc["features"], crs="EPSG:4326")
    frame.to_file(workspace_copy / "sites.gpkg", driver="GPKG")
    (workspace_copy / "sites.geojson").unlink()
    ws = load_workspace(workspace_copy)
    assert [s.name for s in ws.sites] == [s.name for s in demo.sites]
    ridge = {s.name: s for s in ws.sites}["Ridgeback Hollow"]
    assert ridge.lat == pytest.approx(69.356) and ridge.height_m == pytest.approx(90.0)
    assert horizon_elevation(ridge, [0.0])[0] == pytest.approx(15.0)


# --- trips.csv ---------------------------------------------------------------------------







def test_more_outings_than_free_evenings_is_a_warning(workspace_copy):
    # T01 stays 6 nights, one of them blocked: 6 outings fit the stay but not the free evenings
    edit_csv(workspace_copy / "trips.csv", 2, "outings", "6")
    ws = load_workspace(workspace_copy)
    assert any("trips.csv line 2" in w and "T01" in w for w in ws.warnings)


def test_more_outings_than_nights_in_the_stay_is_an_error(workspace_copy):
    edit_csv(workspace_copy / "trips.csv", 5, "outings", "3")  # the couple has 2 evenings
    lines = problems_after(workspace_copy)
    assert len(lines) == 1 and "line 5, outings: 3 outings in a stay of 2 nights" in lines[0]


def _set_site(folder, name, **props):
    geo = json.loads((folder / "sites.geojson").read_text(encoding="utf-8"))
    for f in geo["features"]:
        if f["properties"]["name"] == name:
            for key, value in props.items():
                if key == "coordinates":
                    f["geometry"]["coordinates"] = value
                elif value is None:
                    f["properties"].pop(key, None)
                else:
                    f["properties"][key] = value
    (folder / "sites.geojson").write_text(json.dumps(geo), encoding="utf-8")
    return [f for f in geo["features"] if f["properties"]["name"] == name][0]


def test_a_missing_drive_min_is_estimated_from_the_distance_with_a_warning(workspace_copy):
    from auroraplan.weather import _great_circle_km
    from auroraplan.workspace import ROAD_FACTOR, WINTER_ROAD_KMH

    feature = _set_site(workspace_copy, "Fjord Head", drive_min=None)
    ws = load_workspace(workspace_copy)
    site = next(s for s in ws.sites if s.name == "Fjord Head")
    lon, lat = feature["geometry"]["coordinates"][:2]
    km = float(_great_circle_km(ws.operator.base_lat, ws.operator.base_lon, lat, lon))
    # The estimate is road distance at winter speed, rounded up to 5 minutes.
    assert km * ROAD_FACTOR / WINTER_ROAD_KMH * 60 <= site.drive_min
    assert site.drive_min < km * ROAD_FACTOR / WINTER_ROAD_KMH * 60 + 5
    assert any("Fjord Head" in w and "no drive_min" in w and "road factor 1.3" in w
               for w in ws.warnings)


def test_a_missing_capacity_is_an_error_not_a_silent_default(workspace_copy):
    _set_site(workspace_copy, "Fjord Head", capacity=None)
    lines = problems_after(workspace_copy)
    assert len(lines) == 1 and "'Fjord Head', capacity: missing" in lines[0]


def test_a_site_with_latitude_and_longitude_swapped_is_named(workspace_copy):
    feature = _set_site(workspace_copy, "Fjord Head")
    lon, lat = feature["geometry"]["coordinates"][:2]
    _set_site(workspace_copy, "Fjord Head", coordinates=[lat, lon])
    lines = problems_after(workspace_copy)
    assert len(lines) == 1 and "'Fjord Head', geometry" in lines[0]
    assert "look swapped" in lines[0]


def test_a_base_time_zone_far_from_its_longitude_is_named(workspace_copy):
    """Fairbanks, Alaska (64.8° N, 147.7° W) keeps Alaska time, UTC-9 (tz database); with
    Europe/Oslo every local time would be ten hours off."""
    toml = workspace_copy / "operator.toml"
    text = toml.read_text(encoding="utf-8")
    text = re.sub(r"(?m)^timezone = .*$", 'timezone = "Europe/Oslo"', text)
    text = re.sub(r"(?m)^lat = .*$", "lat = 64.8", text, count=1)
    text = re.sub(r"(?m)^lon = .*$", "lon = -147.7", text, count=1)
    toml.write_text(text, encoding="utf-8")
    lines = [line for line in problems_after(workspace_copy) if "timezone" in line]
    assert len(lines) == 1 and "Europe/Oslo" in lines[0] and "America/Anchorage" in lines[0]


def test_zones_that_stray_from_solar_time_within_reason_are_accepted():
    """Real bases: Longyearbyen (Arctic/Longyearbyen), Fairbanks (America/Anchorage),
    Reykjavik (Atlantic/Reykjavik, 1.5 h from solar time), Kiritimati (Pacific/Kiritimati,
    UTC+14 at 157° W, across the date line). Offsets from the tz database."""
    from auroraplan.errors import ProblemList
    from auroraplan.workspace import _check_zone_near_base

    for lat, lon, zone in [(78.2, 15.6, "Arctic/Longyearbyen"),
                           (64.8, -147.7, "America/Anchorage"),
                           (64.1, -21.9, "Atlantic/Reykjavik"),
                           (1.9, -157.4, "Pacific/Kiritimati")]:
        problems = ProblemList()
        _check_zone_near_base(lat, lon, zone, "operator.toml", problems)
        assert not problems.problems, (zone, problems.problems)


def test_several_trip_problems_are_all_reported(workspace_copy):
    path = workspace_copy / "trips.csv"
    edit_csv(path, 2, "arrive", "9 January")
    edit_csv(path, 4, "outings", "many")
    edit_csv(path, 6, "guests", "-3")
    lines = problems_after(workspace_copy)
    assert [line.split(",")[0] for line in lines] == [
        f"{path} line 2", f"{path} line 4", f"{path} line 6"]
    assert "arrive" in lines[0] and "outings" in lines[1] and "guests" in lines[2]


def test_problems_in_different_files_are_reported_together(workspace_copy):
    edit_csv(workspace_copy / "trips.csv", 2, "guests", "0")
    edit_csv(workspace_copy / "activity.csv", 3, "kp", "12")
    lines = problems_after(workspace_copy)
    assert len(lines) == 2
    assert "trips.csv line 2" in lines[0] and "activity.csv line 3" in lines[1]


def test_problem_list_is_cut_at_its_limit(workspace_copy):
    path = workspace_copy / "clouds.csv"
    for line in range(2, 2 + 40):
        edit_csv(path, line, "cloud_pct", "150")
    lines = problems_after(workspace_copy)
    assert len(lines) == ProblemList.LIMIT + 1
    assert lines[-1] == "... and 10 more problems"


# --- activity.csv ------------------------------------------------------------------------






def test_times_with_offsets_are_converted_and_naive_times_are_utc(workspace_copy):
    path = workspace_copy / "activity.csv"
    edit_csv(path, 2, "start_utc", "2027-01-11T01:00+01:00")  # = 00:00Z
    edit_csv(path, 3, "start_utc", "2027-01-11T03:00")  # naive: UTC
    ws = load_workspace(workspace_copy)
    starts = ws.activity.to_frame()["start_utc"]
    assert starts.iloc[0] == pd.Timestamp("2027-01-11T00:00Z")
    assert starts.iloc[1] == pd.Timestamp("2027-01-11T03:00Z")


def test_kp_in_thirds_and_g_scale_are_read(demo):
    kp = demo.activity.to_frame().set_index("start_utc")["kp"]
    assert kp["2027-01-11T00:00Z"] == pytest.approx(5 / 3)  # "2-"
    assert kp["2027-01-12T18:00Z"] == pytest.approx(6.0)  # "G2", NOAA scales
    assert kp["2027-01-12T21:00Z"] == pytest.approx(20 / 3)  # "7-"


# --- clouds.csv --------------------------------------------------------------------------




def test_clouds_for_a_site_that_is_not_in_sites_geojson(workspace_copy):
    path = workspace_copy / "clouds.csv"
    for line in (10, 11, 12):
        edit_csv(path, line, "site", "Sound Bey")
    one_problem(workspace_copy, "clouds.csv line 10, site", "'Sound Bey'", "3 rows",
                "Sound Bay")


def test_unknown_table_is_reported_with_the_known_ones(workspace_copy):
    path = workspace_copy / "operator.toml"
    path.write_text(path.read_text(encoding="utf-8") + "\n[vehicles]\ncount = 3\n",
                    encoding="utf-8")
    one_problem(workspace_copy, "operator.toml [vehicles]", "unknown table", "fleet")


def test_tables_of_later_stages_are_kept_in_settings(workspace_copy):
    path = workspace_copy / "operator.toml"
    path.write_text(path.read_text(encoding="utf-8")
                    + "\n[chance]\nmoon_beta = 0.5\n[planner]\ndrive_cost_per_min = 0.001\n",
                    encoding="utf-8")
    ws = load_workspace(workspace_copy)
    assert ws.settings.planner.drive_cost_per_min == 0.001
    assert ws.settings.chance.moon_beta == 0.5


# One edit to one CSV cell, one problem naming file, line and field (and what is allowed).
CSV_CELL_CASES = [
    pytest.param("trips.csv", 3, "depart", "2027-01-10", ("trips.csv line 3, depart", "2027-01-10", "arrive 2027-01-11",), id="trip_departing_before_it_arrives"),
    pytest.param("trips.csv", 3, "depart", "2027-01-11", ("trips.csv line 3, depart", "not after",), id="trip_departing_the_day_it_arrives"),
    pytest.param("trips.csv", 2, "guests", "0", ("trips.csv line 2, guests", "1 to 1000",), id="trip_with_no_guests"),
    pytest.param("trips.csv", 4, "guests", "60", ("trips.csv line 4, guests", "largest: 50 at Harbour Steps",), id="trip_bigger_than_any_site"),
    pytest.param("trips.csv", 2, "blocked", "2027-01-10;2027-01-20", ("trips.csv line 2, blocked", "2027-01-20", "2027-01-09 to 2027-01-14",), id="blocked_evening_outside_the_stay_is_an_error"),
    pytest.param("activity.csv", 2, "kp", "12", ("activity.csv line 2, kp", "outside 0 to 9", "G1 to G5",), id="kp_12"),
    pytest.param("activity.csv", 5, "kp", "7x", ("activity.csv line 5, kp", "'7x'", "4-, 4o, 4+",), id="kp_7x"),
    pytest.param("activity.csv", 4, "start_utc", "11/01/2027 06:00", ("activity.csv line 4, start_utc", "ISO 8601", "2027-01-12T18:00Z",), id="block_time_that_is_not_iso_8601"),
    pytest.param("activity.csv", 4, "start_utc", "2027-01-11T07:00Z", ("activity.csv line 4, start_utc", "3-hour",), id="block_that_does_not_start_on_a_3_hour_boundary"),
    pytest.param("clouds.csv", 2, "cloud_pct", "150", ("clouds.csv line 2, cloud_pct", "0 to 100",), id="cloud_150_percent"),
    pytest.param("clouds.csv", 7, "time_utc", "tomorrow", ("clouds.csv line 7, time_utc", "ISO 8601",), id="cloud_time_that_is_not_iso_8601"),
]


@pytest.mark.parametrize("file, line, column, value, fragments", CSV_CELL_CASES)
def test_one_bad_csv_cell_is_one_line(workspace_copy, file, line, column, value, fragments):
    edit_csv(workspace_copy / file, line, column, value)
    one_problem(workspace_copy, *fragments)


def test_fleet_listed_with_seats_dates_away_and_guides(workspace_copy):
    edit_toml(workspace_copy, "vehicles = 2", 'vehicles = [{ name = "Van A", seats = 8 }, '
              '{ name = "Van B", seats = 8, unavailable = [2027-01-13] }, '
              '{ name = "Minibus", seats = 16 }]\n'
              'guides = [{ name = "Kari" }, { name = "Leif", unavailable = ["2027-01-12"] }]')
    fleet = load_workspace(workspace_copy).operator.fleet
    nights = fleet.by_night([dt.date(2027, 1, 12), dt.date(2027, 1, 13)])
    assert nights.seats.tolist() == [8.0, 16.0]
    assert nights.vehicles.tolist() == [[2, 1], [1, 1]]
    assert nights.guides.tolist() == [1.0, 2.0]


def test_plain_vehicle_count_with_default_seats(workspace_copy):
    edit_toml(workspace_copy, "vehicles = 2", "vehicles = 3\nseats = 7\nguides = 2")
    ws = load_workspace(workspace_copy)
    assert ws.operator.vehicles == 3
    assert [v.seats for v in ws.operator.fleet.vehicles] == [7, 7, 7]
    assert len(ws.operator.fleet.guides) == 2


@pytest.mark.parametrize("line, fragments", [
    ('vehicles = [{ name = "Van A", seats = 0 }]', ("[fleet] vehicles", "vehicle 1 seats")),
    ('vehicles = [{ name = "Van A", seats = 8 }, { name = "Van B" }]',
     ("[fleet] vehicles", "Van B has no seats")),
    ('vehicles = [{ name = "Van A", unavailable = ["13 Jan"] }]',
     ("[fleet] vehicles", "unavailable", "YYYY-MM-DD")),
    ('vehicles = [{ name = "Van A", wheels = 4 }]', ("[fleet] vehicles", "unknown key wheels")),
    ("vehicles = 2\nguides = -1", ("[fleet] guides", "outside 0 to 100")),
])
def test_bad_fleet_is_one_line(workspace_copy, line, fragments):
    edit_toml(workspace_copy, "vehicles = 2", line)
    one_problem(workspace_copy, "operator.toml", *fragments)


def test_commands_that_use_no_forecast_neither_read_nor_check_the_forecast_files(workspace_copy,
                                                                                capsys):
    # sites, season and the plan-of-record commands use neither activity.csv nor clouds.csv
    # (DEVELOPERS.md, what each command reads); a command that uses them still says what
    # is wrong with them, in the same line.
    from auroraplan.cli import main

    for name, bad in (("clouds.csv", "Gullwing Point,2027-01-11T25:00Z,40\n"),
                      ("activity.csv", "2027-01-11T00:00Z,Kp9000,\n")):
        with (workspace_copy / name).open("a", encoding="utf-8") as out:
            out.write(bad)
    ws = load_workspace(workspace_copy, forecasts=False)
    assert set(ws.files) >= {"activity", "clouds"}  # still named: no output replaces them
    assert not any("activity.csv" in w or "clouds.csv" in w for w in ws.warnings)
    with pytest.raises(RuntimeError, match="clouds.csv was not read"):
        len(ws.clouds)
    with pytest.raises(RuntimeError, match="activity.csv was not read"):
        ws.activity["kp"]
    assert main(["sites", str(workspace_copy), "--json"]) == 0
    assert main(["season", str(workspace_copy), "--from", "2027-01-10", "--to", "2027-01-12",
                 "--trip-nights", "2", "--json"]) == 0
    capsys.readouterr()
    assert main(["tonight", str(workspace_copy), "--date", "2027-01-12"]) == 2
    said = capsys.readouterr().err
    assert "clouds.csv line" in said and "time_utc" in said and "activity.csv line" in said
