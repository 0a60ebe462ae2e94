"""Cloud from weather-model files: GRIB2 and CF NetCDF grids, runs, members, models, units."""

import numpy as np
import pyproj  # loaded before ecCodes (see weatherfiles.eccodes_module)
import pytest
from scipy.interpolate import RegularGridInterpolator

from auroraplan.errors import InputError
from auroraplan.weather import (
    SkyReport,
    WeatherSettings,
    blend_models,
    clear_probability,
    cloud_grid,
)
from auroraplan.weatherfiles import (
    effective_layers,
    file_digests,
    read_weather_files,
    weather_files,
)
from auroraplan.weathersamples import cf_cloud_dataset, write_grib2
from auroraplan.workspace import Site

RUN = np.datetime64("2027-01-12T12:00", "s")
STEPS = np.arange(0, 13)  # hourly, 12:00Z to 00:00Z


def plane(lat, lon, step_h):
    """An analytic field, percent: a plane in latitude/longitude that moves with time."""
    return 20.0 + 4.0 * (lon - 14.0) + 6.0 * (lat - 67.0) + 1.5 * step_h


def grid_fields(lats, lons, steps=STEPS, field=plane):
    lat2, lon2 = np.meshgrid(lats, lons, indexing="ij")
    return np.array([field(lat2, lon2, s) for s in steps])


SITE_LAT = np.array([69.6492, 68.23, 70.41, 67.05])
SITE_LON = np.array([18.9553, 20.77, 15.12, 23.88])


def sites(lat=SITE_LAT, lon=SITE_LON):
    return [Site(name=f"Site {i}", lat=float(a), lon=float(b), clear_by_month=(0.3,) * 12)
            for i, (a, b) in enumerate(zip(lat, lon, strict=True))]


def hours(first="2027-01-12T12:00", count=13):
    return (np.datetime64(first, "s") + np.arange(count) * np.timedelta64(3600, "s"))


# --- regular latitude/longitude GRIB2 --------------------------------------------------


@pytest.mark.parametrize("north_first", [True, False])
def test_grib2_plane_matches_the_analytic_value_and_scipy(tmp_path, north_first):
    lats = np.arange(72.0, 65.99, -0.25) if north_first else np.arange(66.0, 72.01, 0.25)
    lons = np.arange(12.0, 26.01, 0.25)
    path = tmp_path / "plane.grib2"
    fields = grid_fields(lats, lons)
    write_grib2(path, lats, lons, RUN, STEPS, fields)
    reading = read_weather_files([path], SITE_LAT, SITE_LON)
    assert len(reading.series) == 1 and reading.warnings == []
    got = reading.series[0].cloud_pct  # (S, N)
    for k, step in enumerate(STEPS):
        # analytic: a plane is reproduced exactly by bilinear interpolation; 16-bit packing
        # of a 0-140 range rounds by at most 140 / 2**16 = 0.002
        np.testing.assert_allclose(got[k], plane(SITE_LAT, SITE_LON, step), atol=0.01)
        # scipy.interpolate.RegularGridInterpolator (linear) on the same grid
        order = np.argsort(lats)
        ref = RegularGridInterpolator((lats[order], lons), fields[k][order])(
            np.column_stack([SITE_LAT, SITE_LON]))
        np.testing.assert_allclose(got[k], ref, atol=0.01)
    np.testing.assert_array_equal(reading.series[0].valid_utc, hours())


def test_a_non_planar_field_agrees_with_scipy_bilinear(tmp_path):
    lats = np.arange(66.0, 72.01, 0.5)
    lons = np.arange(12.0, 26.01, 0.5)

    def wavy(lat, lon, step):
        return 50 + 40 * np.sin(lat * 1.3 + step) * np.cos(lon * 0.7)

    fields = grid_fields(lats, lons, field=wavy)
    path = tmp_path / "wavy.grib2"
    write_grib2(path, lats, lons, RUN, STEPS, fields)
    got = read_weather_files([path], SITE_LAT, SITE_LON).series[0].cloud_pct
    for k in range(len(STEPS)):
        ref = RegularGridInterpolator((lats, lons), fields[k])(np.column_stack([SITE_LAT, SITE_LON]))
        np.testing.assert_allclose(got[k], ref, atol=0.01)  # scipy RegularGridInterpolator


