"""Magnetic coordinates: AACGM-v2 against a centred dipole from IGRF-14, round trips and MLT."""

import datetime as dt
from pathlib import Path

import aacgmv2
import numpy as np
import ppigrf
import pytest

from auroraplan import magnetic

EPOCH = dt.datetime(2025, 1, 1)
WGS84_E2 = 6.69437999014e-3  # first eccentricity squared (WGS84)


def igrf14_dipole_pole(year=2025.0):
    """Boreal dipole pole from g10, g11, h11 of ppigrf's bundled IGRF-14 file.

    Centred-dipole pole: colatitude arccos(-g10/B0), longitude atan2(-h11, -g11),
    B0 = sqrt(g10^2 + g11^2 + h11^2) (e.g. Laundal & Richmond 2017, Space Sci. Rev. 206).
    """
    path = Path(ppigrf.__file__).parent / "IGRF14.shc"
    rows = [line.split() for line in path.read_text().splitlines() if not line.startswith("#")]
    column = [float(y) for y in rows[1]].index(year)
    coef = {(int(r[0]), int(r[1])): float(r[2 + column]) for r in rows[2:]}
    g10, g11, h11 = coef[(1, 0)], coef[(1, 1)], coef[(1, -1)]
    b0 = np.sqrt(g10**2 + g11**2 + h11**2)
    return 90.0 - np.degrees(np.arccos(-g10 / b0)), np.degrees(np.arctan2(-h11, -g11))


def dipole_latitude(lat, lon, pole_lat, pole_lon):
    """Centred-dipole latitude of a geodetic position (geocentric latitude, spherical trig)."""
    psi = np.arctan((1.0 - WGS84_E2) * np.tan(np.radians(lat)))
    p = np.radians(pole_lat)
    s = np.sin(psi) * np.sin(p) + np.cos(psi) * np.cos(p) * np.cos(np.radians(lon - pole_lon))
    return np.degrees(np.arcsin(s))


AURORAL_ZONE = {  # geodetic lat, lon of auroral-zone places
    "Tromsø": (69.65, 18.96),
    "Kiruna": (67.86, 20.22),
    "Alta": (69.97, 23.27),
    "Fairbanks": (64.84, -147.72),
    "Coldfoot": (67.25, -150.18),
}


def test_igrf14_dipole_pole_is_where_published():
    # IGRF-14 2025 dipole pole: about 80.8 N, 72.8 W (NOAA/BGS pole tables, from memory).
    lat, lon = igrf14_dipole_pole()
    assert lat == pytest.approx(80.8, abs=0.2)
    assert lon == pytest.approx(-72.8, abs=0.5)


@pytest.mark.parametrize("place", sorted(AURORAL_ZONE))
def test_aacgm_latitude_close_to_dipole_latitude_in_the_auroral_zone(place):
    # In Scandinavia and Alaska the field is near-dipolar: AACGM within 1 degree of the
    # centred-dipole latitude from IGRF-14 g10, g11, h11 (ppigrf's bundled coefficients).
    lat, lon = AURORAL_ZONE[place]
    mlat, _ = magnetic.geo_to_aacgm(lat, lon, 0.0, EPOCH)
    assert abs(mlat - dipole_latitude(lat, lon, *igrf14_dipole_pole())) < 1.0


def test_over_iceland_aacgm_differs_from_the_dipole_by_several_degrees():
    # The known non-dipole anomaly over Iceland (Reykjavik): AACGM is 4-5 degrees below the
    # dipole latitude; that is why the tool uses AACGM. (Shepherd 2014 figures; from memory.)
    lat, lon = 64.13, -21.90
    mlat, _ = magnetic.geo_to_aacgm(lat, lon, 0.0, EPOCH)
    difference = dipole_latitude(lat, lon, *igrf14_dipole_pole()) - mlat
    assert 3.0 < difference < 6.5


ROUND_TRIP_LAT = np.array([69.65, 64.13, 64.84, -43.5, 78.22, 55.0])
ROUND_TRIP_LON = np.array([18.96, -21.90, -147.72, 170.5, 15.65, 12.0])


