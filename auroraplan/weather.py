"""How likely the sky over each site is clear: hourly cloud forecasts, else monthly climatology."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from auroraplan import checks
from auroraplan.checks import setting
from auroraplan.nights import utc_datetime64

END_HOLD_H = 1.0
"""At the ends of a forecast, and beside a gap longer than ``WeatherSettings.max_gap_h``, the
nearest forecast value is held this many hours, never sloped; further out the forecast says
nothing. Common practice, no source."""

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


def cloud_at(times_s, forecast_s, forecast_pct, max_gap_h=6.0, hold_h=END_HOLD_H):
    """Cloud cover at given times from a forecast's steps (one site, or many sites at once).

    Linear between two consecutive forecast steps that are at most ``max_gap_h`` apart (so
    1-, 3- and 6-hourly forecasts are bridged by default); beside a longer gap and before the
    first or after the last step, the nearest step's value is held up to ``hold_h``; further
    out NaN (the forecast says nothing there). Common practice, no source.

    Parameters
    ----------
    times_s : numpy.ndarray of int (T,)
        Wanted times, seconds since 1970 UTC.
    forecast_s : numpy.ndarray of int (K,)
        Forecast times, seconds since 1970 UTC, ascending.
    forecast_pct : numpy.ndarray (K,) or (K, N)
        Cloud cover at those times, percent, for one site or N sites.
    max_gap_h, hold_h : float
        Longest gap bridged, hours; how long an end value is held, hours.

    Returns
    -------
    numpy.ndarray (T,) or (T, N)
        Cloud cover, percent; NaN where the forecast says nothing.
    """
    times_s = np.asarray(times_s, dtype=np.int64)
    forecast_s = np.asarray(forecast_s, dtype=np.int64)
    values = np.asarray(forecast_pct, dtype=float)
    shape = times_s.shape + values.shape[1:]
    if len(forecast_s) == 0:
        return np.full(shape, np.nan)
    k = len(forecast_s)
    after = np.clip(np.searchsorted(forecast_s, times_s), 0, k - 1)
    before = np.clip(np.searchsorted(forecast_s, times_s, side="right") - 1, 0, k - 1)
    gap = forecast_s[after] - forecast_s[before]
    frac = np.where(gap > 0, (times_s - forecast_s[before]) / np.where(gap > 0, gap, 1), 0.0)
    between = (forecast_s[before] <= times_s) & (times_s <= forecast_s[after]) \
        & (gap <= max_gap_h * 3600.0)
    d_before = np.abs(times_s - forecast_s[before])
    d_after = np.abs(forecast_s[after] - times_s)
    nearest = np.where(d_before <= d_after, before, after)
    held = np.minimum(d_before, d_after) <= hold_h * 3600.0
    expand = (slice(None),) + (None,) * (values.ndim - 1)
    linear = values[before] * (1 - frac)[expand] + values[after] * frac[expand]
    out = np.where(between[expand], linear, np.where(held[expand], values[nearest], np.nan))
    return out.reshape(shape)


def cloud_at_sites(times_s, forecasts, max_gap_h=6.0, hold_h=END_HOLD_H):
    """``cloud_at`` for many sites at once, each with its own forecast steps: (N, T).

    ``forecasts`` holds per site (times in seconds ascending, percent) or None. The same
    rule and the same arithmetic as ``cloud_at`` per site, worked out over all the sites'
    steps in one pass (each site's steps found by one search over a key that orders the
    sites one after another)."""
    times_s = np.asarray(times_s, dtype=np.int64)
    n = len(forecasts)
    out = np.full((n, times_s.size), np.nan)
    have = [i for i, f in enumerate(forecasts) if f is not None and len(f[0])]
    if not have or not times_s.size:
        return out
    f_s = np.concatenate([np.asarray(forecasts[i][0], np.int64) for i in have])
    f_pct = np.concatenate([np.asarray(forecasts[i][1], float) for i in have])
    sizes = np.array([len(forecasts[i][0]) for i in have])
    if (sizes == sizes[0]).all():  # one time axis shared by every site: cloud_at at once
        f_s, f_pct = f_s.reshape(len(have), sizes[0]), f_pct.reshape(len(have), sizes[0])
        if (f_s == f_s[0]).all():
            out[have] = cloud_at(times_s, f_s[0], f_pct.T, max_gap_h, hold_h).T
            return out
        f_s, f_pct = f_s.ravel(), f_pct.ravel()
    ends = np.cumsum(sizes)
    starts = ends - sizes
    low = min(int(f_s.min()), int(times_s.min()))
    span = max(int(f_s.max()), int(times_s.max())) - low + 1
    rank = np.repeat(np.arange(len(have), dtype=np.int64), sizes)
    key = rank * span + (f_s - low)
    want = np.arange(len(have), dtype=np.int64)[:, None] * span + (times_s - low)[None, :]
    first, last = starts[:, None], ends[:, None] - 1
    after = np.clip(np.searchsorted(key, want), first, last)
    before = np.clip(np.searchsorted(key, want, side="right") - 1, first, last)
    del want
    t_before, t_after = f_s[before], f_s[after]
    gap = t_after - t_before
    frac = np.where(gap > 0, (times_s - t_before) / np.where(gap > 0, gap, 1), 0.0)
    between = (t_before <= times_s) & (times_s <= t_after) & (gap <= max_gap_h * 3600.0)
    d_before = np.abs(times_s - t_before)
    d_after = np.abs(t_after - times_s)
    nearest = np.where(d_before <= d_after, before, after)
    held = np.minimum(d_before, d_after) <= hold_h * 3600.0
    linear = f_pct[before] * (1 - frac) + f_pct[after] * frac
    out[have] = np.where(between, linear, np.where(held, f_pct[nearest], np.nan))
    return out


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
        from auroraplan.nights import local_datetime64

        local = local_datetime64(times, tz).astype("datetime64[M]").astype(np.int64) % 12
        return np.broadcast_to(local, (lon.size, times.size)).copy()
    shift = np.round(lon * 240.0).astype("timedelta64[s]")  # 240 s of time per degree
    local = times[None, :] + shift[:, None]
    return local.astype("datetime64[M]").astype(np.int64) % 12


def _forecast_by_site(clouds_df, window=None):
    """Site name -> (times in seconds, cloud percent), ascending in time; one pass.

    ``window`` (first, last seconds): only rows within it are kept (the nights asked for,
    widened by the longest gap bridged and the end hold, so every value is as from the
    whole file). A ``csvcolumns.CloudTable`` is already in site and time order."""
    if clouds_df is None or len(clouds_df) == 0:
        return {}
    times = utc_datetime64(clouds_df["time_utc"]).astype(np.int64)
    names = np.asarray(clouds_df["site"], dtype=object)
    pct = np.asarray(clouds_df["cloud_pct"], dtype=float)
    if window is not None:
        keep = (times >= window[0]) & (times <= window[1])
        names, times, pct = names[keep], times[keep], pct[keep]
        if not len(names):
            return {}
    if getattr(clouds_df, "SORT", None) != ("site", "time_utc"):
        order = np.lexsort((times, names))
        names, times, pct = names[order], times[order], pct[order]
    cuts = np.flatnonzero(names[1:] != names[:-1]) + 1
    starts = np.concatenate([[0], cuts])
    ends = np.concatenate([cuts, [len(names)]])
    return {names[a]: (times[a:b], pct[a:b]) for a, b in zip(starts, ends, strict=True)}


CLOUDS_UNITS = ("percent", "fraction")


@dataclass(frozen=True)
class WeatherSettings:
    """Settings of the cloud stage, from operator.toml ``[weather]``.

    max_gap_h : float
        Longest gap between forecast steps that is interpolated (``cloud_at``), hours,
        0-24; default 6 bridges 1-, 3- and 6-hourly forecasts. Common practice, no source.
    layer_weights : (float, float, float)
        Share of low, medium and high cloud that hides the aurora (``weatherfiles.
        effective_layers``), each 0-1; default 1, 0.8, 0.5. An assumption.
    clouds_unit : str
        Unit of ``cloud_pct`` in clouds.csv: "percent" (default) or "fraction".
    sky_radius_km : float
        A sky reported at a site (``--sky``) ranks the models for sites this close, km;
        default 50. An assumption.
    sky_hours : float
        ... for this many hours after the report; default 6. An assumption.
    sky_sd_pct : float
        Model weight exp(-(error / sky_sd_pct)² / 2), percent; default 20. An assumption.
    """

    max_gap_h: float = setting(6.0, checks.number(0.0, 24.0, "hours"), "hours",
                               "longest gap between forecast steps that is interpolated")
    layer_weights: tuple = setting(
        (1.0, 0.8, 0.5), checks.numbers(("low", "medium", "high"), 0, 1, "(a share)"),
        "shares", "share of low, medium and high cloud that hides the aurora")
    clouds_unit: str = setting("percent", checks.choice(CLOUDS_UNITS), "name",
                               "unit of cloud_pct in clouds.csv")
    sky_radius_km: float = setting(50.0, checks.number(0.0, 1000.0, "km"), "km",
                                   "a reported sky ranks the models for sites this close")
    sky_hours: float = setting(6.0, checks.number(0.0, 24.0, "hours"), "hours",
                               "for this many hours after the report")
    sky_sd_pct: float = setting(20.0, checks.number(1.0, 100.0, "percent"), "percent",
                                "spread of the model weight around the reported sky")


@dataclass(frozen=True)
class SkyReport:
    """The sky seen now at a site (``--sky SITE=PCT``)."""

    site: str
    cloud_pct: float
    time_utc: np.datetime64
    lat: float
    lon: float


@dataclass
class CloudGrid:
    """Cloud per site (N) and time (T), with where each value came from."""

    p_clear: np.ndarray  # (N, T) 0..1, never NaN
    cloud_pct: np.ndarray  # (N, T) the figure used, percent; NaN = climatology
    source_code: np.ndarray  # (N, T) uint8: index into SOURCES, NO_SOURCE where none
    models: list  # (M,) model names
    model_pct: np.ndarray  # (M, N, T) each model's cloud (mean over its members); NaN = none
    model_weight: np.ndarray  # (M, N, T) weight of each model in the figure
    spread_pct: np.ndarray  # (N, T) largest minus smallest model value; NaN with < 2 models
    warnings: list = field(default_factory=list)
    note: str = ""  # one sentence: where the cloud figures come from
    tally: CloudTally | None = None  # what the warnings and the note rest on

    @property
    def source(self) -> np.ndarray:
        """(N, T) the source names ("clouds.csv", "models", "climatology", "default"; None
        where no figure was worked out)."""
        return source_names(self.source_code)


def blend_models(model_pct, weight):
    """The cloud figure and spread from several models' values.

    cloud = sum(w_m C_m) / sum(w_m) over the models with a value (each model one equally
    likely outcome unless a sky report re-weights them; an assumption), so P(clear) =
    1 - cloud / 100 is the weighted mean of the models' clear fractions (``clear_fraction``).
    spread = max C_m - min C_m over the models with a value; NaN with fewer than two.
    A model's C_m is the mean over its ensemble members.

    Parameters
    ----------
    model_pct, weight : numpy.ndarray (M, N, T)

    Returns
    -------
    cloud_pct, spread_pct : numpy.ndarray (N, T)
    """
    have = np.isfinite(model_pct)
    w = np.where(have, weight, 0.0)
    total = w.sum(axis=0)
    cloud = np.where(total > 0, (np.nan_to_num(model_pct) * w).sum(axis=0)
                     / np.where(total > 0, total, 1.0), np.nan)
    count = have.sum(axis=0)
    with np.errstate(invalid="ignore"):
        high = np.where(have, model_pct, -np.inf).max(axis=0, initial=-np.inf)
        low = np.where(have, model_pct, np.inf).min(axis=0, initial=np.inf)
    spread = np.where(count >= 2, high - low, np.nan)
    return cloud, spread


def models_at(series, times_s, settings=WeatherSettings()):
    """Each model's cloud (mean over members) at the sites and times.

    For every model and member, each time takes the newest run whose steps cover it
    (``cloud_at`` per run; runs in order of reference time); an hour that only the ends of
    runs reach (``END_HOLD_H``) takes the newest of those.

    Parameters
    ----------
    series : list of weatherfiles.Series
    times_s : numpy.ndarray of int (T,)

    Returns
    -------
    names : list of str (M,)
    model_pct : numpy.ndarray (M, N, T)
    used : dict
        Path -> bool: whether the file gave a value at any wanted time.
    """
    times_s = np.asarray(times_s, np.int64)
    names = sorted({s.model for s in series})
    n = series[0].cloud_pct.shape[1] if series else 0
    by_member = {}
    used = {}
    for s in sorted(series, key=lambda s: s.reference_utc):
        value = cloud_at(times_s, s.valid_utc.astype(np.int64), s.cloud_pct,
                         settings.max_gap_h).T  # (N, T)
        key = (s.model, s.member)
        current = by_member.setdefault(key, np.full((n, times_s.size), np.nan))
        fresh = np.isfinite(value)
        if s.valid_utc.size:  # a newer run overrides inside its own steps, fills outside
            first, last = s.valid_utc[[0, -1]].astype(np.int64)
            fresh &= ((times_s >= first) & (times_s <= last))[None, :] | np.isnan(current)
        current[fresh] = value[fresh]
        used[s.file] = used.get(s.file, False) or bool(fresh.any())
    model_pct = np.full((len(names), n, times_s.size), np.nan)
    for m, name in enumerate(names):
        stack = np.array([v for (model, _), v in by_member.items() if model == name])
        with np.errstate(invalid="ignore"):
            have = np.isfinite(stack).sum(axis=0)
            model_pct[m] = np.where(have > 0, np.nansum(stack, axis=0) / np.maximum(have, 1),
                                    np.nan)
    return names, model_pct, used


def _great_circle_km(lat1, lon1, lat2, lon2):
    """Haversine distance on a sphere of radius 6371 km (mean Earth radius, IUGG)."""
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dp, dl = p2 - p1, np.radians(np.asarray(lon2) - np.asarray(lon1))
    a = np.sin(dp / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl / 2) ** 2
    return 2 * 6371.0 * np.arcsin(np.sqrt(np.clip(a, 0, 1)))


def sky_weights(sites, times_s, names, reports, at_report, settings=WeatherSettings()):
    """Model weights (M, N, T) after the sky seen at sites now, and one line per report.

    For each report, each model's error e_m = |C_m(report site, report time) - observed|,
    and its weight w_m = exp(-(e_m / sky_sd_pct)² / 2) (a Gaussian likelihood of the
    observation; an assumption), scaled so the best model weighs 1, applied at sites within
    ``sky_radius_km`` of the reported site for ``sky_hours`` after the report; the nearest
    report counts where several reach a site. Everywhere else every model weighs 1.

    Parameters
    ----------
    sites : list of Site (N)
    times_s : numpy.ndarray of int (T,)
    names : list of str (M,)
    reports : list of SkyReport (R)
    at_report : numpy.ndarray (M, R)
        Each model's cloud at each report's place and time, percent (NaN = no value).
    """
    weight = np.ones((len(names), len(sites), len(times_s)))
    lines = []
    if not reports:
        return weight, lines
    if not names:
        return weight, [f"sky reported at {', '.join(r.site for r in reports)}: no "
                        "weather-model files to compare with; the report is not used"]
    lat = np.array([s.lat for s in sites], float)
    lon = np.array([s.lon for s in sites], float)
    best_km = np.full(len(sites), np.inf)
    for r, report in enumerate(reports):
        seen = at_report[:, r]
        if not np.isfinite(seen).any():
            lines.append(f"sky reported at {report.site}: no model covers it at the report "
                         "time; the report is not used")
            continue
        error = np.abs(seen - report.cloud_pct)
        w = np.where(np.isfinite(error), np.exp(-0.5 * (error / settings.sky_sd_pct) ** 2), 0.0)
        w = np.where(np.isfinite(error), w / w.max(), 1.0)
        km = _great_circle_km(report.lat, report.lon, lat, lon)
        near = (km <= settings.sky_radius_km) & (km < best_km)
        best_km = np.where(near, km, best_km)
        t0 = np.datetime64(report.time_utc, "s").astype(np.int64)
        soon = (times_s >= t0) & (times_s <= t0 + settings.sky_hours * 3600)
        mask = near[:, None] & soon[None, :]
        weight[:, mask] = w[:, None]
        ranked = sorted(zip(names, w, error, strict=True), key=lambda x: -x[1])
        told = ", ".join(f"{n} weight {v:.2f}" + (f" (off by {e:.0f} points)"
                                                 if np.isfinite(e) else " (no value)")
                         for n, v, e in ranked)
        lines.append(f"sky reported at {report.site}: {report.cloud_pct:.0f} % cloud; for the "
                     f"next {settings.sky_hours:g} h at {int(near.sum())} site(s) within "
                     f"{settings.sky_radius_km:g} km the models count as: {told}")
    return weight, lines


def models_at_reports(series, names, reports, settings=WeatherSettings()):
    """Each model's cloud at each report's place and time (M, R); ``series`` were read at
    the reports' places, in the order of ``reports``."""
    out = np.full((len(names), len(reports)), np.nan)
    for r, report in enumerate(reports):
        t = np.array([np.datetime64(report.time_utc, "s").astype(np.int64)])
        got_names, values, _ = models_at(series, t, settings)
        for m, name in enumerate(got_names):
            if name in names:
                out[names.index(name), r] = values[m, r, 0]
    return out


