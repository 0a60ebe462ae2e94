"""How likely the sky over each site is clear: hourly cloud forecasts, else monthly climatology."""

from __future__ import annotations

import numpy as np

from auroraplan.activity import utc_datetime64

MAX_REACH_H = 1.0
"""A forecast value is used up to this many hours from the nearest forecast hour; further
out (gaps, before the first hour, after the last) the forecast says nothing. Hourly
forecasts are bridged over one missing hour. Common practice, no source."""

DEFAULT_CLEAR = 0.35
"""P(clear) for a site with neither a cloud forecast nor a clear_by_month table: about one
minus the global mean cloud fraction of roughly two thirds seen by satellites (King et al.
2013, MODIS; from memory). Northern coasts in winter are cloudier, so a warning goes with
it."""


def clear_fraction(cloud_pct):
    """P(clear) from forecast total cloud cover.

    The fraction of sky expected free of cloud is taken as the chance that the line of
    sight to the aurora is clear: P = 1 - cloud_pct / 100. Common practice, no source;
    it ignores where in the sky the cloud is and how thick it is.

    Parameters
    ----------
    cloud_pct : array_like
        Total cloud cover, percent (0-100).

    Returns
    -------
    numpy.ndarray
        Probability 0-1; NaN stays NaN.
    """
    return 1.0 - np.clip(np.asarray(cloud_pct, dtype=float), 0.0, 100.0) / 100.0


def cloud_at(times_s, forecast_s, forecast_pct, reach_h=MAX_REACH_H):
    """Cloud cover at given times from one site's forecast hours.

    Linear between the two forecast hours around a time; a time further than ``reach_h``
    from every forecast hour gets NaN. Before the first and after the last hour the end
    value is held (never extrapolated along a slope) up to ``reach_h``.

    Parameters
    ----------
    times_s : numpy.ndarray of int (T,)
        Wanted times, seconds since 1970 UTC.
    forecast_s : numpy.ndarray of int (K,)
        Forecast times, seconds since 1970 UTC, ascending.
    forecast_pct : numpy.ndarray (K,)
        Cloud cover at those times, percent.
    reach_h : float
        Hours a forecast value reaches.

    Returns
    -------
    numpy.ndarray (T,)
        Cloud cover, percent; NaN where the forecast says nothing.
    """
    times_s = np.asarray(times_s, dtype=np.int64)
    if len(forecast_s) == 0:
        return np.full(times_s.shape, np.nan)
    after = np.clip(np.searchsorted(forecast_s, times_s), 0, len(forecast_s) - 1)
    before = np.clip(after - 1, 0, len(forecast_s) - 1)
    nearest = np.minimum(np.abs(forecast_s[after] - times_s), np.abs(times_s - forecast_s[before]))
    value = np.interp(times_s, forecast_s, forecast_pct)
    return np.where(nearest <= reach_h * 3600.0, value, np.nan)


def local_month_index(lon_deg, times_utc, tz=None):
    """Month (0 = January) at each site and time, for the monthly climatology.

    Parameters
    ----------
    lon_deg : array_like (N,)
        Site longitudes, degrees east.
    times_utc : array_like of datetime64 (T,)
    tz : str or None
        IANA zone of the operator; None uses mean solar time at each site's longitude
        (UTC + lon / 15 hours), which agrees with the civil date except within an hour or
        two of midnight.

    Returns
    -------
    numpy.ndarray of int (N, T)
    """
    times = utc_datetime64(times_utc)
    lon = np.asarray(lon_deg, dtype=float)
    if tz is not None:
        import pandas as pd

        local = pd.DatetimeIndex(times).tz_localize("UTC").tz_convert(tz).month.to_numpy() - 1
        return np.broadcast_to(local, (lon.size, times.size)).copy()
    shift = np.round(lon * 240.0).astype("timedelta64[s]")  # 240 s of time per degree
    local = times[None, :] + shift[:, None]
    return local.astype("datetime64[M]").astype(np.int64) % 12


def _forecast_by_site(clouds_df):
    """Site name -> (times in seconds, cloud percent), ascending in time; one pass."""
    if clouds_df is None or len(clouds_df) == 0:
        return {}
    times = utc_datetime64(clouds_df["time_utc"]).astype(np.int64)
    names = np.asarray(clouds_df["site"], dtype=object)
    pct = np.asarray(clouds_df["cloud_pct"], dtype=float)
    order = np.lexsort((times, names))
    names, times, pct = names[order], times[order], pct[order]
    cuts = np.flatnonzero(names[1:] != names[:-1]) + 1
    starts = np.concatenate([[0], cuts])
    ends = np.concatenate([cuts, [len(names)]])
    return {names[a]: (times[a:b], pct[a:b]) for a, b in zip(starts, ends, strict=True)}


def clear_probability(sites, clouds_df, times_utc, tz=None):
    """P(clear sky) per site and time.

    From the hourly cloud forecast where there is one (``cloud_at``, ``clear_fraction``);
    else the site's ``clear_by_month`` fraction for the local month; else
    ``DEFAULT_CLEAR`` with a warning naming the site.

    Parameters
    ----------
    sites : list of workspace.Site (N)
        Uses ``name``, ``lon`` and ``clear_by_month``.
    clouds_df : pandas.DataFrame or None
        Columns ``site``, ``time_utc`` (UTC) and ``cloud_pct``, as read by
        ``load_workspace``.
    times_utc : array_like of datetime64 (T,)
        UTC times.
    tz : str or None
        The operator's IANA zone for the local month; None = mean solar time per site.

    Returns
    -------
    p_clear : numpy.ndarray (N, T)
        Probability 0-1, never NaN.
    cloud_pct : numpy.ndarray (N, T)
        Forecast cloud cover, percent; NaN where there is no forecast.
    warnings : list of str
        One line per site that fell back to ``DEFAULT_CLEAR``.

    References
    ----------
    The clear-fraction rule and the interpolation reach: common practice, no source.
    """
    times = utc_datetime64(times_utc)
    times_s = times.astype(np.int64)
    forecasts = _forecast_by_site(clouds_df)
    empty = (np.array([], dtype=np.int64), np.array([], dtype=float))
    cloud = np.stack(
        [cloud_at(times_s, *forecasts.get(site.name, empty)) for site in sites]
    ) if sites else np.empty((0, times.size))

    climatology = np.array(
        [site.clear_by_month if site.clear_by_month is not None else [np.nan] * 12
         for site in sites], dtype=float,
    ).reshape(len(sites), 12)
    months = local_month_index([site.lon for site in sites], times, tz)
    monthly = np.take_along_axis(climatology, months, axis=1)
    fallback = np.where(np.isnan(monthly), DEFAULT_CLEAR, monthly)
    p_clear = np.where(np.isnan(cloud), fallback, clear_fraction(cloud))

    needs_default = np.isnan(cloud) & np.isnan(monthly)
    warnings = [
        f"site {site.name!r}: no cloud forecast and no clear_by_month for some hours; "
        f"using P(clear) = {DEFAULT_CLEAR}"
        for site, flag in zip(sites, needs_default.any(axis=1), strict=True) if flag
    ]
    return p_clear, cloud, warnings
