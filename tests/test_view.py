"""Line of sight to the oval band: geometry, horizon masks and the Kp a site needs."""

import datetime as dt

import numpy as np
import pytest

from auroraplan import magnetic, oval, view
from auroraplan.errors import InputError

WHEN = dt.datetime(2027, 1, 12)
R = 6371.2  # km, as in the module (IGRF reference radius)
MIDNIGHT_COL = 0

# Ridge of 15 degrees across the poleward (northern) azimuths 300-60, flat elsewhere.
RIDGE_NORTH = np.array([[0, 15], [60, 15], [60.5, 0], [299.5, 0], [300, 15], [359, 15]], float)


def destination(lat, lon, bearing_deg, distance_km):
    """Point reached along a great circle (spherical Earth), for checking look directions."""
    d = distance_km / R
    p1, l1, b = np.radians(lat), np.radians(lon), np.radians(bearing_deg)
    p2 = np.arcsin(np.sin(p1) * np.cos(d) + np.cos(p1) * np.sin(d) * np.cos(b))
    l2 = l1 + np.arctan2(np.sin(b) * np.sin(d) * np.cos(p1), np.cos(d) - np.sin(p1) * np.sin(p2))
    return np.degrees(p2), np.degrees(l2)


# --- geometry ----------------------------------------------------------------------------


def test_aurora_at_110_km_on_the_horizon_is_about_1180_km_away():
    # Exact spherical value R arccos(R / (R + h)), and the textbook sqrt(2 R h) = 1184 km.
    exact = R * np.arccos(R / (R + 110.0))
    assert exact == pytest.approx(np.sqrt(2 * R * 110.0), rel=0.01)
    assert 1170.0 < exact < 1190.0
    assert view.elevation_deg(exact / R, 0.0, 110.0) == pytest.approx(0.0, abs=1e-9)


def test_ground_distance_at_10_degrees_elevation_worked_by_hand():
    # Law of cosines for the slant range d: (R+h)^2 = R^2 + d^2 + 2 R d sin(e), so
    # d = -R sin e + sqrt(R^2 sin^2 e + 2 R h + h^2); then sin(gamma) = d cos(e) / (R + h).
    e, h = np.radians(10.0), 110.0
    d = -R * np.sin(e) + np.sqrt((R * np.sin(e)) ** 2 + 2 * R * h + h * h)
    by_hand = R * np.arcsin(d * np.cos(e) / (R + h))
    assert 495.0 < by_hand < 510.0  # about 502 km
    assert view.elevation_deg(by_hand / R, 0.0, 110.0) == pytest.approx(10.0, abs=1e-6)


def test_bearings_of_the_cardinal_directions():
    _, north = view.central_angle_and_bearing(69.0, 19.0, 70.0, 19.0)
    _, east = view.central_angle_and_bearing(0.0, 0.0, 0.0, 1.0)
    _, south = view.central_angle_and_bearing(-43.0, 170.0, -44.0, 170.0)
    assert (north, east, south) == pytest.approx((0.0, 90.0, 180.0), abs=1e-9)


def test_horizon_mask_is_interpolated_periodically_in_azimuth():
    mask = np.array([[10.0, 4.0], [350.0, 8.0]])
    table = view.horizon_table([mask, None], 2)
    at = view.mask_at(table, np.array([[0.0, 180.0], [0.0, 180.0]]))
    # Across north: from 8 at 350 to 4 at 10, so 6 at 0; the long way round: 4 -> 8 at 180.
    assert at[0] == pytest.approx([6.0, 6.0], abs=1e-9)
    assert at[1] == pytest.approx([0.0, 0.0])


@pytest.mark.parametrize("bad", [
    [[10, 5, 3]], [[10]], [[400, 5]], [[10, 95]], "ridge", [[10, float("nan")]],
])
def test_malformed_horizon_arrays_are_refused_with_one_line(bad):
    with pytest.raises(InputError) as err:
        view.kp_needed_table([69.6], [19.0], 0.0, [bad], names=["Test Point"], when=WHEN)
    assert len(err.value.problems) == 1
    assert "Test Point" in err.value.problems[0] and "horizon" in err.value.problems[0]


# --- Kp needed ---------------------------------------------------------------------------


def test_a_site_behind_a_15_degree_ridge_needs_more_kp_than_the_same_site_open():
    table = view.kp_needed_table([69.3, 69.3], [19.5, 19.5], 10.0, [None, RIDGE_NORTH],
                                 when=WHEN)
    open_kp, ridge_kp = table.kp_horizon
    assert ridge_kp[MIDNIGHT_COL] > open_kp[MIDNIGHT_COL] + 0.3
    assert np.all(ridge_kp >= open_kp)
    # Behind the ridge the aurora must stand above 15 + 5 degrees.
    assert table.look_elevation_deg[1, MIDNIGHT_COL] >= 20.0 - 0.2