SOURCES = np.array(["clouds.csv", "models", "climatology", "default"], dtype=object)
"""The sources of a cloud figure, in order of trust; ``CloudGrid.source_code`` holds their
index (one byte per site and step)."""
NO_SOURCE = 255
"""``CloudGrid.source_code`` where no figure was worked out (steps left out of the work)."""


def source_names(code) -> np.ndarray:
    """The source names of ``source_code`` values (None for ``NO_SOURCE``)."""
    code = np.asarray(code)
    names = np.full(code.shape, None, dtype=object)
    known = code != NO_SOURCE
    names[known] = SOURCES[code[known]]
    return names


def sources_used(code) -> set:
    """The names of the sources among ``source_code`` values, by looking for each code (no
    sort over the sites and steps)."""
    code = np.asarray(code)
    return {name for c, name in enumerate(SOURCES) if (code == c).any()}


def cloud_grid(sites, clouds_df, times_utc, tz=None, reading=None, reports=(),
               settings=WeatherSettings(), report_reading=None):
    """Cloud and P(clear sky) per site and time, from every source, with provenance.

    Order of preference per site and time: clouds.csv (interpolated by ``cloud_at``; it
    overrides the model files), else the weather-model files (``blend_models``), else the
    site's ``clear_by_month`` for the local month, else ``DEFAULT_CLEAR`` with a warning.

    Parameters
    ----------
    sites : list of workspace.Site (N)
    clouds_df : pandas.DataFrame or None
        Columns ``site``, ``time_utc`` (UTC), ``cloud_pct`` (percent).
    times_utc : array_like of datetime64 (T,)
    tz : str or None
        The operator's IANA zone for the local month; None = mean solar time per site.
    reading : weatherfiles.FileReading or None
        Series read from the weather-model files for these sites.
    reports : sequence of SkyReport
    settings : WeatherSettings
    report_reading : weatherfiles.FileReading or None
        The files read at the reports' places (in their order); None reads each report's
        value from ``reading`` at the site of the same name.

    Returns
    -------
    CloudGrid
    """
    times = utc_datetime64(times_utc)
    times_s = times.astype(np.int64)
    n = len(sites)
    reach = 3600 * max(settings.max_gap_h, END_HOLD_H)
    forecasts = _forecast_by_site(clouds_df, (times_s.min() - reach, times_s.max() + reach)
                                  if times_s.size else None)
    csv_cloud = cloud_at_sites(times_s, [forecasts.get(site.name) for site in sites],
                               settings.max_gap_h)

    series = reading.series if reading is not None else []
    names, model_pct, used = models_at(series, times_s, settings)
    files = {}
    for path, gave in used.items():
        mine = [s.valid_utc for s in series if s.file == path and s.valid_utc.size]
        files[path] = (gave, min((v[0] for v in mine), default=None),
                       max((v[-1] for v in mine), default=None))
    reports = list(reports)
    if report_reading is not None:
        at_report = models_at_reports(report_reading.series, names, reports, settings)
    else:
        index = {site.name: i for i, site in enumerate(sites)}
        at_report = np.full((len(names), len(reports)), np.nan)
        for r, report in enumerate(reports):
            if report.site in index:
                t = np.array([np.datetime64(report.time_utc, "s").astype(np.int64)])
                at_report[:, r] = models_at(series, t, settings)[1][:, index[report.site], 0]
    weight, sky_lines = sky_weights(sites, times_s, names, reports, at_report, settings)
    model_cloud, spread = blend_models(model_pct, weight) if names else (
        np.full((n, times.size), np.nan), np.full((n, times.size), np.nan))

    climatology = np.array(
        [site.clear_by_month if site.clear_by_month is not None else [np.nan] * 12
         for site in sites], dtype=float,
    ).reshape(n, 12)
    if tz is not None:  # one local month per time for every site
        from auroraplan.nights import local_datetime64

        monthly = climatology[:, local_datetime64(times, tz).astype("datetime64[M]")
                              .astype(np.int64) % 12]
    else:
        monthly = np.take_along_axis(
            climatology, local_month_index([site.lon for site in sites], times), axis=1)
    fallback = np.where(np.isnan(monthly), DEFAULT_CLEAR, monthly)

    from_csv = np.isfinite(csv_cloud)
    from_models = ~from_csv & np.isfinite(model_cloud)
    cloud = np.where(from_csv, csv_cloud, model_cloud)
    p_clear = np.where(np.isnan(cloud), fallback, clear_fraction(cloud))
    code = np.where(np.isnan(monthly), np.uint8(3), np.uint8(2))
    code[from_models] = 1
    code[from_csv] = 0
    tally = CloudTally(
        lines=list(reading.warnings) if reading is not None else [], files=files,
        sky_lines=sky_lines, names=list(names),
        model_seen=np.isfinite(model_pct).any(axis=(0, 2)) if names else np.zeros(n, bool),
        overlap=(from_csv & np.isfinite(model_cloud)).any(axis=1),
        needs_default=(np.isnan(cloud) & np.isnan(monthly)).any(axis=1),
        used=sources_used(code), have_values=bool(np.isfinite(model_pct).any()),
        told=reading is not None or clouds_df is not None)
    return CloudGrid(p_clear=p_clear, cloud_pct=cloud, source_code=code, models=names,
                     model_pct=model_pct, model_weight=weight, spread_pct=spread,
                     warnings=tally.warnings(sites), note=tally.note(), tally=tally)