def test_longitudes_0_to_360_and_a_site_west_of_greenwich(tmp_path):
    lats = np.arange(60.0, 70.01, 1.0)
    lons = np.arange(0.0, 359.01, 1.0)  # global, 0..359: the cell 359..360 wraps to 0
    fields = grid_fields(lats, lons, steps=[0], field=lambda la, lo, s: 10 + 0.2 * la + 0 * lo)
    lon_field = np.array([np.broadcast_to(10 + 0.1 * lons, (lats.size, lons.size))])
    write_grib2(tmp_path / "lat.grib2", lats, lons, RUN, [0], fields)
    write_grib2(tmp_path / "lon.grib2", lats, lons, RUN, [0], lon_field)
    site_lat, site_lon = np.array([64.3, 65.5, 61.0]), np.array([-21.9, 359.5, 10.25])
    by_lat = read_weather_files([tmp_path / "lat.grib2"], site_lat, site_lon).series[0]
    np.testing.assert_allclose(by_lat.cloud_pct[0], 10 + 0.2 * site_lat, atol=0.01)
    by_lon = read_weather_files([tmp_path / "lon.grib2"], site_lat, site_lon).series[0]
    # -21.9 E = 338.1 E: 10 + 33.81; 359.5 lies between 359 (45.9) and 0 (10): 27.95
    np.testing.assert_allclose(by_lon.cloud_pct[0], [43.81, 27.95, 11.025], atol=0.01)


def test_sites_outside_the_grid_get_nothing_and_the_output_says_so(tmp_path):
    lats = np.arange(68.0, 71.01, 0.25)
    lons = np.arange(17.0, 21.01, 0.25)
    path = tmp_path / "small.grib2"
    write_grib2(path, lats, lons, RUN, STEPS, grid_fields(lats, lons))
    reading = read_weather_files([path], SITE_LAT, SITE_LON)
    inside = np.isfinite(reading.series[0].cloud_pct[0])
    assert inside.tolist() == [True, True, False, False]
    grid = cloud_grid(sites(), None, hours(), reading=reading)
    assert (grid.source[2:] == "climatology").all() and (grid.source[:2] == "models").all()
    assert any("no grid covers Site 2, Site 3" in w for w in grid.warnings)


def test_a_grid_that_misses_every_site_is_a_warning_not_an_error(tmp_path):
    lats, lons = np.arange(40.0, 45.01, 1.0), np.arange(0.0, 5.01, 1.0)
    path = tmp_path / "elsewhere.grib2"
    write_grib2(path, lats, lons, RUN, [0], grid_fields(lats, lons, steps=[0]))
    reading = read_weather_files([path], SITE_LAT, SITE_LON)
    assert reading.series == []
    assert reading.warnings == [f"{path}: its grid covers none of the sites; the file is not used"]


# --- CF NetCDF ---------------------------------------------------------------------------