def test_a_polar_cap_site_at_kp_6_near_midnight_looks_equatorward():
    # Station Nord, north-east Greenland: AACGM latitude above 78 (about 81.4). The band's
    # poleward edge is near 73 there, some 900 km south: low, so no margin above the horizon.
    lat, lon = 81.6, -16.7
    mlat, _ = magnetic.geo_to_aacgm(lat, lon, 0.0, WHEN)
    assert mlat > 78.0
    mlt = np.array([[23.5, 0.0, 0.5]])
    assert np.all(oval.boundaries(6.0, mlt)["poleward"] < mlat)  # poleward of the band
    table = view.kp_needed_table([lat], [lon], 0.0, None, min_elevation_deg=0.0, when=WHEN)
    seen = view.sightline(table, 6.0, mlt)
    assert np.all(seen["visible"])
    assert np.all(seen["look_elevation_deg"] < 10.0)
    for az in seen["look_azimuth_deg"][0]:
        p_lat, p_lon = destination(lat, lon, az, 300.0)
        p_mlat, _ = magnetic.geo_to_aacgm(p_lat, p_lon, 0.0, WHEN)
        assert p_mlat < mlat - 1.0  # the look direction runs toward lower magnetic latitude


def test_a_southern_site_has_negative_mlat_and_looks_south():
    # 43.5 S 170.5 E (South Island, New Zealand).
    table = view.kp_needed_table([-43.5], [170.5], 0.0, None, when=WHEN)
    assert table.mlat[0] < 0
    kp = table.kp_horizon[0]
    reachable = np.isfinite(kp)
    assert reachable[MIDNIGHT_COL]
    assert np.all((table.look_azimuth_deg[0][reachable] > 90) &
                  (table.look_azimuth_deg[0][reachable] < 270))


def test_under_the_band_the_site_sees_it_overhead():
    table = view.kp_needed_table([69.65], [18.96], 0.0, None, when=WHEN)
    kp_o = table.kp_overhead[0, MIDNIGHT_COL]
    assert np.isfinite(kp_o)
    b = oval.boundaries(kp_o, 0.0)
    assert b["equatorward"] <= table.mlat[0] + 0.05  # edge has reached the site (0.01 Kp step)
    before = oval.boundaries(max(kp_o - 0.05, 0.0), 0.0)
    assert before["equatorward"] > table.mlat[0]
    seen = view.sightline(table, kp_o + 0.3, [[0.0]])
    assert seen["look_elevation_deg"][0, 0] == 90.0 and seen["overhead"][0, 0]


def test_horizon_kp_never_exceeds_overhead_kp():
    lat = np.array([69.65, 67.0, 64.1, 60.0, 71.0])
    lon = np.array([18.96, 25.0, -21.9, 10.0, 25.0])
    table = view.kp_needed_table(lat, lon, 0.0, None, when=WHEN)
    finite = np.isfinite(table.kp_overhead)
    assert np.all(table.kp_horizon[finite] <= table.kp_overhead[finite])
    assert table.kp_horizon.shape == (5, 96) and table.mlt_h[1] == 0.25


def test_all_sites_at_once_equals_one_site_at_a_time():
    lat = np.array([69.65, 69.3, 64.1, -43.5, 77.47])
    lon = np.array([18.96, 19.5, -21.9, 170.5, -69.23])
    masks = [None, RIDGE_NORTH, None, None, None]
    together = view.kp_needed_table(lat, lon, 0.0, masks, when=WHEN)
    for i in range(len(lat)):
        alone = view.kp_needed_table(lat[i:i + 1], lon[i:i + 1], 0.0, masks[i:i + 1], when=WHEN)
        np.testing.assert_array_equal(alone.kp_horizon[0], together.kp_horizon[i])
        np.testing.assert_array_equal(alone.kp_overhead[0], together.kp_overhead[i])


def test_a_site_too_far_south_never_sees_it_by_kp_9():
    table = view.kp_needed_table([40.0], [15.0], 0.0, None, when=WHEN)
    assert np.all(np.isinf(table.kp_horizon)) and np.all(np.isnan(table.look_azimuth_deg))


def test_kp_needed_at_interpolates_across_magnetic_midnight():
    table = view.kp_needed_table([60.0], [10.0], 0.0, None, when=WHEN)
    last, first = table.kp_horizon[0, -1], table.kp_horizon[0, 0]
    got = view.kp_needed_at(table, np.array([[23.875, 0.0, 24.0]]))
    assert got[0, 0] == pytest.approx(0.5 * (last + first))
    assert got[0, 1] == got[0, 2] == first


def test_gussenhoven_has_no_discrete_edges_for_kp_needed():
    with pytest.raises(InputError, match="discrete-oval"):
        view.kp_needed_table([69.6], [19.0], 0.0, None, model="gussenhoven1983", when=WHEN)