@dataclass
class CloudTally:
    """What the warnings and the note of a ``CloudGrid`` rest on, in a form that runs of
    time steps worked out one after another join into the whole (``join``), so that a
    week worked night by night says what one grid over the week would say."""

    lines: list  # the files' own warnings
    files: dict  # path -> (gave a value at some step, first valid time, last valid time)
    sky_lines: list  # one line per sky report (sky_weights)
    names: list  # model names
    model_seen: np.ndarray  # (N,) bool: some model has a value at the site at some step
    overlap: np.ndarray  # (N,) bool: clouds.csv and a model both have a value at some step
    needs_default: np.ndarray  # (N,) bool: DEFAULT_CLEAR stands in at some step
    used: set  # the source names among the figures
    have_values: bool  # some model has a value somewhere
    told: bool  # clouds.csv or weather files were given

    def join(self, other: CloudTally) -> CloudTally:
        """The tally over this grid's steps and ``other``'s (same sites and files)."""
        return CloudTally(
            lines=list(dict.fromkeys(self.lines + other.lines)),
            files={p: (self.files.get(p, (False,))[0] or other.files.get(p, (False,))[0],
                       *(self.files.get(p) or other.files[p])[1:])
                   for p in dict.fromkeys([*self.files, *other.files])},
            sky_lines=list(dict.fromkeys(self.sky_lines + other.sky_lines)),
            names=self.names or other.names, model_seen=self.model_seen | other.model_seen,
            overlap=self.overlap | other.overlap,
            needs_default=self.needs_default | other.needs_default,
            used=self.used | other.used, have_values=self.have_values or other.have_values,
            told=self.told or other.told)

    def warnings(self, sites) -> list:
        """The grid's warnings, in order: the files', files that gave nothing, the sky
        reports, sites no model covers, where clouds.csv wins, where the default stands."""
        lines = list(self.lines)
        for path, (gave, first, last) in self.files.items():
            if not gave:
                lines.append(f"{path}: its valid times ({first}Z to {last}Z) miss the nights "
                             "asked for; the file is not used")
        lines.extend(self.sky_lines)
        if self.names:
            missed = [site.name for site, seen in zip(sites, self.model_seen, strict=True)
                      if not seen]
            if missed and len(missed) < len(sites):
                lines.append(f"weather-model files: no grid covers {', '.join(missed)}; "
                             "cloud there comes from clouds.csv or climatology")
        if self.overlap.any():
            lines.append(f"clouds.csv overrides the weather-model files at "
                         f"{int(self.overlap.sum())} site(s) for the hours it covers")
        lines.extend(
            f"site {site.name!r}: no cloud forecast and no clear_by_month for some hours; "
            f"using P(clear) = {DEFAULT_CLEAR}"
            for site, flag in zip(sites, self.needs_default, strict=True) if flag)
        return lines

    def note(self) -> str:
        """One sentence saying where the cloud figures come from (``source_note``), or ""
        when neither clouds.csv nor weather files were given."""
        return source_note(self.used, self.names, self.have_values) if self.told else ""


