"""Geographic to AACGM-v2 magnetic coordinates and magnetic local time for many places at once.

AACGM-v2 (Shepherd 2014) is evaluated with the ``aacgmv2`` package. Its
coefficient set (IGRF-14 based, epochs 1590-2030 in steps of five years)
covers dates from 1990 up to, but not including, 2030: a date in 2027 is
interpolated between the 2025 and 2030 coefficient epochs, where the 2030
epoch itself comes from IGRF-14's secular variation (a forecast, good to a
few hundredths of a degree a year at auroral latitudes). From 2030 on the C
library prints a banner and refuses; we therefore clamp dates to the
package's range (``VALID_FROM`` .. ``VALID_UNTIL``) and say so in the
docstrings. Magnetic coordinates drift by well under 0.1 degree a year at
auroral latitudes, so the clamp is far below the size of the oval boundaries'
own uncertainty.

The package's log messages (altitude limits, array hints) are kept away from
users: every call goes through :func:`_quiet`.

References
----------
Shepherd, S. G. (2014), Altitude-adjusted corrected geomagnetic coordinates:
Definition and functional approximations, J. Geophys. Res. Space Physics,
119, 7501-7521, doi:10.1002/2014JA020264.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import logging

import aacgmv2
import numpy as np

# Date range of the aacgmv2 coefficient set (IGRF-14: 1990 up to 2030, exclusive).
VALID_FROM = dt.datetime(1990, 1, 1, tzinfo=dt.UTC)
VALID_UNTIL = dt.datetime(2029, 12, 31, 23, 0, tzinfo=dt.UTC)


@contextlib.contextmanager
def _quiet():
    """Silence the aacgmv2 logger and numpy's NaN warnings for the duration of a call."""
    logger = logging.getLogger("aacgmv2_logger")
    level = logger.level
    logger.setLevel(logging.CRITICAL + 1)
    try:
        with np.errstate(invalid="ignore", divide="ignore"):
            yield
    finally:
        logger.setLevel(level)


def as_utc_datetime(when) -> dt.datetime:
    """A naive UTC ``datetime`` within the coefficient range, from any common time type.

    Parameters
    ----------
    when : datetime, date, numpy.datetime64, str (ISO 8601) or None
        The epoch. Naive times are UTC. ``None`` means now.

    Returns
    -------
    datetime
        Naive UTC datetime clamped to ``VALID_FROM`` .. ``VALID_UNTIL``.
    """
    if when is None:
        value = dt.datetime.now(dt.UTC)
    elif isinstance(when, np.datetime64):
        seconds = when.astype("datetime64[s]").astype(np.int64)
        value = dt.datetime(1970, 1, 1, tzinfo=dt.UTC) + dt.timedelta(seconds=int(seconds))
    elif isinstance(when, str):
        from auroraplan.checks import parse_utc

        value = parse_utc(when)
    elif isinstance(when, dt.datetime):
        value = when
    elif isinstance(when, dt.date):
        value = dt.datetime(when.year, when.month, when.day)
    else:
        raise TypeError(f"cannot read {type(when).__name__} as a time")
    if value.tzinfo is None:
        value = value.replace(tzinfo=dt.UTC)
    value = min(max(value.astimezone(dt.UTC), VALID_FROM), VALID_UNTIL)
    return value.replace(tzinfo=None)


def _convert(lat, lon, height_km, when, code):
    lat = np.asarray(lat, dtype=float)
    lon = np.asarray(lon, dtype=float)
    lat_b, lon_b = np.broadcast_arrays(lat, lon)
    height = np.broadcast_to(np.asarray(height_km, dtype=float), lat_b.shape)
    epoch = as_utc_datetime(when)
    with _quiet():
        out_lat, out_lon, _ = aacgmv2.convert_latlon_arr(
            lat_b.ravel(), lon_b.ravel(), height.ravel(), epoch, method_code=code
        )
    return (np.asarray(out_lat, dtype=float).reshape(lat_b.shape),
            np.asarray(out_lon, dtype=float).reshape(lat_b.shape))