def test_band_outline_lies_on_the_model_boundaries():
    out = view.band_outline(3.0, np.datetime64("2027-01-12T21:00"), emission_height_km=110.0)
    mlat, _ = magnetic.geo_to_aacgm(out["equatorward_lat"], out["equatorward_lon"], 110.0,
                                    WHEN)
    expected = oval.boundaries(3.0, out["mlt_h"])["equatorward"]
    assert np.max(np.abs(mlat - expected)) < 0.01
    assert out["poleward_lat"].shape == (97,)


# --- the fast look against the reference computation ---------------------------------------


def test_tabulated_band_edges_match_the_model_at_the_point():
    # Reference: the oval model evaluated at each point (oval.boundaries), for every model
    # a site's view can use, at random Kp and MLT and on the kinks (Kp 0.23 and 6).
    rng = np.random.default_rng(3)
    kp = np.concatenate([rng.uniform(0.0, 9.0, 200_000), rng.uniform(0.2, 0.26, 2000),
                         rng.uniform(5.9, 6.1, 2000), [0.0, 9.0, 6.0]])
    mlt = np.concatenate([rng.uniform(0.0, 24.0, kp.size - 3), [0.0, 23.999, 24.0]])
    for model in oval.VIEWING_MODELS:
        eq, pw = view.band_edges(kp, mlt, model)
        exact = oval.boundaries(kp, mlt, model)
        assert np.max(np.abs(eq - exact["equatorward"])) < view.EDGE_TOLERANCE_DEG / 2
        assert np.max(np.abs(pw - exact["poleward"])) < view.EDGE_TOLERANCE_DEG / 2
    assert np.isnan(view.band_edges([3.0], [np.nan])[0][0])


def test_fast_sightline_agrees_with_the_reference_scan():
    # Reference: sightline(exact=True), the model at every step and the meridian scanned
    # point by point. Sites: Tromso, behind a ridge, Iceland, New Zealand (south), Qaanaaq
    # (polar cap), Station Nord, near the magnetic equator (AACGM undefined) and a sea
    # horizon seen from a cliff. Stated tolerance (view.sightline): azimuth within 1
    # degree, elevation within 0.5, the same overhead flags and the same blanks; measured
    # here the azimuths agree exactly and the elevations within 0.1.
    lat = np.array([69.65, 69.3, 64.1, -43.5, 77.47, 81.6, 3.0, 70.9])
    lon = np.array([18.96, 19.5, -21.9, 170.5, -69.23, -16.7, 100.0, 25.8])
    masks = [None, RIDGE_NORTH, None, None, None, None, None,
             np.array([[0.0, -1.0], [180.0, 3.0]])]
    table = view.kp_needed_table(lat, lon, [0.0, 300.0, 50.0, 0.0, 20.0, 30.0, 0.0, 300.0],
                                 masks, when=WHEN)
    rng = np.random.default_rng(11)
    kp = np.round(rng.uniform(0.0, 9.0, (lat.size, 20_000)) * 3.0) / 3.0
    kp[:, :5000] = rng.uniform(0.0, 9.0, (lat.size, 5000))
    mlt = rng.uniform(0.0, 24.0, kp.shape)
    fast = view.sightline(table, kp, mlt)
    ref = view.sightline(table, kp, mlt, exact=True)
    np.testing.assert_array_equal(fast["overhead"], ref["overhead"])
    np.testing.assert_array_equal(fast["visible"], ref["visible"])
    for key, tol in (("look_azimuth_deg", 1.0), ("look_elevation_deg", 0.5)):
        np.testing.assert_array_equal(np.isnan(fast[key]), np.isnan(ref[key]))
        diff = fast[key] - ref[key]
        if key == "look_azimuth_deg":
            diff = (diff + 180.0) % 360.0 - 180.0
        assert np.nanmax(np.abs(diff)) < tol
    assert np.nanmax(np.abs(fast["look_elevation_deg"] - ref["look_elevation_deg"])) < 0.1
    assert fast["overhead"].any() and (~fast["overhead"] & np.isfinite(
        fast["look_azimuth_deg"])).any()  # both kinds of step are in the sample


def test_kp_needed_at_in_blocks_is_the_same_as_in_one_pass(monkeypatch):
    # Blocks bound the working arrays only; unreachable columns and 24 h included.
    table = view.kp_needed_table([69.65, 40.0, 77.47], [18.96, 15.0, -69.23], 0.0, None,
                                 when=WHEN)
    rng = np.random.default_rng(8)
    mlt = rng.uniform(0.0, 24.0, (3, 400))
    mlt[:, :2] = [0.0, 24.0]
    monkeypatch.setattr(view, "MLT_CELLS", 10**9)
    whole = view.kp_needed_at(table, mlt)
    monkeypatch.setattr(view, "MLT_CELLS", 400)
    np.testing.assert_array_equal(view.kp_needed_at(table, mlt), whole)
    assert np.isinf(whole[1]).all() and np.isfinite(whole[0]).all()