def source_note(used, names, have_values=False) -> str:
    """One sentence saying where the cloud figures come from: ``used`` is the set of source
    names (``sources_used``) in the figures."""
    used = set(used)
    parts = []
    if "clouds.csv" in used:
        parts.append("clouds.csv" + (" (it wins over the weather models)" if names else ""))
    if names and "models" in used:
        parts.append(f"weather models {', '.join(names)}"
                     + (" (their mean; spread = largest minus smallest)" if len(names) > 1 else ""))
    elif names and have_values:
        parts.append(f"weather models {', '.join(names)} shown beside it")
    elif names:
        parts.append(f"weather models {', '.join(names)} (no value for these hours)")
    else:
        parts.append("no weather-model files")
    if used & {"climatology", "default"}:
        parts.append("the monthly climate average where no forecast reaches")
    return "Cloud: " + "; ".join(parts) + "."


def clear_probability(sites, clouds_df, times_utc, tz=None, reading=None, reports=(),
                      settings=WeatherSettings()):
    """P(clear sky) per site and time: ``cloud_grid`` without the provenance.

    Returns
    -------
    p_clear : numpy.ndarray (N, T)
        Probability 0-1, never NaN.
    cloud_pct : numpy.ndarray (N, T)
        Forecast cloud cover, percent; NaN where there is no forecast.
    warnings : list of str

    References
    ----------
    The clear-fraction rule and the interpolation in time: common practice, no source.
    """
    grid = cloud_grid(sites, clouds_df, times_utc, tz, reading, reports, settings)
    return grid.p_clear, grid.cloud_pct, grid.warnings