def geo_to_aacgm(lat, lon, height_km, when):
    """Geographic (geodetic) latitude/longitude to AACGM-v2 magnetic latitude/longitude.

    Parameters
    ----------
    lat, lon : array_like
        Geodetic latitude (degrees, north positive) and longitude (degrees,
        east positive); broadcast together.
    height_km : float or array_like
        Height above the WGS84 ellipsoid in km (0-2000).
    when : datetime, date, numpy.datetime64 or None
        Epoch of the magnetic field (UTC); clamped to the package's range
        1990-2029 (see the module notes).

    Returns
    -------
    mlat, mlon : ndarray
        AACGM-v2 latitude and longitude in degrees. Southern-hemisphere
        places get negative magnetic latitude. NaN near the magnetic equator,
        where AACGM is undefined.

    References
    ----------
    Shepherd (2014), J. Geophys. Res. Space Physics 119, 7501.
    """
    return _convert(lat, lon, height_km, when, "G2A")


def aacgm_to_geo(mlat, mlon, height_km, when, refine: int = 0):
    """AACGM-v2 magnetic latitude/longitude back to geographic latitude/longitude.

    Parameters
    ----------
    mlat, mlon : array_like
        AACGM-v2 latitude and longitude in degrees (southern hemisphere
        negative); keep ``|mlat|`` above about 35 degrees, where the
        inversion is defined.
    height_km : float or array_like
        Height of the point in km (for aurora: the emission height).
    when : datetime, date, numpy.datetime64 or None
        Epoch (UTC), clamped as in :func:`geo_to_aacgm`.
    refine : int
        Fixed-point corrections that make the result the inverse of
        :func:`geo_to_aacgm` (each costs one forward and one inverse conversion). The package's
        forward and inverse coefficient fits are separate approximations of
        field-line tracing: without refinement a round trip returns within
        about 0.1 degree (0.08 measured at Svalbard); one step brings it well
        under 0.01 degree.

    Returns
    -------
    lat, lon : ndarray
        Geodetic latitude and longitude in degrees.

    References
    ----------
    Shepherd (2014), J. Geophys. Res. Space Physics 119, 7501.
    """
    target_lat = np.asarray(mlat, dtype=float)
    target_lon = np.asarray(mlon, dtype=float)
    ask_lat, ask_lon = target_lat, target_lon
    lat, lon = _convert(ask_lat, ask_lon, height_km, when, "A2G")
    for _ in range(refine):
        # Shift the magnetic position we ask for by the forward map's miss; the inverse fit
        # then serves as its own Jacobian, and one step usually suffices.
        back_lat, back_lon = geo_to_aacgm(lat, lon, height_km, when)
        ask_lat = ask_lat + (target_lat - back_lat)
        ask_lon = ask_lon + ((target_lon - back_lon + 180.0) % 360.0 - 180.0)
        lat, lon = _convert(ask_lat, ask_lon, height_km, when, "A2G")
    return lat, lon


MLT_NODE_S = 3600
"""Spacing of the nodes from which :func:`mlt` interpolates, seconds (one hour).

The MLT of magnetic longitude 0 advances by about one hour per hour; what it adds to
that (the subsolar point's drift in magnetic longitude through the day and the year)
bends so slowly that cubic (four-point Lagrange) interpolation between hourly nodes
stays within
``MLT_NODE_ERROR_S`` of the package's value at every time (tests/test_magnetic.py
checks this against aacgmv2 at every 10-minute step of a season)."""

MLT_NODE_ERROR_S = 15.0
"""Largest difference allowed between interpolated and directly computed MLT, seconds
of MLT; far below the 15-minute resolution of the Kp-needed tables."""


