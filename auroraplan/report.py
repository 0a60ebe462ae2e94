"""Building the plan records (auroraplan/plans.py) that the commands print and the renderers draw.

Each builder runs the stages of the pipeline for one question (tonight, a week, a season,
the site table) and turns arrays into the records' fields; the views compute nothing and
this module imports nothing from ``render``.
"""

from __future__ import annotations

import datetime as dt
import math
from zoneinfo import ZoneInfo

import numpy as np

from auroraplan import plans
from auroraplan.cautions import CAUTIONS, FORECAST_NOT_PROMISE
from auroraplan.wording import chance_in_words, compass_point

DEFAULT_STEP_MIN = 10

# The sun has set when its centre is 0.833° below the horizon: 34' of refraction and a
# 16' semi-diameter (the U.S. Naval Observatory's convention for sunrise and sunset).
SUNSET_ALT_DEG = -0.833

NO_DARKNESS_WORDS = {
    "midnight sun": "midnight sun (the sun does not set)",
    "bright night": "bright summer nights (the sun sets but stays above {deg:g}°)",
    "outside outings": "dark only outside the outing hours {hours}",
}


def _latitude_text(lat: float) -> str:
    return f"{abs(lat):.1f}° {'N' if lat >= 0 else 'S'}"


def _date_spans(dates: list[str]) -> str:
    """'2027-06-18 to 2027-06-20, 2027-06-23' from a sorted list of ISO dates."""
    spans: list[list[dt.date]] = []
    for d in (dt.date.fromisoformat(x) for x in dates):
        if spans and (d - spans[-1][-1]).days == 1:
            spans[-1].append(d)
        else:
            spans.append([d])
    return ", ".join(s[0].isoformat() if len(s) == 1 else f"{s[0]} to {s[-1]}" for s in spans)


def no_darkness(grid, dates, level: str, lat: float, outing) -> dict:
    """The nights on which no site gets dark enough during the outing hours, and why.

    A night is "midnight sun" when the sun's centre stays above −0.833° at every
    site (USNO sunset convention), "bright night" when it sets but never reaches
    the operator's darkness level (e.g. −12° nautical), and "outside outings" when
    it is dark only outside the outing hours.

    Returns
    -------
    dict
        ``nights`` [{date, reason, sun_lowest_deg}] and ``note``: one plain
        sentence for screens and paper, or None when every night has darkness.
    """
    from auroraplan import sky

    rows = []
    for d, date in enumerate(dates):
        cols = grid.night_index == d
        if not cols.any() or (grid.darkness[:, cols] > 0).any():
            continue
        lowest = float(np.min(grid.sun_alt[:, cols])) if grid.sun_alt.size else float("nan")
        if grid.dark_sky[:, cols].any():
            reason = "outside outings"
        elif lowest > SUNSET_ALT_DEG:
            reason = "midnight sun"
        else:
            reason = "bright night"
        rows.append(plans.NoDarkNight(date.isoformat(), reason, _num(lowest, 1)))
    if not rows:
        return {"nights": (), "note": None}
    deg = sky.DARKNESS_DEG[level]
    hours = f"({grid.outing_hours or outing.text()})"
    parts = []
    for reason, words in NO_DARKNESS_WORDS.items():
        got = [r.date for r in rows if r.reason == reason]
        if got:
            parts.append(f"{words.format(deg=deg, hours=hours)} on {_date_spans(got)}")
    which = "this night" if len(dates) == 1 else (
        "any of these nights" if len(rows) == len(dates) else f"{len(rows)} of {len(dates)} nights")
    note = (f"No {level} darkness (sun below {deg:g}°) on {which} at {_latitude_text(lat)}: "
            + "; ".join(parts) + ". The aurora cannot be seen in a sky this bright; "
            "no outings can be planned then.")
    return {"nights": tuple(rows), "note": note}


def all_closed_note(ws) -> str | None:
    """One line when every site is closed, saying what to do; None otherwise."""
    if not ws.sites or any(not s.closed for s in ws.sites):
        return None
    path = ws.files.get("sites")
    name = path.name if path else "sites.geojson"
    return (f"All {len(ws.sites)} sites in {name} are closed, so there is nothing to rank or "
            f"plan; set \"closed\": false on a site that is safe to use, or add a site.")


def local_iso(t64, tz: str) -> str | None:
    """A UTC datetime64 as local ISO 8601 with offset, to the minute; None for NaT."""
    if t64 is None or np.isnat(t64):
        return None
    seconds = int(np.asarray(t64, dtype="datetime64[s]").astype(np.int64))
    t = dt.datetime.fromtimestamp(seconds, dt.UTC).astimezone(ZoneInfo(tz))
    return t.replace(second=0, microsecond=0).isoformat(timespec="minutes")


def utc_iso(t64) -> str | None:
    """A datetime64 as ISO 8601 UTC with a Z."""
    if t64 is None or np.isnat(t64):
        return None
    return str(np.asarray(t64, dtype="datetime64[s]")) + "Z"


def _num(x, digits=3):
    """A float for JSON: rounded, None for NaN or infinity."""
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    return round(x, digits) + 0.0  # + 0.0 turns a rounded -0.0 into 0.0


def made_at(tz: str, now: dt.datetime | None = None) -> str:
    """The time a report is made, local ISO 8601."""
    now = now or dt.datetime.now(dt.UTC)
    return now.astimezone(ZoneInfo(tz)).isoformat(timespec="minutes")