def test_percent_and_fraction_files_give_the_same_chances(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    fields = np.clip(grid_fields(lats, lons), 0, 100)
    times = hours()
    cf_cloud_dataset(times, fields, lats, lons, unit="%", source="Fjord model").to_netcdf(
        tmp_path / "percent.nc", engine="h5netcdf")
    cf_cloud_dataset(times, fields / 100, lats, lons, unit="1", source="Fjord model").to_netcdf(
        tmp_path / "fraction.nc", engine="scipy")  # classic NetCDF, read through scipy
    write_grib2(tmp_path / "fraction.grib2", lats, lons, RUN, STEPS, fields / 100, param_id=164)
    got = [clear_probability(sites(), None, times,
                             reading=read_weather_files([tmp_path / name], SITE_LAT, SITE_LON))[0]
           for name in ("percent.nc", "fraction.nc", "fraction.grib2")]
    np.testing.assert_allclose(got[1], got[0], atol=1e-6)
    np.testing.assert_allclose(got[2], got[0], atol=1e-4)  # 16-bit GRIB packing of 0-1
    assert got[0].min() < 0.9  # the field is not all clear: the comparison means something


def test_rotated_pole_netcdf_checked_through_pyproj(tmp_path):
    pole = (21.0, -161.0)  # grid north pole: latitude, longitude; the sites lie near its equator
    rlat = np.arange(-6.0, 6.01, 0.2)
    rlon = np.arange(-8.0, 8.01, 0.2)

    def rotated_plane(y, x, step):
        return 30.0 + 2.5 * x - 3.0 * y + 2.0 * step

    lat2, lon2 = np.meshgrid(rlat, rlon, indexing="ij")
    fields = np.array([rotated_plane(lat2, lon2, s) for s in STEPS])
    cf_cloud_dataset(hours(), fields, rlat, rlon, rotated_pole=pole, source="Rotated LAM").to_netcdf(
        tmp_path / "rotated.nc", engine="h5netcdf")
    # the sites' rotated coordinates from a PROJ string (pyproj), not from the file's CF
    # attributes: ob_tran with o_lat_p = pole latitude, lon_0 = pole longitude + 180
    rot = pyproj.Proj(f"+proj=ob_tran +o_proj=longlat +o_lat_p={pole[0]} "
                      f"+lon_0={pole[1] + 180} +R=6371229 +to_meter=0.0174532925199433 +no_defs")
    site_x, site_y = rot(SITE_LON, SITE_LAT)
    site_x, site_y = np.degrees(site_x), np.degrees(site_y)
    assert (np.abs(site_x) < 8).all() and (np.abs(site_y) < 6).all()  # the sites are inside
    series = read_weather_files([tmp_path / "rotated.nc"], SITE_LAT, SITE_LON).series
    assert [s.model for s in series] == ["Rotated LAM"]
    for k, step in enumerate(STEPS):
        np.testing.assert_allclose(series[0].cloud_pct[k], rotated_plane(site_y, site_x, step),
                                   atol=1e-3)


def test_a_grid_known_only_by_2d_latitude_longitude(tmp_path):
    import xarray as xr

    # a curvilinear grid (a Lambert-like fan) with no grid_mapping: nearest-neighbour weights
    j, i = np.meshgrid(np.arange(40), np.arange(50), indexing="ij")
    lat2 = 66.0 + 0.15 * j + 0.01 * i
    lon2 = 12.0 + 0.3 * i + 0.02 * j
    field = 20.0 + 4.0 * (lon2 - 14.0) + 6.0 * (lat2 - 67.0)
    ds = xr.Dataset({"tcc": (("y", "x"), field, {"standard_name": "cloud_area_fraction", "units": "%"})},
                    coords={"time": RUN.astype("datetime64[ns]"), "latitude": (("y", "x"), lat2),
                            "longitude": (("y", "x"), lon2)})
    ds.to_netcdf(tmp_path / "fan.nc", engine="h5netcdf")
    on_points = read_weather_files([tmp_path / "fan.nc"], lat2[[5, 20], [7, 30]],
                                   lon2[[5, 20], [7, 30]]).series[0].cloud_pct[0]
    np.testing.assert_allclose(on_points, field[[5, 20], [7, 30]], atol=1e-9)  # exact on a point
    got = read_weather_files([tmp_path / "fan.nc"], SITE_LAT[:2], SITE_LON[:2]).series[0]
    # inverse-distance weights of a plane: within the plane's change across one cell
    # (4 %/° × 0.3° + 6 %/° × 0.15° = 2.1 points)
    np.testing.assert_allclose(got.cloud_pct[0], plane(SITE_LAT[:2], SITE_LON[:2], 0), atol=2.1)


# --- several models, members and runs -------------------------------------------------


def _flat(value):
    return lambda lat, lon, step: np.full(np.shape(lat), float(value))


def test_two_models_that_disagree_give_the_documented_blend(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    write_grib2(tmp_path / "a.grib2", lats, lons, RUN, STEPS, grid_fields(lats, lons, field=_flat(20)),
                centre="ecmf", process=148)
    for member, value in ((1, 70), (2, 90)):  # an ensemble whose members average 80
        write_grib2(tmp_path / "b.grib2", lats, lons, RUN, STEPS,
                    grid_fields(lats, lons, field=_flat(value)), centre="enmi", member=member,
                    append=member > 1)
    reading = read_weather_files(weather_files(tmp_path, [tmp_path / "a.grib2", tmp_path / "b.grib2"]),
                                 SITE_LAT, SITE_LON)
    assert sorted({(s.model, s.member) for s in reading.series}) == [
        ("ecmf/148", None), ("enmi/128", "1"), ("enmi/128", "2")]
    grid = cloud_grid(sites(), None, hours(), reading=reading)
    assert grid.models == ["ecmf/148", "enmi/128"]  # 128: the process in ecCodes' sample
    # by hand, from weather.blend_models: model means 20 and (70 + 90) / 2 = 80, weighted
    # equally: cloud 50, P(clear) 1 - 50/100 = 0.5, spread 80 - 20 = 60
    np.testing.assert_allclose(grid.model_pct[:, 0, 0], [20.0, 80.0], atol=0.01)
    np.testing.assert_allclose(grid.cloud_pct, 50.0, atol=0.01)
    np.testing.assert_allclose(grid.p_clear, 0.5, atol=1e-4)
    np.testing.assert_allclose(grid.spread_pct, 60.0, atol=0.01)


def test_blend_rule_by_hand_with_a_missing_model():
    model_pct = np.array([[[10.0, 40.0, np.nan]], [[30.0, np.nan, np.nan]]])
    weight = np.array([[[1.0, 1.0, 1.0]], [[3.0, 1.0, 1.0]]])
    cloud, spread = blend_models(model_pct, weight)
    # (1·10 + 3·30) / 4 = 25; one model only: 40 and no spread; none: NaN
    np.testing.assert_allclose(cloud[0, :2], [25.0, 40.0])
    assert np.isnan(cloud[0, 2])
    assert spread[0, 0] == pytest.approx(20.0) and np.isnan(spread[0, 1:]).all()


def test_the_newest_run_wins_where_runs_overlap(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "runs.grib2"
    write_grib2(path, lats, lons, RUN, STEPS, grid_fields(lats, lons, field=_flat(10)))
    write_grib2(path, lats, lons, RUN + np.timedelta64(6, "h"), STEPS,
                grid_fields(lats, lons, field=_flat(90)), append=True)
    reading = read_weather_files([path], SITE_LAT, SITE_LON)
    assert len(reading.series) == 2
    grid = cloud_grid(sites(), None, hours(count=19), reading=reading)
    np.testing.assert_allclose(grid.cloud_pct[0, :6], 10.0, atol=0.01)  # 12-17Z: first run only
    np.testing.assert_allclose(grid.cloud_pct[0, 6:], 90.0, atol=0.01)  # 18Z on: the newer run


def test_three_hourly_file_steps_are_interpolated_in_time(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "three.grib2"
    steps = np.arange(0, 13, 3)
    write_grib2(path, lats, lons, RUN, steps, grid_fields(lats, lons, steps=steps))
    grid = cloud_grid(sites(), None, hours(), reading=read_weather_files([path], SITE_LAT, SITE_LON))
    # the plane moves 1.5 points an hour, so linear-in-time values equal the hourly plane
    want = np.array([plane(SITE_LAT, SITE_LON, s) for s in STEPS]).T
    np.testing.assert_allclose(grid.cloud_pct, want, atol=0.01)


def test_clouds_csv_wins_over_the_files_and_says_so(tmp_path):
    import pandas as pd

    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "m.grib2"
    write_grib2(path, lats, lons, RUN, STEPS, grid_fields(lats, lons, field=_flat(80)))
    csv = pd.DataFrame({"site": ["Site 0", "Site 0"],
                        "time_utc": pd.to_datetime(["2027-01-12T12:00Z", "2027-01-12T13:00Z"], utc=True),
                        "cloud_pct": [5.0, 5.0]})
    grid = cloud_grid(sites(), csv, hours(count=4), reading=read_weather_files([path], SITE_LAT, SITE_LON))
    assert grid.source[0].tolist() == ["clouds.csv", "clouds.csv", "clouds.csv", "models"]
    np.testing.assert_allclose(grid.cloud_pct[0], [5, 5, 5, 80], atol=0.01)  # 14Z: held 1 h
    assert any("clouds.csv overrides the weather-model files at 1 site" in w for w in grid.warnings)


def test_valid_times_that_miss_the_nights_are_a_warning(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "old.grib2"
    write_grib2(path, lats, lons, RUN - np.timedelta64(10, "D"), STEPS, grid_fields(lats, lons))
    grid = cloud_grid(sites(), None, hours(), reading=read_weather_files([path], SITE_LAT, SITE_LON))
    assert (grid.source == "climatology").all()
    assert any(str(path) in w and "miss the nights asked for" in w for w in grid.warnings)


# --- cloud layers ---------------------------------------------------------------------


def test_low_medium_high_layers_use_the_documented_overlap_rule(tmp_path):
    import xarray as xr

    lats, lons = np.arange(66.0, 72.01, 1.0), np.arange(12.0, 26.01, 1.0)
    parts = {}
    for layer, value in (("low", 20.0), ("medium", 50.0), ("high", 100.0)):
        parts[layer] = cf_cloud_dataset(hours(count=1), grid_fields(lats, lons, [0], _flat(value)),
                                        lats, lons, layer=f"{layer}_type_cloud_area_fraction"
                                        ).rename(cloud=f"{layer}_cloud")
    xr.merge(list(parts.values())).to_netcdf(tmp_path / "layers.nc", engine="h5netcdf")
    got = read_weather_files([tmp_path / "layers.nc"], SITE_LAT, SITE_LON).series[0].cloud_pct
    # by hand: 1 - (1 - 0.2)(1 - 0.8·0.5)(1 - 0.5·1.0) = 1 - 0.8·0.6·0.5 = 0.76
    np.testing.assert_allclose(got, 76.0, atol=1e-4)
    assert effective_layers(0, 0, 100, (1.0, 0.8, 0.5)) == pytest.approx(50.0)


# --- the sky outside ------------------------------------------------------------------


def test_a_sky_report_prefers_the_model_that_matches_it(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    write_grib2(tmp_path / "a.grib2", lats, lons, RUN, STEPS, grid_fields(lats, lons, field=_flat(20)),
                process=1)
    write_grib2(tmp_path / "b.grib2", lats, lons, RUN, STEPS, grid_fields(lats, lons, field=_flat(80)),
                process=2)
    # sites 0 and 1 are 165 km apart; 1 km east of site 0 is a fifth site
    lat, lon = np.append(SITE_LAT, 69.6492), np.append(SITE_LON, 18.98)
    near = sites(lat, lon)
    reading = read_weather_files([tmp_path / "a.grib2", tmp_path / "b.grib2"], lat, lon)
    report = SkyReport(site="Site 0", cloud_pct=30.0, time_utc=np.datetime64("2027-01-12T18:00"),
                       lat=SITE_LAT[0], lon=SITE_LON[0])
    grid = cloud_grid(near, None, hours(), reading=reading, reports=[report],
                      settings=WeatherSettings(sky_radius_km=50, sky_hours=3, sky_sd_pct=20))
    # by hand: errors 10 and 50 points; weights exp(-0.125) = 0.8825, exp(-3.125) = 0.0439,
    # scaled so the best is 1: 1 and 0.0498; cloud = (20 + 0.0498·80) / 1.0498 = 22.85
    w = np.exp(-3.125) / np.exp(-0.125)
    want = (20 + w * 80) / (1 + w)
    for i in (0, 4):
        np.testing.assert_allclose(grid.cloud_pct[i, 6:10], want, atol=0.01)  # 18-21Z
        np.testing.assert_allclose(grid.cloud_pct[i, [5, 10]], 50.0, atol=0.01)  # before, after
    np.testing.assert_allclose(grid.cloud_pct[1], 50.0, atol=0.01)  # too far away
    assert any("sky reported at Site 0" in w and "ecmf/1 weight 1.00" in w for w in grid.warnings)


# --- bad files --------------------------------------------------------------------------


def _one_line(exc_info, *fragments):
    assert len(exc_info.value.problems) == 1
    line = exc_info.value.problems[0]
    for fragment in fragments:
        assert fragment in line, line
    return line


def test_a_file_without_cloud_is_rejected(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "temperature.grib2"
    write_grib2(path, lats, lons, RUN, [0], grid_fields(lats, lons, [0]) + 250, param_id=167)
    with pytest.raises(InputError) as info:
        read_weather_files([path], SITE_LAT, SITE_LON)
    _one_line(info, str(path), "no cloud cover variable", "t2m")


def test_a_truncated_grib_file_is_rejected_in_one_line(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "cut.grib2"
    write_grib2(path, lats, lons, RUN, STEPS, grid_fields(lats, lons))
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2 + 17])
    with pytest.raises(InputError) as info:
        read_weather_files([path], SITE_LAT, SITE_LON)
    _one_line(info, str(path), "truncated")


@pytest.mark.parametrize("content, fragment", [
    (b"site,time_utc,cloud_pct\n", "not a GRIB or NetCDF file"),
    (b"", "not a GRIB or NetCDF file"),
    (b"CDF\x01" + b"\x00" * 7, "cannot be read"),
])
def test_not_a_weather_file(tmp_path, content, fragment):
    path = tmp_path / "model.nc"
    path.write_bytes(content)
    with pytest.raises(InputError) as info:
        read_weather_files([path], SITE_LAT, SITE_LON)
    _one_line(info, str(path), fragment)


@pytest.mark.parametrize("unit", ["K", "", "octas"])
def test_a_unit_that_is_neither_percent_nor_fraction(tmp_path, unit):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "odd.nc"
    cf_cloud_dataset(hours(), grid_fields(lats, lons), lats, lons, unit=unit).to_netcdf(
        path, engine="h5netcdf")
    with pytest.raises(InputError) as info:
        read_weather_files([path], SITE_LAT, SITE_LON)
    _one_line(info, str(path), f"has unit {unit!r}", "percent")


def test_a_missing_weather_option_file(tmp_path):
    with pytest.raises(InputError) as info:
        weather_files(tmp_path, [tmp_path / "nowhere.grib2"])
    _one_line(info, "nowhere.grib2", "not found")


def test_reading_writes_nothing_beside_the_file(tmp_path):
    lats, lons = np.arange(66.0, 72.01, 0.5), np.arange(12.0, 26.01, 0.5)
    path = tmp_path / "weather" / "m.grib2"
    path.parent.mkdir()
    write_grib2(path, lats, lons, RUN, STEPS, grid_fields(lats, lons))
    before = sorted(p.name for p in path.parent.iterdir())
    read_weather_files(weather_files(tmp_path), SITE_LAT, SITE_LON)
    assert sorted(p.name for p in path.parent.iterdir()) == before  # no cfgrib .idx file


def test_file_digests_are_sha256_of_the_bytes(tmp_path):
    import hashlib

    path = tmp_path / "x.grib2"
    path.write_bytes(b"GRIB" + bytes(range(200)))
    (row,) = file_digests([path])
    assert row["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()  # hashlib
    assert row["bytes"] == 204