def mlt(mlon, times_utc, exact=False):
    """Magnetic local time for every place and time, in hours.

    AACGM-v2 MLT depends on time only through the magnetic longitude of the
    subsolar point: MLT = 12 + (mlon - mlon_subsolar(t)) / 15 (Shepherd 2014,
    section 4.4; ``aacgmv2.convert_mlt``). We ask the package for the MLT of
    magnetic longitude 0 and add ``mlon / 15`` per place, so the cost is one
    package call per time, not per place and time. For a regular time grid with
    more times than hours, the package is asked at whole UTC hours only and the
    MLT of longitude 0 is interpolated between them (four-point Lagrange,
    unwrapped across midnight); the error is within ``MLT_NODE_ERROR_S``.

    Parameters
    ----------
    mlon : array_like, shape (N,)
        AACGM-v2 longitude in degrees.
    times_utc : array_like of datetime64 or datetime, shape (T,)
        UTC times (dates outside 1990-2029 are clamped).
    exact : bool
        Ask the package at every time (the reference the interpolation is tested against).

    Returns
    -------
    ndarray, shape (N, T)
        Magnetic local time in hours, 0 <= MLT < 24.

    References
    ----------
    Shepherd (2014), J. Geophys. Res. Space Physics 119, 7501.
    """
    mlon = np.atleast_1d(np.asarray(mlon, dtype=float))
    times = np.atleast_1d(np.asarray(times_utc))
    zero = None
    if not exact and times.dtype.kind == "M":
        zero = _mlt_at_zero_interpolated(times.astype("datetime64[s]"))
    if zero is None:
        zero = _mlt_at_zero(times)
    return np.mod(zero[None, :] + mlon[:, None] / 15.0, 24.0)


def _mlt_at_zero(times) -> np.ndarray:
    """MLT of magnetic longitude 0 at each time, one package call per time (T,)."""
    epochs = np.array([as_utc_datetime(t) for t in times], dtype=object)
    if not len(epochs):
        return np.zeros(0)
    with _quiet():
        return np.atleast_1d(np.asarray(aacgmv2.convert_mlt(np.zeros(len(epochs)), epochs),
                                        dtype=float))


def _mlt_at_zero_interpolated(times) -> np.ndarray | None:
    """:func:`_mlt_at_zero` from hourly nodes; None when nodes would not be fewer."""
    seconds = times.astype(np.int64)
    if seconds.size < 3:
        return None
    first = np.floor(seconds.min() / MLT_NODE_S) * MLT_NODE_S
    last = np.ceil(seconds.max() / MLT_NODE_S) * MLT_NODE_S
    if (last - first) / MLT_NODE_S + 4 >= seconds.size:
        return None
    from auroraplan.sky import lagrange4

    nodes = np.arange(first - MLT_NODE_S, last + 2 * MLT_NODE_S, MLT_NODE_S, dtype=np.int64)
    at_nodes = np.unwrap(_mlt_at_zero(nodes.astype("datetime64[s]")), period=24.0)
    position = (seconds - nodes[0]) / MLT_NODE_S
    return np.mod(lagrange4(at_nodes[:, None], position)[:, 0], 24.0)


def time_nearest_mlt(mlon, mlt_h, times_utc) -> np.ndarray:
    """For each place, the time of ``times_utc`` at which its MLT is closest to ``mlt_h``.

    Parameters
    ----------
    mlon : array_like, shape (N,)
        AACGM-v2 longitude in degrees.
    mlt_h : float or array_like, shape (N,)
        The magnetic local time sought, hours (0 is magnetic midnight).
    times_utc : ndarray of datetime64, shape (T,)
        The candidate UTC times, e.g. a night at 5-minute steps.

    Returns
    -------
    ndarray of datetime64, shape (N,)
        The first time of least circular distance in MLT (:func:`mlt`, Shepherd 2014).
    """
    times = np.atleast_1d(np.asarray(times_utc))
    site_mlt = mlt(mlon, times)
    target = np.broadcast_to(np.asarray(mlt_h, dtype=float), site_mlt.shape[:1])
    gap = np.abs((site_mlt - target[:, None] + 12.0) % 24.0 - 12.0)
    return times[np.argmin(gap, axis=1)]