def forecast_info(ws, kinds, times_utc=None) -> plans.ForecastSource:
    """Which forecast a report was made from, for the people who read it.

    Parameters
    ----------
    ws : Workspace
    kinds : sequence of str
        "forecast" | "outlook" | "none" per night or per time step.
    times_utc : ndarray of datetime64, optional
        The time of each entry of ``kinds`` (dark steps). With it, outlook
        steps that fall between the forecast's first and last blocks are
        named as gaps in the forecast, with their local hours.
    """
    df = ws.activity
    kinds = list(kinds)
    kind_set = set(kinds)
    kind = "forecast" if kind_set == {"forecast"} else (
        "outlook" if "outlook" in kind_set else ("forecast" if "forecast" in kind_set else "none"))
    first = last = None
    gaps: list[str] = []
    if df is not None and len(df):
        from auroraplan.nights import utc_datetime64

        starts = utc_datetime64(df["start_utc"])
        first_t, last_t = starts.min(), starts.max()
        first, last = utc_iso(first_t), utc_iso(last_t)
        if times_utc is not None:
            gaps = _forecast_gaps(np.asarray(times_utc, "datetime64[s]"), np.asarray(kinds),
                                  first_t, last_t, ws.operator.timezone)
    file = ws.files.get("activity")
    notes = {
        "forecast": "Kp from the forecast file for every dark hour.",
        "outlook": "Nights beyond the Kp forecast use the Kp climatology (outlook), not a forecast.",
        "none": "No Kp forecast covers these nights.",
    }
    if gaps:
        note = (f"The Kp forecast has a gap at {', '.join(gaps)}: those hours use the outlook "
                "from Kp climatology, the other hours the forecast.")
    elif "forecast" in kind_set and "outlook" in kind_set:
        note = "Kp forecast where it reaches; later nights are an outlook from Kp climatology."
    else:
        note = notes[kind]
    issued = ws.settings.activity.issued_utc
    if isinstance(issued, dt.datetime):
        issued = issued.astimezone(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    return plans.ForecastSource(
        file=str(file.name) if file else None,
        # When the forecast was made: [activity] issued_utc, else the start of its first block.
        issued_utc=issued or first,
        first_block_utc=first,
        last_block_utc=last,
        kind=kind,
        gaps=tuple(gaps),
        note=note,
    )


def _forecast_gaps(times, kinds, first_block, last_block, tz) -> list[str]:
    """Local spans 'HH:MM–HH:MM' of outlook steps between a forecast's first and last block."""
    from auroraplan.wording import time_span

    inside = (kinds == "outlook") & (times >= first_block) & (times < last_block)
    spans, start = [], None
    step = np.median(np.diff(times)) if times.size > 1 else np.timedelta64(600, "s")
    for i, flag in enumerate(inside):
        if flag and start is None:
            start = i
        if start is not None and (not flag or i == len(inside) - 1
                                  or times[i + 1] - times[i] > step):
            end = i if flag else i - 1
            spans.append(time_span(local_iso(times[start], tz), local_iso(times[end] + step, tz)))
            start = None
    return spans


def base_info(ws) -> plans.Base:
    op = ws.operator
    return plans.Base(op.base_name, op.base_lat, op.base_lon, op.timezone)


def _grid_for_nights(ws, sites, first_night, nights, step_min, climatology, nowcast=None,
                     outlook_only=False, all_steps=False):
    """The chance grid and night summaries; ``outlook_only`` leaves out the Kp and cloud
    forecasts (climatology alone, as the season outlook); ``all_steps`` works out the look
    and the Kp needed at every step, not only around the dark outing hours (a timeline)."""
    from auroraplan import chance
    from auroraplan import nights as nights_mod

    times, night_index = nights_mod.night_times(first_night, nights, ws.operator.timezone,
                                                step_min)
    grid = chance.compute_grid(
        sites, times, night_index, step_min, tz=ws.operator.timezone, settings=ws.settings,
        activity=None if outlook_only else ws.activity, climatology=climatology,
        nowcast=nowcast, cloud=None if outlook_only else cloud_for(ws, sites, times),
        all_steps=all_steps,
    )
    summary = chance.summarise_nights(grid, nights, ws.settings.chance)
    return grid, summary


def cloud_for(ws, sites, times_utc):
    """weather.CloudGrid for the sites: clouds.csv, the weather-model files and sky reports
    of the workspace."""
    from auroraplan import weather
    from auroraplan.chance import site_arrays

    settings = ws.settings.weather
    arr = site_arrays(sites)
    reading = at_reports = None
    if ws.weather_files:
        from auroraplan.weatherfiles import read_cached, read_for_workspace

        index = {site.name: i for i, site in enumerate(ws.sites)}
        if all(site.name in index and (ws.sites[index[site.name]].lat,
                                       ws.sites[index[site.name]].lon) == (site.lat, site.lon)
               for site in sites):
            reading = read_for_workspace(ws, settings).for_sites([index[s.name] for s in sites])
        else:  # a place that is not one of the sites (the base)
            reading = read_cached(ws.weather_files, arr["lat"], arr["lon"],
                                  settings.layer_weights)
        if ws.sky_reports:
            at_reports = read_cached(ws.weather_files, [r.lat for r in ws.sky_reports],
                                     [r.lon for r in ws.sky_reports], settings.layer_weights)
    return weather.cloud_grid(sites, ws.clouds, times_utc, tz=ws.operator.timezone,
                              reading=reading, reports=ws.sky_reports, settings=settings,
                              report_reading=at_reports)


def workspace_climatology(ws=None):
    """The Kp climatology: from the workspace's own history file when operator.toml names
    one in [activity] history_file, else from the bundled history."""
    from pathlib import Path

    from auroraplan import climatology
    from auroraplan.errors import InputError

    name = ws.settings.activity.history_file if ws else None
    if not name:
        return climatology.bundled_climatology()
    path = Path(ws.path) / name
    if not path.is_file():
        raise InputError(f"operator.toml: [activity] history_file {name!r}: no such file in "
                         f"{ws.path}; give a file in the CelesTrak space-weather format")
    return climatology.kept_climatology(path)


# ---------------------------------------------------------------------------
# tonight


def tonight_report(ws, date: dt.date, top: int | None = None, now=None, climatology=None,
                   solar_wind=None, keep_chances=None) -> plans.TonightSheet:
    """Tonight's shortlist for the guide: open sites ranked by chance.

    ``solar_wind`` (a ``workspace.SolarWindFile``) lays the Kp estimated from upstream
    measurements over the forecast for the hours it covers; the report's ``nowcast``
    block says from when and until when. ``keep_chances(parts)``, when given, receives
    the chances computed (``archive.issued_part`` of the grid: the forecast archive).
    """
    tz = ws.operator.timezone
    sites = [s for s in ws.sites if not s.closed]
    closed_note = all_closed_note(ws)
    if climatology is None:
        climatology = workspace_climatology(ws)
    cast = solar_wind_estimate(solar_wind, ws.settings.nowcast)
    # With every site closed the night is still described, at the base.
    grid, summary = _grid_for_nights(ws, sites or [_base_site(ws)], date, 1, DEFAULT_STEP_MIN,
                                     climatology, nowcast=cast)
    if keep_chances and sites:
        from auroraplan import archive

        keep_chances([archive.issued_part(grid, summary, [s.name for s in sites], [date],
                                          ws.settings.chance.decorrelation_min)])
    order = rank_sites(summary.p_any[:, 0]) if sites else []
    if top:
        order = order[:top]
    dark_cols = np.flatnonzero(grid.dark_sky.any(axis=0))
    rows = []
    for rank, i in enumerate(order, start=1):
        rows.append(_tonight_site(ws, grid, summary, sites[i], i, rank, tz))
    dark_any = grid.darkness.any(axis=0)
    dark_note = no_darkness(grid, [date], ws.settings.viewing.darkness, ws.operator.base_lat,
                            ws.settings.outing)
    return plans.TonightSheet(
        kind="tonight",
        operator=ws.operator.name,
        base=base_info(ws),
        date=date.isoformat(),
        made_at=made_at(tz, now),
        forecast=forecast_info(ws, grid.kind[dark_any], grid.times_utc[dark_any])
        if dark_any.any() else forecast_info(ws, grid.kind),
        darkness_level=ws.settings.viewing.darkness,
        dark_start=local_iso(grid.times_utc[dark_cols[0]], tz) if dark_cols.size else None,
        dark_end=(local_iso(grid.times_utc[dark_cols[-1]] + np.timedelta64(DEFAULT_STEP_MIN, "m"), tz)
                  if dark_cols.size else None),
        moon_illumination=_num(np.mean(grid.moon_illumination), 2),
        outing_hours=outing_hours_info(grid, ws.settings.outing),
        darkness_note=dark_note["note"],
        no_darkness=dark_note["nights"],
        closed_note=closed_note,
        nowcast=nowcast_info(cast, solar_wind, grid, tz),
        sites=tuple(rows),
        chance_terms=CHANCE_TERMS,
        chance_explained=CHANCE_EXPLAINED,
        cloud_note=grid.cloud_note,
        cloud_models=tuple(grid.cloud_models),
        warnings=tuple(dict.fromkeys(ws.warnings + grid.warnings)),
        cautions=tuple(CAUTIONS),
        notice=FORECAST_NOT_PROMISE,
    )


def _base_site(ws):
    """An open-horizon viewing point at the base, with the sites' median sky and climate."""
    from auroraplan.workspace import Site

    months = [s.clear_by_month for s in ws.sites if s.clear_by_month]
    clear = tuple(np.mean(np.array(months, float), axis=0)) if months else None
    sky_mags = [s.sky_mag for s in ws.sites] or [21.0]
    op = ws.operator
    return Site(name=op.base_name, lat=op.base_lat, lon=op.base_lon,
                sky_mag=float(np.median(sky_mags)), clear_by_month=clear)


def rank_sites(chance, among=None) -> list[int]:
    """Site indices by descending chance (NaN last), ties by input order: the one ranking
    of sites on every page, table and plan. ``among`` (bool per site) keeps only those."""
    key = np.nan_to_num(np.asarray(chance, float), nan=-1.0)
    order = np.lexsort((np.arange(len(key)), -key))
    if among is not None:
        order = order[np.asarray(among, bool)[order]]
    return [int(i) for i in order]


CHANCE_TERMS = {
    "chance": "chance of a sighting during the outing window",
    "chance_in_hour": "chance of a sighting in this hour",
    "chance_by_time": "chance of a sighting by this time",
}
"""The three chance figures, each with one name and one definition wherever shown:
``chance`` is P(at least one display seen) over the night's dark outing hours at a
site; ``chance_in_hour`` the same over one clock hour; ``chance_by_time`` the same
from the start of the night up to a time (it ends at ``chance``)."""

CHANCE_EXPLAINED = (
    "The night's figure is the chance of a sighting during the outing window; each hour's "
    "bar is the chance of a sighting in that hour alone, so the night's figure is higher "
    "than any one hour's."
)

OVERHEAD_WORDS = "overhead; the whole sky, watch toward the equator too"


def look_fields(grid, i, step) -> dict:
    """Where to look at site ``i`` and time step ``step``, for the Kp forecast then.

    ``look_words`` says it in one phrase: the compass point and height, or
    ``OVERHEAD_WORDS`` when the band is over the site.
    """
    az = grid.look_azimuth_deg[i, step]
    el = grid.look_elevation_deg[i, step]
    overhead = bool(grid.overhead[i, step])
    words = None
    if overhead:
        words = OVERHEAD_WORDS
    elif np.isfinite(az):
        words = f"{compass_point(az)} {round(float(az)) % 360}°"
        if np.isfinite(el):
            words += f", {round(float(el))}° up"
    return {
        "look_azimuth": _num(az, 0),
        "look_compass": compass_point(az) if np.isfinite(az) else None,
        "look_elevation": _num(el, 0),
        "overhead": overhead,
        "look_words": words,
    }


def _tonight_site(ws, grid, summary, site, i, rank, tz):
    p = summary.p_any[i, 0]
    step = summary.peak_step[i, 0]
    if step < 0:  # no darkness: describe the middle of the night
        step = len(grid.times_utc) // 2
    dark = grid.darkness[i] > 0
    moon_up = (grid.moon_alt[i] > 0) & dark
    hourly = hourly_chance(grid, i, tz, ws.settings.chance)
    cloud_window = _window_mean(grid.cloud_pct[i], grid, summary, i)
    return plans.SiteTonight(
        rank=rank,
        name=site.name,
        lat=site.lat,
        lon=site.lon,
        chance=_num(p, 3),
        chance_words=chance_in_words(p) if np.isfinite(p) else "no forecast",
        window_start=local_iso(summary.window_start[i, 0], tz),
        window_end=local_iso(summary.window_end[i, 0], tz),
        expected_minutes=_num(summary.expected_min[i, 0], 1),
        limiting=summary.limiting[i, 0],
        kp_needed=_num(grid.kp_needed[i, step], 2),
        kp=_num(grid.kp_mean[step], 2),
        **look_fields(grid, i, step),
        cloud_pct=_num(cloud_window, 0),
        **_window_cloud(grid, summary, i),
        moon_illumination=_num(np.mean(grid.moon_illumination), 2),
        moon_up_hours=_num(moon_up.sum() * grid.step_min / 60.0, 1),
        drive_min=site.drive_min,
        notes=site.notes,
        hourly=tuple(hourly),
    )


def _hour_blocks(grid):
    """(first step, slice) of each elapsed hour of the grid, counted from its first step."""
    per_hour = int(round(60 / grid.step_min))
    return [(start, slice(start, start + per_hour))
            for start in range(0, len(grid.times_utc), per_hour)]


def hourly_chance(grid, i, tz, settings=None):
    """The chance of a sighting in each dark clock hour of the night at site ``i``.

    Each row: ``chance_in_hour`` (P(at least one display seen in that hour),
    :func:`auroraplan.chance.p_display_seen` over the hour's steps),
    ``chance_if_clear`` (the same with a clear sky) and ``p_clear`` (mean P(clear)
    over the hour's dark steps), so that ``chance_in_hour`` is about
    ``chance_if_clear × p_clear`` and the night's ``chance`` follows from the
    hours by the same rule; and at the middle of the hour the forecast ``kp``
    (null where the forecast has no block), where to look (:func:`look_fields`), and the
    cloud forecast for the hour (:func:`cloud_at_step`: ``cloud_pct`` valid at the hour's
    start, as hourly weather forecasts are given, null without a forecast; its source, each
    weather model's value and their spread).

    Hours are counted in elapsed time from local noon, so a night when the clocks go
    forward has one hour fewer and a night when they go back has the repeated hour twice,
    told apart by the UTC offset in ``time`` and the abbreviation in ``zone``.
    """
    return [row for _, row in _hourly_rows(grid, i, tz, settings)]


def _hourly_rows(grid, i, tz, settings):
    """(slice of steps, row) per dark hour; see :func:`hourly_chance`."""
    from auroraplan.chance import ChanceSettings, p_display_seen

    tau = (settings or ChanceSettings()).decorrelation_min
    shown = grid.darkness[i] * grid.moon[i] * grid.activity[i]
    rows = []
    for start, sl in _hour_blocks(grid):
        dark = grid.darkness[i, sl] > 0
        if not dark.any():
            continue
        mid = min(start + dark.size // 2, len(grid.times_utc) - 1)
        rows.append((sl, plans.HourChance(
            time=local_iso(grid.times_utc[start], tz),
            zone=_zone_name(grid.times_utc[start], tz),
            chance_in_hour=_num(p_display_seen(shown[sl], grid.p_clear[i, sl],
                                               grid.step_min, tau), 3),
            chance_if_clear=_num(p_display_seen(shown[sl], np.ones(dark.size),
                                                grid.step_min, tau), 3),
            p_clear=_num(np.mean(grid.p_clear[i, sl][dark]), 3),
            kp=_num(grid.kp_mean[mid], 2),
            **cloud_at_step(grid, i, start),
            kp_from=_kp_from(grid, sl),
            **look_fields(grid, i, mid),
        )))
    return rows


def chance_by_time(grid, i, settings=None) -> np.ndarray:
    """P(at least one display seen) from the start of the night up to each step (T,).

    Same rule as the night's ``chance`` (:func:`auroraplan.chance.p_display_seen`),
    over a growing prefix of the night; its last value is the night's chance.
    """
    from auroraplan.chance import ChanceSettings, p_display_seen

    tau = (settings or ChanceSettings()).decorrelation_min
    shown = np.nan_to_num(grid.darkness[i] * grid.moon[i] * grid.activity[i], nan=0.0)
    return np.array([p_display_seen(shown[:k + 1], grid.p_clear[i, :k + 1], grid.step_min,
                                    tau)
                     for k in range(len(grid.times_utc))])


def _per_step_hourly(grid, i, tz, settings) -> list:
    """Each step's ``chance_in_hour``: that of the hour holding it (0 in hours without
    darkness), so a chart draws the same numbers as the page's hour bars."""
    out = [0.0] * len(grid.times_utc)
    for sl, row in _hourly_rows(grid, i, tz, settings):
        out[sl] = [row.chance_in_hour] * len(out[sl])
    return out


def _kp_from(grid, sl) -> str:
    """Where an hour's Kp came from: "solar wind" when the upstream estimate carries at
    least half of it, else the step kind ("forecast", "outlook", "none")."""
    weight = grid.nowcast_weight
    if weight is not None and np.mean(weight[sl]) >= 0.5:
        return "solar wind"
    kinds = list(grid.kind[sl])
    return max(set(kinds), key=kinds.count)


# ---------------------------------------------------------------------------
# the solar-wind nowcast

NOWCAST_EXPECT = {
    "rising": "Activity is rising: expect the band to brighten and move toward the equator "
              "within the hour; be at the site and watching.",
    "steady": "Activity holds: expect much the same in the next hour.",
    "falling": "Activity is easing: expect displays to fade over the next hour unless the "
               "field turns south again.",
}
"""What a guide may expect from the trend of the estimate (common practice, no source)."""


def solar_wind_estimate(solar_wind, settings=None):
    """The Kp estimate from a ``workspace.SolarWindFile``, or None without one."""
    if solar_wind is None or solar_wind.times_utc.size == 0:
        return None
    from auroraplan import solarwind

    return solarwind.estimate(solar_wind.times_utc, solar_wind.speed_km_s,
                              solar_wind.density_cm3, solar_wind.by_nt, solar_wind.bz_nt,
                              solar_wind.distance_km, settings)


def nowcast_info(cast, solar_wind, grid, tz) -> dict | None:
    """What the solar wind says, for the people who read the report; None without a file.

    ``used`` is False when the measurements do not reach the hours of the report (the
    ``note`` then says so).
    """
    if solar_wind is None:
        return None
    from auroraplan import solarwind

    name = solar_wind.path.name
    if cast is None:
        return {"file": name, "used": False, "left_out": solar_wind.left_out,
                "note": f"{name} holds no usable measurement; Kp comes from the forecast."}
    used = grid.nowcast_weight is not None and bool((grid.nowcast_weight > 0).any())
    measured = local_iso(cast.measured_until_utc, tz)
    valid = local_iso(cast.valid_until_utc, tz)
    kp = cast.latest_kp
    level = solarwind.activity_word(kp)
    if used:
        note = (f"From solar wind measured at {measured[11:16]}, valid until {valid[11:16]}: "
                f"Kp about {kp:.1f} ({level}), {cast.trend_word}.")
    else:
        note = (f"{name} ends at {measured[11:16]} on {measured[:10]} (valid until "
                f"{valid[11:16]}), outside these hours; Kp comes from the forecast.")
    return {
        "file": name,
        "used": used,
        "measured_until": measured,
        "valid_until": valid,
        "delay_min": _num(cast.delay_min, 0),
        "kp": _num(kp, 1),
        "kp_sd": _num(cast.kp_sd[-1], 1),
        "activity": level,
        "trend": cast.trend_word,
        "kp_change_per_h": _num(cast.kp_change_per_h, 1),
        "expect": NOWCAST_EXPECT[cast.trend_word] if used else None,
        "note": note,
        "left_out": solar_wind.left_out,
        "estimate": [{"time": local_iso(t, tz), "kp": _num(k, 2), "kp_sd": _num(sd, 2)}
                     for t, k, sd in zip(cast.times_utc, cast.kp, cast.kp_sd, strict=True)],
    }


CLOUD_SOURCE_WORDS = {
    "clouds.csv": "clouds.csv",
    "models": "weather models",
    "climatology": "climate average",
    "default": "default clear-sky share",
}
"""How each source of a cloud figure (weather.SOURCES) is named in reports."""


def cloud_at_step(grid, i, step) -> dict:
    """The cloud at site ``i`` at one time step: the figure used, where it came from, each
    weather model's value and the models' spread (largest minus smallest)."""
    from auroraplan import weather

    models = {}
    if grid.cloud_model_pct is not None:
        for m, name in enumerate(grid.cloud_models):
            value = grid.cloud_model_pct[m, i, step]
            if np.isfinite(value):
                models[name] = _num(value, 1)
    source = (weather.source_names(grid.cloud_source_code[i, step])[()]
              if grid.cloud_source_code is not None else None)
    spread = grid.cloud_spread_pct[i, step] if grid.cloud_spread_pct is not None else np.nan
    return {
        "cloud_pct": _num(grid.cloud_pct[i, step], 1),
        "cloud_source": CLOUD_SOURCE_WORDS.get(source, source),
        "cloud_models": models,
        "cloud_spread_pct": _num(spread, 1),
    }


def _window_cloud(grid, summary, i) -> dict:
    """Cloud over a site's best window: each model's mean, the mean spread, and the source
    of most of its steps (the peak step's when there is no window)."""
    start, end = summary.window_start[i, 0], summary.window_end[i, 0]
    sel = ((grid.times_utc >= start) & (grid.times_utc < end)) if not np.isnat(start) else \
        np.zeros(grid.times_utc.shape, bool)
    if not sel.any():
        return {"cloud_source": None, "cloud_models": {}, "cloud_spread_pct": None}
    from auroraplan import weather

    models = {}
    for m, name in enumerate(grid.cloud_models):
        values = grid.cloud_model_pct[m, i, sel]
        if np.isfinite(values).any():
            models[name] = _num(np.nanmean(values), 0)
    sources, counts = np.unique(weather.source_names(grid.cloud_source_code[i, sel]),
                                return_counts=True)
    spread = grid.cloud_spread_pct[i, sel]
    return {
        "cloud_source": CLOUD_SOURCE_WORDS.get(sources[np.argmax(counts)]),
        "cloud_models": models,
        "cloud_spread_pct": _num(np.nanmean(spread), 0) if np.isfinite(spread).any() else None,
    }


def _zone_name(t64, tz: str) -> str:
    """The zone's abbreviation at a UTC instant (CET, CEST, NZST ...) from the IANA tz data;
    it tells apart the two 02:00 hours of a night when the clocks go back."""
    seconds = int(np.asarray(t64, dtype="datetime64[s]").astype(np.int64))
    return dt.datetime.fromtimestamp(seconds, dt.UTC).astimezone(ZoneInfo(tz)).tzname()


def _window_mean(values, grid, summary, i, d=0):
    """Mean of a per-step series over a site-night's best window (NaN when none)."""
    start, end = summary.window_start[i, d], summary.window_end[i, d]
    if np.isnat(start):
        return np.nan
    sel = (grid.times_utc >= start) & (grid.times_utc < end)
    vals = values[sel]
    return float(np.nanmean(vals)) if np.isfinite(vals).any() else np.nan


def site_timeline(ws, date: dt.date, site_name: str, climatology=None) -> plans.NightTimeline:
    """One site's night at 10-minute steps, for the timeline chart."""
    tz = ws.operator.timezone
    site = next(s for s in ws.sites if s.name == site_name)
    if climatology is None:
        climatology = workspace_climatology(ws)
    grid, _ = _grid_for_nights(ws, [site], date, 1, DEFAULT_STEP_MIN, climatology,
                               all_steps=True)
    return plans.NightTimeline(
        site=f"{site.name} (outings {grid.outing_hours})",
        date=date.isoformat(),
        timezone=tz,
        darkness_level=ws.settings.viewing.darkness,
        times=tuple(local_iso(t, tz) for t in grid.times_utc),
        sun_alt=tuple(_num(v, 2) for v in grid.sun_alt[0]),
        moon_alt=tuple(_num(v, 2) for v in grid.moon_alt[0]),
        dark=tuple(bool(v) for v in grid.dark_sky[0]),
        outing=tuple(bool(v) for v in grid.outing),
        kp_needed=tuple(_num(v, 2) for v in grid.kp_needed[0]),
        kp_forecast=tuple(_num(v, 2) for v in grid.kp_mean),
        kp_sd=tuple(_num(v, 2) for v in grid.kp_sd),
        cloud_pct=tuple(_num(v, 1) for v in grid.cloud_pct[0]),
        chance_in_hour=tuple(_per_step_hourly(grid, 0, tz, ws.settings.chance)),
        chance_by_time=tuple(_num(v, 4) for v in chance_by_time(grid, 0, ws.settings.chance)),
        chance_terms={k: CHANCE_TERMS[k] for k in ("chance_in_hour", "chance_by_time")},
    )


# ---------------------------------------------------------------------------
# week


def week_report(ws, start: dt.date, nights: int = 7, now=None,
                climatology=None, ranked_top: int = 5, fixed=None, replan=None,
                keep_chances=None) -> plans.WeekPlan:
    """Ranked nights and sites per trip, and the excursion plan for the fleet.

    Parameters
    ----------
    fixed : dict, optional
        (trip id, ISO night) -> (site name, state): outings of the plan of record the
        plan must keep (confirmed outings, and the outings of trips not re-planned).
    replan : set of str, optional
        The trips the plan may give new outings; None for every trip. The others keep
        exactly their ``fixed`` outings.
    keep_chances : callable, optional
        As for :func:`tonight_report`.
    """
    from auroraplan import planner
    from auroraplan.errors import InputError

    tz = ws.operator.timezone
    sites = ws.sites
    if climatology is None:
        climatology = workspace_climatology(ws)
    dates = [start + dt.timedelta(days=d) for d in range(nights)]
    grid, summary = _nights_for_week(ws, sites, start, nights, climatology,
                                     keep_chances if sites else None)
    trips = ws.trips

    value, allowed, in_stay, blocked = _plan_inputs(ws, summary, dates)
    guests = np.array([t.guests for t in trips], int)
    outings = np.array([t.outings for t in trips], int)
    capacity = np.array([s.capacity for s in sites], int)
    settings = ws.settings.planner
    drive_cost = np.array([s.drive_min for s in sites], float) * settings.drive_cost_per_min
    _, plan_allowed, fixed_at, record_notes = _keep_fixed(
        ws, dates, value, allowed, outings, fixed or {}, replan)
    result = planner.PlanResult([])
    if len(trips):
        try:
            result = planner.solve_plan(
                value, plan_allowed, guests, outings, _fleet(ws).by_night(dates), capacity,
                drive_cost=drive_cost, settings=settings,
                fixed=[(r, d, s) for (r, d), (s, _) in sorted(fixed_at.items())])
        except planner.FixedOutingsDoNotFit as exc:
            raise InputError(f"{ws.path / 'operator.toml'} [fleet]: {exc}") from None
    chosen = result.outings
    backups = planner.choose_backups(
        value, allowed, chosen, guests, capacity, drive_cost=drive_cost
    ) if chosen else []
    kept = {(r, d) for r, d, _ in chosen}
    for (r, d), (s, state) in fixed_at.items():
        if (r, d) not in kept:
            record_notes.append(
                f"{trips[r].trip}'s {state} outing on {dates[d]} to {sites[s].name} no longer "
                "fits the fleet or the site; release it or change the plan by hand")

    dark_note = no_darkness(grid, dates, ws.settings.viewing.darkness, ws.operator.base_lat,
                            ws.settings.outing)
    trip_rows = []
    for r, trip in enumerate(trips):
        rows = []
        for d, date in enumerate(dates):
            if not in_stay[r, d]:
                continue
            ranked = rank_sites(value[r, d], among=allowed[r, d])
            best = ranked[0] if ranked else None
            rows.append(plans.TripNight(
                date=date.isoformat(),
                site=sites[best].name if best is not None else None,
                chance=_num(summary.p_any[best, d], 3) if best is not None else None,
                window_start=local_iso(summary.window_start[best, d], tz) if best is not None else None,
                window_end=local_iso(summary.window_end[best, d], tz) if best is not None else None,
                kind=summary.kind[d],
                limiting=summary.limiting[best, d] if best is not None else None,
                blocked=bool(blocked[r, d]),
                in_stay=True,
                ranked=tuple(plans.RankedSite(sites[s].name, _num(summary.p_any[s, d], 3))
                             for s in ranked[:ranked_top]),
            ))
        trip_rows.append(plans.TripNights(
            trip=trip.trip, group=trip.group, guests=trip.guests,
            arrive=trip.arrive.isoformat(), depart=trip.depart.isoformat(),
            outings=trip.outings, nights=tuple(rows),
        ))

    plan, late_notes = [], []
    for (r, d, s), b in zip(chosen, backups, strict=True):
        site = sites[s]
        start_t, end_t = summary.window_start[s, d], summary.window_end[s, d]
        drive = np.timedelta64(int(round(site.drive_min)), "m")
        pickup = _floor_5min(start_t - drive) if not np.isnat(start_t) else start_t
        back = _ceil_5min(end_t + drive) if not np.isnat(end_t) else end_t
        late = ws.settings.outing.back_late(dates[d], back, tz)
        if late:
            late_notes.append(late_return_warning(trips[r], dates[d], site.name, back, tz,
                                                  ws.settings.outing))
        plan.append(plans.Outing(
            trip=trips[r].trip,
            group=trips[r].group,
            date=dates[d].isoformat(),
            site=site.name,
            backup=sites[b].name if b is not None else None,
            chance=_num(summary.p_any[s, d], 3),
            backup_chance=_num(summary.p_any[b, d], 3) if b is not None else None,
            window_start=local_iso(start_t, tz),
            window_end=local_iso(end_t, tz),
            pickup=local_iso(pickup, tz),
            return_=local_iso(back, tz),
            back_after_hours=late,
            drive_min=site.drive_min,
            lat=site.lat, lon=site.lon,
            backup_lat=sites[b].lat if b is not None else None,
            backup_lon=sites[b].lon if b is not None else None,
            **(look_fields(grid.look, s, d) if summary.peak_step[s, d] >= 0
               else plans.NO_LOOK),
            kind=summary.kind[d],
            state=fixed_at.get((r, d), (None, "proposed"))[1],
        ))
    shortfalls = shortfall_warnings(ws, dates, chosen, in_stay, blocked, allowed, value,
                                    drive_cost, summary, replan, fixed or {})
    return plans.WeekPlan(
        kind="week",
        operator=ws.operator.name,
        base=base_info(ws),
        start=start.isoformat(),
        nights=nights,
        made_at=made_at(tz, now),
        forecast=_week_forecast_info(ws, grid, summary),
        vehicles=int(ws.operator.vehicles),
        night_kinds=tuple(plans.NightKind(d.isoformat(), k)
                          for d, k in zip(dates, summary.kind, strict=True)),
        outing_hours=outing_hours_info(grid, ws.settings.outing),
        darkness_note=dark_note["note"],
        no_darkness=dark_note["nights"],
        closed_note=all_closed_note(ws),
        trips=tuple(trip_rows),
        plan=tuple(plan),
        solver=solver_info(result),
        heatmap=plans.Heatmap(
            title=f"Chance per night and site, {dates[0].isoformat()} to {dates[-1].isoformat()}",
            dates=tuple(d.isoformat() for d in dates),
            sites=tuple(s.name for s in sites),
            chance=tuple(tuple(_num(v, 3) if not sites[i].closed else None
                               for v in summary.p_any[i]) for i in range(len(sites))),
            kinds=tuple(summary.kind),
        ),
        cloud_note=grid.cloud_note,
        cloud_models=tuple(grid.cloud_models),
        warnings=tuple(shortfalls + late_notes + [note_warning(w) for w in dict.fromkeys(
            ws.warnings + grid.warnings + record_notes)]),
        cautions=tuple(CAUTIONS),
        notice=FORECAST_NOT_PROMISE,
    )


def _nights_for_week(ws, sites, start, nights, climatology, keep_chances=None):
    """(chance.NightsOverview, chance.NightSummary) of the week, worked out a few nights at
    a time (chance.compute_nights) so that many sites never hold every step of the week
    at once; ``keep_chances`` receives the archive's parts of every run of nights."""
    from auroraplan import archive, chance
    from auroraplan import nights as nights_mod

    tz = ws.operator.timezone
    times, night_index = nights_mod.night_times(start, nights, tz, DEFAULT_STEP_MIN)
    names = [s.name for s in sites]
    parts = []

    def keep(grid, summary, first):
        parts.append(archive.issued_part(
            grid, summary, names, [start + dt.timedelta(days=first + d)
                                   for d in range(summary.p_any.shape[1])],
            ws.settings.chance.decorrelation_min))

    overview, summary = chance.compute_nights(
        sites, times, night_index, DEFAULT_STEP_MIN, nights, tz=tz, settings=ws.settings,
        activity=ws.activity, climatology=climatology,
        cloud=lambda at: cloud_for(ws, sites, at), each=keep if keep_chances else None)
    if keep_chances:
        keep_chances(parts)
    return overview, summary


def _week_forecast_info(ws, grid, summary) -> plans.ForecastSource:
    """forecast_info over the nights, naming gaps inside the forecast by their hours."""
    dark_any = grid.darkness.any(axis=0)
    info = forecast_info(ws, list(summary.kind), None)
    if dark_any.any():
        gaps = forecast_info(ws, grid.kind[dark_any], grid.times_utc[dark_any])
        if gaps.gaps:
            info = info.replace(gaps=gaps.gaps, note=gaps.note)
    return info


def outing_hours_info(grid, hours) -> plans.OutingHoursUsed:
    """The outing hours a report counted: local "HH:MM–HH:MM" of its first night, and the
    operator's limits (None where derived from the sites' magnetic midnight)."""
    return plans.OutingHoursUsed(
        hours=grid.outing_hours, outing_from=hours.outing_from,
        outing_until=hours.outing_until,
        derived=hours.outing_from is None or hours.outing_until is None)


def late_return_warning(trip, night: dt.date, site: str, back, tz: str,
                        hours) -> plans.PlanWarning:
    """The warning for an outing back at the base after the operator's ``outing_until``."""
    return plans.PlanWarning(
        trip=trip.trip, asked=None, planned=None, reason="back after hours",
        message=(f"{trip.trip} ({trip.group}) on {night.isoformat()}: back from {site} "
                 f"at {local_iso(back, tz)[11:16]}, after outing_until "
                 f"{hours.outing_until}; start earlier, choose a nearer site or set a "
                 "later [planner] outing_until"))


def note_warning(message: str) -> plans.PlanWarning:
    """A warning that concerns no one trip, in the same shape as a shortfall warning."""
    return plans.PlanWarning(trip=None, asked=None, planned=None, reason="note", message=message)


def _keep_fixed(ws, dates, value, allowed, outings, fixed, replan):
    """Value and allowed masks that make the planner keep the outings of record.

    A fixed outing's night allows only its site (the planner is told to keep it); a trip not in
    ``replan`` allows nothing else. ``outings`` is raised in place where a trip holds
    more fixed outings than it asks for. Returns (value, allowed, {(r, d): (s, state)},
    notes about outings of record that cannot be placed at all).
    """
    value, allowed = value.copy(), allowed.copy()
    trip_index = {t.trip: r for r, t in enumerate(ws.trips)}
    site_index = {s.name: i for i, s in enumerate(ws.sites)}
    night_index = {d.isoformat(): i for i, d in enumerate(dates)}
    notes, fixed_at = [], {}
    if replan is not None:
        for r, t in enumerate(ws.trips):
            if t.trip not in replan:
                allowed[r] = False
                outings[r] = 0
    for (trip, night), (site, state) in sorted(fixed.items()):
        r, d, s = trip_index.get(trip), night_index.get(night), site_index.get(site)
        if r is None or d is None:
            continue
        if s is None:
            notes.append(f"{trip}'s {state} outing on {night} goes to {site!r}, which is no "
                         "longer in the sites file; release it and plan again")
            continue
        if ws.sites[s].closed:
            notes.append(f"{trip}'s {state} outing on {night} goes to {site}, which is now "
                         "closed; release it and plan again")
        allowed[r, d] = False
        allowed[r, d, s] = True
        fixed_at[(r, d)] = (s, state)
    for r in range(len(ws.trips)):
        held = sum(1 for (rr, _) in fixed_at if rr == r)
        outings[r] = max(int(outings[r]), held) if replan is None or ws.trips[r].trip in replan \
            else held
    return value, allowed, fixed_at, notes


SHORTFALL_REASONS = {
    "nights": "more outings asked than free evenings in the stay",
    "blocked nights": "evenings of the stay are blocked",
    "no darkness": "too few evenings dark enough during the outing hours",
    "site closed": "no open site on enough evenings",
    "site capacity": "no open site holds the whole group",
    "bad forecast": "too few evenings whose chance is worth the drive",
    "fleet": "the vehicles are taken by other groups on the remaining evenings",
}
"""Why a group gets fewer outings than it asked for, tested in this order: the first
filter of its evenings that leaves fewer than it asked names the reason."""


def shortfall_warnings(ws, dates, chosen, in_stay, blocked, allowed, value, drive_cost,
                       summary, replan, fixed) -> list[plans.PlanWarning]:
    """One warning per trip planned fewer outings than it asked for, with the reason.

    The evenings of the trip's stay in these dates are filtered step by step (free of
    blocks, dark, an open site, a site that holds the group, a chance above the drive
    cost); the first step that leaves fewer evenings than asked is the reason, and
    "fleet" when every step leaves enough (other groups took the vehicles).
    """
    planned = np.zeros(len(ws.trips), int)
    for r, _, _ in chosen:
        planned[r] += 1
    open_site = np.array([not s.closed for s in ws.sites], bool)
    capacity = np.array([s.capacity for s in ws.sites], int)
    dark = (summary.dark_hours.T > 0) & np.isfinite(summary.p_any.T)  # (D, S)
    net = value - np.broadcast_to(drive_cost, value.shape)
    rows = []
    for r, trip in enumerate(ws.trips):
        if replan is not None and trip.trip not in replan:
            continue
        stay = in_stay[r]
        whole_stay = dates[0] <= trip.arrive and trip.depart <= dates[-1] + dt.timedelta(days=1)
        asked = trip.outings if whole_stay else min(trip.outings, int(stay.sum()))
        if not stay.any() or planned[r] >= asked:
            continue
        steps = [
            ("nights", stay),
            ("blocked nights", stay & ~blocked[r]),
            ("no darkness", stay & ~blocked[r] & dark.any(axis=1)),
            ("site closed", stay & ~blocked[r] & (dark & open_site).any(axis=1)),
            ("site capacity", stay & ~blocked[r] & (dark & open_site & (
                capacity >= trip.guests)).any(axis=1)),
            ("bad forecast", (allowed[r] & (net[r] > 0)).any(axis=1)),
        ]
        reason = "fleet"
        if trip.outings > len(trip.nights()):
            reason = "nights"
        else:
            for name, usable in steps[1:]:
                if usable.sum() < asked:
                    reason = name
                    break
        rows.append(plans.PlanWarning(
            trip=trip.trip, asked=int(asked), planned=int(planned[r]),
            reason=reason,
            message=(f"{trip.trip} ({trip.group}) gets {planned[r]} of {asked} outings"
                     f"{'' if whole_stay else ' in these nights'}: "
                     f"{SHORTFALL_REASONS[reason]}"),
        ))
    return rows


def bookings_report(ws, now=None, db=None) -> plans.WeekPlan:
    """Every booked stay as the plan of record in ``db`` holds it, trips not in it planned
    around it (`auroraplan.record.bookings_plan`); nothing is saved. With no database, one
    plan over every stay."""
    from auroraplan import record

    return record.bookings_plan(ws, db, save=False, now=now)


def _fleet(ws):
    from auroraplan.planner import Fleet

    return ws.operator.fleet or Fleet.of_count(ws.operator.vehicles)


def solver_info(result) -> plans.SolverOutcome:
    """How good the plan is: the objective, the solver's bound, the gap, a time limit hit."""
    return plans.SolverOutcome(
        objective=_num(result.objective, 4),
        expected_sightings=_num(result.expected_sightings, 4),
        bound=_num(result.bound, 4),
        gap=_num(result.gap, 5),
        time_limit_hit=bool(result.time_limit_hit),
        groups_served=result.served,
        least_share=_num(result.min_share, 3),
        seconds=_num(result.seconds, 2),
    )


def _plan_inputs(ws, summary, dates):
    """Value and allowed masks (trips × nights × sites) for the planner."""
    trips, sites = ws.trips, ws.sites
    value = np.broadcast_to(
        np.nan_to_num(summary.p_any, nan=0.0).T[None, :, :], (len(trips), len(dates), len(sites))
    ).copy()
    in_stay = np.array([[t.arrive <= d < t.depart for d in dates] for t in trips], bool).reshape(
        len(trips), len(dates))
    blocked = np.array([[d in t.blocked for d in dates] for t in trips], bool).reshape(
        len(trips), len(dates))
    open_site = np.array([not s.closed for s in sites], bool)
    capacity = np.array([s.capacity for s in sites], int)
    guests = np.array([t.guests for t in trips], int)
    fits = guests[:, None] <= capacity[None, :]
    has_chance = np.isfinite(summary.p_any.T) & (summary.dark_hours.T > 0)
    allowed = (
        (in_stay & ~blocked)[:, :, None]
        & open_site[None, None, :]
        & fits[:, None, :]
        & has_chance[None, :, :]
    )
    return value, allowed, in_stay, blocked


def _floor_5min(t64):
    s = np.asarray(t64, dtype="datetime64[s]").astype(np.int64)
    return np.datetime64(int(s // 300 * 300), "s")


def _ceil_5min(t64):
    s = np.asarray(t64, dtype="datetime64[s]").astype(np.int64)
    return np.datetime64(int(-(-s // 300) * 300), "s")


# ---------------------------------------------------------------------------
# season

SEASON_CHUNK_NIGHTS = 16
SEASON_CHUNK_SITE_STEPS = 300_000
"""Site-steps worked on at once in the season outlook (at most SEASON_CHUNK_NIGHTS nights):
arrays of a few MB stay in the allocator's heap instead of being mapped afresh from the
system each time, which made 3,000 sites cost more than three times 1,000."""


def season_report(ws, first: dt.date, last: dt.date, trip_nights: int = 5, progress=None,
                  climatology=None, best_count: int = 5, now=None) -> plans.SeasonOutlook:
    """Long-range chance per night from darkness, moon, Kp climatology and clear-sky climatology.

    The Kp forecast and the cloud forecast are not used: every night is an
    outlook. "chance" is that of the best open site; "chance_base" that of an
    open-horizon point at the base with the sites' mean clear-sky climatology.
    """
    from auroraplan import chance as chance_mod
    from auroraplan import nights as nights_mod
    from auroraplan.workspace import Site

    tz = ws.operator.timezone
    if climatology is None:
        climatology = workspace_climatology(ws)
    open_sites = [s for s in ws.sites if not s.closed]
    months = [s.clear_by_month for s in open_sites if s.clear_by_month]
    base_clear = tuple(np.mean(np.array(months, float), axis=0)) if months else None
    sky_mags = [s.sky_mag for s in open_sites] or [21.0]
    base = Site(name=ws.operator.base_name, lat=ws.operator.base_lat, lon=ws.operator.base_lon,
                sky_mag=float(np.median(sky_mags)), clear_by_month=base_clear)
    # chance_base is that of the open sites' climate: with none open the base takes the
    # climate of all sites (see _base_site).
    if not open_sites:
        base = _base_site(ws)
    sites = open_sites + [base]
    nights = (last - first).days + 1
    step = DEFAULT_STEP_MIN
    p_any = np.zeros((len(sites), nights))
    dark_hours = np.zeros(nights)
    outing_dark = np.zeros(nights, bool)
    illum = np.zeros(nights)
    first_times, _ = nights_mod.night_times(first, 1, tz, step)
    table = chance_mod.kp_table(sites, first_times[len(first_times) // 2], ws.settings.viewing)
    warnings: list[str] = []
    from auroraplan import sky

    sky.keep_geocentre(first_times[0], nights_mod.night_times(last, 1, tz, step)[0][-1])
    done = 0
    while done < nights:
        n = min(SEASON_CHUNK_NIGHTS, nights - done, max(1, SEASON_CHUNK_SITE_STEPS // (
            len(sites) * round(24 * 60 / step))))
        start = first + dt.timedelta(days=done)
        times, night_index = nights_mod.night_times(start, n, tz, step)
        grid = chance_mod.compute_grid(
            sites, times, night_index, step, tz=tz, settings=ws.settings,
            climatology=climatology, table=table, warn_outside_hours=False,
        )
        summary = chance_mod.summarise_nights(grid, n, ws.settings.chance)
        p_any[:, done:done + n] = np.nan_to_num(summary.p_any, nan=0.0)
        dark_hours[done:done + n] = summary.dark_hours[-1]
        for d in range(n):
            sel = grid.night_index == d
            outing_dark[done + d] = bool((grid.darkness[:, sel] > 0).any())
            illum[done + d] = grid.moon_illumination[sel][len(grid.moon_illumination[sel]) // 2]
        warnings.extend(grid.warnings)
        done += n
        if progress is not None:
            progress.advance(n)
    best = np.argmax(p_any[:-1], axis=0) if open_sites else np.full(nights, -1)
    best_chance = p_any[best, np.arange(nights)] if open_sites else np.zeros(nights)
    dates = [first + dt.timedelta(days=d) for d in range(nights)]
    starts = best_starts(dates, best_chance, trip_nights, best_count,
                         dark_night=outing_dark) if open_sites else []
    starts_note = None
    if open_sites and not starts:
        starts_note = (
            f"No start of {trip_nights} nights from {first} to {last} has a night dark "
            f"enough ({ws.settings.viewing.darkness} darkness inside the outing hours) with any "
            "chance, so no start date is recommended; look at the darker months.")
    rows = tuple(plans.SeasonNight(
        date=d.isoformat(),
        dark_hours=_num(dark_hours[i], 2),
        chance=_num(best_chance[i], 3),
        best_site=open_sites[best[i]].name if open_sites and best_chance[i] > 0 else None,
        chance_base=_num(p_any[-1, i], 3),
        moon_illumination=_num(illum[i], 2),
        kind="outlook",
    ) for i, d in enumerate(dates))
    return plans.SeasonOutlook(
        kind="season",
        operator=ws.operator.name,
        base=base_info(ws),
        from_=first.isoformat(),
        to=last.isoformat(),
        trip_nights=trip_nights,
        made_at=made_at(tz, now),
        method=("Darkness and moon from the ephemeris; Kp from climatology by month, "
                "3-hour UT block and solar-cycle phase; cloud from each site's clear-sky "
                "climatology. Every night is an outlook, not a forecast."),
        nights=rows,
        best_starts=tuple(starts),
        best_starts_note=starts_note,
        closed_note=all_closed_note(ws),
        warnings=tuple(dict.fromkeys(ws.warnings + warnings)),
        notice=FORECAST_NOT_PROMISE,
    )


def season_chart(outlook: plans.SeasonOutlook) -> plans.SeasonChart:
    """The season chart's series from a season outlook."""
    return plans.SeasonChart(
        title=f"{outlook.base.name}: outlook per night, {outlook.from_} to {outlook.to}",
        dates=tuple(n.date for n in outlook.nights),
        chance=tuple(n.chance for n in outlook.nights),
        dark_hours=tuple(n.dark_hours for n in outlook.nights),
        kinds=tuple(n.kind for n in outlook.nights),
        moon_illumination=tuple(n.moon_illumination for n in outlook.nights),
        south=outlook.base.lat < 0,
    )


def best_starts(dates, chance, trip_nights, count=5, min_gap_days=3, dark_night=None):
    """Best start dates for a stay of ``trip_nights`` nights.

    Each start is scored by P(at least one night with a display) over the
    stay, 1 − Π(1 − chance), nights taken as independent; the expected
    number of such nights is given too. Starts closer than ``min_gap_days``
    to a better one are left out so that the list offers real alternatives.
    A start whose stay has no dark night (``dark_night``: darkness inside the
    outing hours, per night) or no chance at all is never offered: the list
    may be shorter than ``count``, or empty.
    """
    chance = np.clip(np.nan_to_num(np.asarray(chance, float)), 0.0, 1.0)
    n = len(chance) - trip_nights + 1
    if n <= 0:
        return []
    dark = np.ones(len(chance), bool) if dark_night is None else np.asarray(dark_night, bool)
    has_dark = np.convolve(dark.astype(float), np.ones(trip_nights), mode="valid")[:n] > 0
    log_miss = np.log1p(-np.clip(chance, 0.0, 1 - 1e-12))
    window = np.convolve(log_miss, np.ones(trip_nights), mode="valid")[:n]
    expected = np.convolve(chance, np.ones(trip_nights), mode="valid")[:n]
    score = -np.expm1(window)
    picked: list[int] = []
    for i in np.lexsort((np.arange(n), -score)):
        if not has_dark[i] or score[i] <= 0.0:
            continue
        if all(abs(int(i) - j) >= min_gap_days for j in picked):
            picked.append(int(i))
        if len(picked) == count:
            break
    return [plans.BestStart(
        start=dates[i].isoformat(),
        end=(dates[i] + dt.timedelta(days=trip_nights)).isoformat(),
        nights=trip_nights,
        chance_any=_num(score[i], 3),
        expected_nights=_num(expected[i], 2),
    ) for i in picked]


BASEMAP_FILES = ("basemap.gpkg", "basemap.geojson")


def oval_map_data(ws, kp: float, date: dt.date, basemap=None) -> dict:
    """The oval band around the base at local magnetic midnight of a night, with the sites.

    A ``basemap.gpkg`` or ``basemap.geojson`` in the workspace (coastlines,
    roads, regions: the operator's own) is drawn under the band.
    """
    from pathlib import Path

    from auroraplan import view

    if basemap is None:
        basemap = next((Path(ws.path) / n for n in BASEMAP_FILES if (Path(ws.path) / n).is_file()),
                       None)
    from auroraplan import magnetic

    op = ws.operator
    when = _magnetic_midnight(op, date)
    # The band of the base's own magnetic hemisphere: aurora australis for a southern base.
    base_mlat, _ = magnetic.geo_to_aacgm(np.array([op.base_lat]), np.array([op.base_lon]), 0.0,
                                         when)
    hemisphere = "south" if np.nan_to_num(base_mlat[0], nan=op.base_lat) < 0 else "north"
    viewing = ws.settings.viewing
    bands = view.band_outline(kp, when, model=viewing.oval_model,
                              emission_height_km=viewing.emission_height_km,
                              hemisphere=hemisphere)
    return {
        "base": {"name": op.base_name, "lat": op.base_lat, "lon": op.base_lon},
        "sites": [{"name": s.name, "lat": s.lat, "lon": s.lon, "closed": s.closed} for s in ws.sites],
        "kp": float(kp),
        "hemisphere": hemisphere,
        "when_utc": utc_iso(np.datetime64(when.replace(tzinfo=None), "s")),
        "bands": {k: {"lat": [_num(v, 3) for v in bands[f"{k}_lat"]],
                      "lon": [_num(v, 3) for v in bands[f"{k}_lon"]]}
                  for k in ("equatorward", "poleward", "diffuse") if f"{k}_lat" in bands},
        "basemap": str(basemap) if basemap else None,
    }


def _magnetic_midnight(op, date: dt.date) -> dt.datetime:
    """The UTC time on the night of ``date`` when the base is at magnetic local time 0."""
    from auroraplan import magnetic, nights

    times, _ = nights.night_times(date, 1, op.timezone, 10)
    _, mlon = magnetic.geo_to_aacgm(np.array([op.base_lat]), np.array([op.base_lon]), 0.0,
                                    times[len(times) // 2].astype(object))
    t = magnetic.time_nearest_mlt(mlon, 0.0, times)[0].astype(object)
    return t.replace(tzinfo=dt.UTC)


SITE_TABLE_NOTE = (
    "Kp needed at magnetic midnight (MLT 0); null = not reached by Kp 9. "
    "best_mlt is the night-side magnetic local time needing the least Kp. "
    "kp_lost_horizon: the Kp at which a storm has carried the band out of view again "
    "(polar-cap sites); null = it stays in view.")


def site_table(ws, date: dt.date | None = None) -> plans.SiteTable:
    """Each site's magnetic position, the Kp it needs at magnetic midnight
    (:func:`auroraplan.view.kp_needed_table`), the night-side MLT needing the least Kp
    (:func:`auroraplan.view.best_night_mlt`) and the local clock time on the evening of
    ``date`` (default today) when the site passes that MLT
    (:func:`auroraplan.magnetic.time_nearest_mlt`, 5-minute steps from local noon)."""
    from auroraplan import magnetic, view

    op = ws.operator
    zone = ZoneInfo(op.timezone)
    date = date or dt.datetime.now(zone).date()
    evening = dt.datetime.combine(date, dt.time(12, 0), tzinfo=zone).astimezone(dt.UTC)
    sites = ws.sites
    viewing = ws.settings.viewing
    table = view.kp_needed_table(
        [s.lat for s in sites], [s.lon for s in sites], [s.height_m for s in sites],
        [s.horizon for s in sites], min_elevation_deg=viewing.min_elevation_deg,
        emission_height_km=viewing.emission_height_km, model=viewing.oval_model,
        when=evening, names=[s.name for s in sites],
    )
    best_mlt, best_kp = view.best_night_mlt(table)
    start = np.datetime64(evening.replace(tzinfo=None), "s")
    times = start + np.arange(0, 24 * 3600, 300).astype("timedelta64[s]")
    at = magnetic.time_nearest_mlt(table.mlon, best_mlt, times) if sites else times[:0]
    rows = []
    for i, s in enumerate(sites):
        az = table.look_azimuth_deg[i, 0]
        rows.append(plans.SiteKp(
            name=s.name,
            mlat=round(float(table.mlat[i]), 2),
            mlon=round(float(table.mlon[i]), 2),
            kp_needed_overhead=_num(table.kp_overhead[i, 0], 2),
            kp_needed_horizon=_num(table.kp_horizon[i, 0], 2),
            kp_lost_horizon=_num(table.kp_lost[i, 0], 2),
            look_azimuth=_num(az, 1),
            look_compass=compass_point(az) if np.isfinite(az) else None,
            look_elevation=_num(table.look_elevation_deg[i, 0], 1),
            best_mlt=float(best_mlt[i]),
            kp_needed_best=_num(best_kp[i], 2),
            best_local_time=local_iso(at[i], op.timezone) if np.isfinite(best_kp[i]) else None,
            closed=bool(s.closed),
        ))
    return plans.SiteTable(
        workspace=str(ws.path),
        date=date.isoformat(),
        model=table.model,
        min_elevation_deg=viewing.min_elevation_deg,
        emission_height_km=viewing.emission_height_km,
        note=SITE_TABLE_NOTE,
        sites=tuple(rows),
    )


NOWCAST_STEP_MIN = 10
NOWCAST_FILE_RECENT_H = 3.0
"""The clock counts as "now" for a solar-wind file whose last measurement is at most this
many hours old; an older file is shown from its own last measurement (common practice,
no source)."""


def nowcast_now(cast, clock_utc: dt.datetime) -> tuple[np.datetime64, bool]:
    """The moment the next hours are counted from, and whether it is the clock.

    The clock when the file's last measurement is recent (NOWCAST_FILE_RECENT_H), else the
    time of that measurement, so that an archived file still shows what it said.
    """
    clock = np.datetime64(clock_utc.astimezone(dt.UTC).replace(tzinfo=None), "s")
    measured = cast.measured_until_utc
    recent = measured <= clock <= measured + np.timedelta64(int(NOWCAST_FILE_RECENT_H * 3600), "s")
    return (clock, True) if recent else (measured, False)


def nowcast_report(ws, solar_wind, hours: int = 2, at: dt.datetime | None = None,
                   now: dt.datetime | None = None, climatology=None) -> dict:
    """The next hours at every open site, with Kp from the upstream solar wind.

    Parameters
    ----------
    ws : Workspace
    solar_wind : workspace.SolarWindFile
    hours : int
        How many hours from now, 1 to 6.
    at : datetime, optional
        The moment to count from (aware); default the clock, or the file's last measurement
        when the file is older than NOWCAST_FILE_RECENT_H.
    now : datetime, optional
        The clock (tests).

    Returns
    -------
    dict
        ``hours``: per hour from the start, Kp (mean, spread) and where it came from;
        ``sites``: open sites by the chance in the first hour, each with
        ``chance_in_hour`` per hour (P(a display is seen within the hour), the same definition as
        the hourly figures of ``tonight``) and where to look.
    """
    from auroraplan import chance

    tz = ws.operator.timezone
    cast = solar_wind_estimate(solar_wind, ws.settings.nowcast)
    clock = now or dt.datetime.now(dt.UTC)
    if at is not None:
        start, from_clock = np.datetime64(at.astimezone(dt.UTC).replace(tzinfo=None), "s"), False
    elif cast is not None:
        start, from_clock = nowcast_now(cast, clock)
    else:
        start, from_clock = np.datetime64(clock.astimezone(dt.UTC).replace(tzinfo=None), "s"), True
    step = np.timedelta64(NOWCAST_STEP_MIN * 60, "s")
    start = start - (start.astype("int64") % (NOWCAST_STEP_MIN * 60)) * np.timedelta64(1, "s")
    per_hour = 60 // NOWCAST_STEP_MIN
    times = start + np.arange(hours * per_hour) * step
    sites = [s for s in ws.sites if not s.closed]
    if climatology is None:
        climatology = workspace_climatology(ws)
    cfg = ws.settings.chance
    grid = chance.compute_grid(sites or [_base_site(ws)], times,
                               np.zeros(times.shape, int), NOWCAST_STEP_MIN,
                               tz=tz, settings=ws.settings, activity=ws.activity,
                               cloud=cloud_for(ws, sites or [_base_site(ws)], times),
                               climatology=climatology, nowcast=cast, all_steps=True)
    shown = grid.darkness * grid.moon * grid.activity
    by_hour = [slice(h * per_hour, (h + 1) * per_hour) for h in range(hours)]
    p = np.stack([chance.p_display_seen(shown[:, sl], grid.p_clear[:, sl], grid.step_min,
                                        cfg.decorrelation_min) for sl in by_hour], axis=1)
    rows = []
    for i in (rank_sites(p[:, 0]) if sites else []):
        rows.append({
            "name": sites[i].name,
            "chance_in_hour": [_num(x, 3) for x in p[i]],
            "dark": bool(grid.darkness[i, by_hour[0]].any()),
            **look_fields(grid, i, per_hour // 2),
            "cloud_pct": _num(np.nanmean(grid.cloud_pct[i, by_hour[0]])
                              if np.isfinite(grid.cloud_pct[i, by_hour[0]]).any() else np.nan, 0),
            "drive_min": sites[i].drive_min,
        })
    hour_rows = [{"from": local_iso(times[sl][0], tz),
                  "to": local_iso(times[sl][-1] + step, tz),
                  "kp": _num(np.mean(grid.kp_mean[sl]), 1),
                  "kp_sd": _num(np.mean(grid.kp_sd[sl]), 1),
                  "kp_from": _kp_from(grid, sl)} for sl in by_hour]
    info = nowcast_info(cast, solar_wind, grid, tz)
    notes = []
    if at is None and not from_clock and cast is not None:
        notes.append(f"{solar_wind.path.name} ends at {info['measured_until'][11:16]} on "
                     f"{info['measured_until'][:10]}, more than {NOWCAST_FILE_RECENT_H:g} h "
                     "before the clock; the hours shown start from its last measurement.")
    return {
        "kind": "nowcast",
        "operator": ws.operator.name,
        "base": base_info(ws),
        "start": local_iso(times[0], tz),
        "made_at": made_at(tz, now),
        "nowcast": info,
        "hours": hour_rows,
        "closed_note": all_closed_note(ws),
        "sites": rows,
        "chance_terms": {"chance_in_hour": CHANCE_TERMS["chance_in_hour"]},
        "notes": notes,
        "warnings": list(dict.fromkeys(ws.warnings + grid.warnings)),
        "cautions": CAUTIONS,
        "notice": FORECAST_NOT_PROMISE,
    }