def _round_trip_error(height_km, refine):
    mlat, mlon = magnetic.geo_to_aacgm(ROUND_TRIP_LAT, ROUND_TRIP_LON, height_km, EPOCH)
    lat, lon = magnetic.aacgm_to_geo(mlat, mlon, height_km, EPOCH, refine=refine)
    dlon = (lon - ROUND_TRIP_LON + 180.0) % 360.0 - 180.0
    return max(np.max(np.abs(lat - ROUND_TRIP_LAT)), np.max(np.abs(dlon)))


@pytest.mark.parametrize("height_km", [0.0, 110.0])
def test_round_trip_geo_aacgm_geo_within_a_hundredth_of_a_degree(height_km):
    # With one refinement step the inverse matches aacgmv2's forward conversion.
    assert _round_trip_error(height_km, refine=1) < 0.01


@pytest.mark.parametrize("height_km", [0.0, 110.0])
def test_plain_coefficient_round_trip_is_within_a_tenth_of_a_degree(height_km):
    # aacgmv2's forward and inverse fits are separate: 0.08 degree measured near Svalbard,
    # about 1 km at the aurora; used as is for the band geometry.
    error = _round_trip_error(height_km, refine=0)
    assert 0.01 < error < 0.1


def test_southern_site_has_negative_magnetic_latitude():
    mlat, _ = magnetic.geo_to_aacgm(-43.5, 170.5, 0.0, EPOCH)
    assert -60.0 < mlat < -40.0


def test_mlt_for_many_sites_matches_aacgmv2_convert_mlt_per_site_and_time():
    # Reference: aacgmv2.convert_mlt called for each time over all sites.
    mlon = np.array([-150.0, -20.0, 0.0, 99.8, 106.2, 179.0])
    times = np.array(["2027-01-11T15:00", "2027-01-11T22:10", "2027-01-12T03:35"],
                     dtype="datetime64[s]")
    ours = magnetic.mlt(mlon, times)
    assert ours.shape == (6, 3)
    for j, t in enumerate(times):
        ref = aacgmv2.convert_mlt(mlon, t.astype(dt.datetime))
        diff = (ours[:, j] - ref + 12.0) % 24.0 - 12.0
        assert np.max(np.abs(diff)) < 1e-6


def test_mlt_from_hourly_nodes_matches_aacgmv2_at_every_step_of_a_season():
    # Reference: aacgmv2.convert_mlt asked at every 10-minute step (the exact path), over
    # a northern season and across a year's end and a clock change; the interpolated MLT
    # is within MLT_NODE_ERROR_S (15 s of MLT) everywhere.
    from auroraplan.nights import night_times

    times, _ = night_times(dt.date(2026, 9, 1), 225, "Europe/Oslo", 10)
    mlon = np.array([-150.0, 0.0, 106.2, 179.9])
    fast = magnetic.mlt(mlon, times)
    exact = magnetic.mlt(mlon, times, exact=True)
    for j in range(0, len(times), 997):  # the package asked for one time alone
        ref = aacgmv2.convert_mlt(mlon, times[j].astype(dt.datetime))
        for ours in (exact, fast):
            diff_s = np.abs((ours[:, j] - ref + 12.0) % 24.0 - 12.0) * 3600.0
            assert diff_s.max() < magnetic.MLT_NODE_ERROR_S
    error_s = np.abs((fast - exact + 12.0) % 24.0 - 12.0) * 3600.0
    assert error_s.max() < magnetic.MLT_NODE_ERROR_S
    assert error_s.max() > 0.0, "the fast path was taken"


def test_dates_past_the_coefficient_set_are_clamped_not_refused(capfd):
    # aacgmv2 covers 1990-2029; a 2031 date uses the last valid epoch and prints nothing.
    late, _ = magnetic.geo_to_aacgm(69.65, 18.96, 0.0, dt.datetime(2031, 6, 1))
    last, _ = magnetic.geo_to_aacgm(69.65, 18.96, 0.0, magnetic.VALID_UNTIL)
    assert late == pytest.approx(last, abs=1e-9)
    captured = capfd.readouterr()
    assert captured.out == "" and captured.err == ""


def test_a_2027_date_is_inside_the_coefficient_set_and_moves_little_from_2025():
    m25, _ = magnetic.geo_to_aacgm(69.65, 18.96, 0.0, dt.datetime(2025, 1, 1))
    m27, _ = magnetic.geo_to_aacgm(69.65, 18.96, 0.0, dt.datetime(2027, 1, 1))
    assert 0.0 < abs(m27 - m25) < 0.3
