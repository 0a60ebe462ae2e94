"""When a coronal mass ejection reaches Earth, by the drag-based model, and which nights it touches.

Beyond about 20 solar radii a CME is taken to move under "aerodynamic" drag only,
dv/dt = −γ (v − w)|v − w|, with constant drag parameter γ and ambient solar-wind
speed w; the equation has a closed-form solution (Vršnak et al. 2013). The arrival
window is spanned by the published ranges of γ and w.

References
----------
Vršnak, B., Žic, T., Vrbanec, D., et al. (2013), Propagation of interplanetary coronal
mass ejections: the drag-based model, Solar Physics 285, 295–315.
doi:10.1007/s11207-012-0035-4
Dumbović, M., Čalogović, J., Vršnak, B., et al. (2018), The drag-based ensemble model
(DBEM) for coronal mass ejection propagation, ApJ 854, 180. doi:10.3847/1538-4357/aaaa66
"""

from __future__ import annotations

import datetime as dt
import zoneinfo

import numpy as np

from auroraplan.errors import InputError

AU_KM = 149_597_870.7  # astronomical unit, IAU 2012 Resolution B2
SOLAR_RADIUS_KM = 695_700.0  # nominal solar radius, IAU 2015 Resolution B3
START_DISTANCE_KM = 20.0 * SOLAR_RADIUS_KM  # where drag dominates (Vršnak et al. 2013)

# Drag parameter γ, km⁻¹: "usually between 0.2 and 2 × 10⁻⁷ km⁻¹" (Vršnak et al. 2013,
# as repeated on SIDC's DBM page, sidc.be/rwc/ICME). Nominal γ = 0.2 × 10⁻⁷ km⁻¹ with
# w = 450 km/s: the values that minimised the scatter of observed minus computed
# transit times in the authors' statistical test of the DBM (Vršnak et al. 2013).
GAMMA_PER_KM = {"nominal": 0.2e-7, "low": 0.2e-7, "high": 2.0e-7}
# Ambient solar-wind speed w, km/s: 300–500 km/s, the slow-to-moderate wind in which
# most Earth-directed CMEs travel (range from memory; a CME in a fast stream from a
# coronal hole arrives earlier than this window).
WIND_KM_S = {"nominal": 450.0, "low": 300.0, "high": 500.0}

SPEED_RANGE_KM_S = (100.0, 5000.0)  # launch speeds the model is used for here

# Published accuracy: the DBEM's mean absolute error of arrival times is 14.3 h
# (Dumbović et al. 2018); the DBEMv3 evaluation on 146 events gives 17.3 h
# (Čalogović et al. 2021, Solar Physics 296, 114).
TYPICAL_ERROR_H = {"dbem_mae_h": 14.3, "dbem_v3_mae_h": 17.3}

CITATION = (
    "Vršnak et al. (2013), Solar Physics 285, 295, drag-based model; "
    "accuracy from Dumbović et al. (2018), ApJ 854, 180"
)

NEWTON_STEPS = 60


def dbm_distance_km(t_s, v0_km_s, gamma_per_km, w_km_s, r0_km=START_DISTANCE_KM):
    """Heliocentric distance of the CME front after t seconds.

    r(t) = ±(1/γ) ln[1 ± γ (v0 − w) t] + w t + r0, upper signs for v0 > w, lower for
    v0 < w; written here as r0 + w t + sign(u0)/γ · ln(1 + γ |u0| t), u0 = v0 − w.

    Parameters
    ----------
    t_s : array_like
        Time since the front was at r0, seconds.
    v0_km_s : array_like
        Speed at r0, km/s.
    gamma_per_km : array_like
        Drag parameter γ, km⁻¹.
    w_km_s : array_like
        Ambient solar-wind speed, km/s.
    r0_km : float
        Start distance, km (default 20 solar radii).

    Returns
    -------
    numpy.ndarray, km (broadcast shape)

    References
    ----------
    Vršnak et al. (2013), Solar Physics 285, 295, eq. (4).
    """
    u0 = np.asarray(v0_km_s, dtype=float) - w_km_s
    return (
        r0_km
        + np.multiply(w_km_s, t_s)
        + np.sign(u0) / gamma_per_km * np.log1p(gamma_per_km * np.abs(u0) * t_s)
    )


def dbm_speed_km_s(t_s, v0_km_s, gamma_per_km, w_km_s):
    """Speed of the CME front after t seconds: v = w + (v0 − w) / (1 + γ |v0 − w| t).

    Parameters and references as for :func:`dbm_distance_km` (Vršnak et al. 2013, eq. 3).

    Returns
    -------
    numpy.ndarray, km/s
    """
    u0 = np.asarray(v0_km_s, dtype=float) - w_km_s
    return w_km_s + u0 / (1.0 + gamma_per_km * np.abs(u0) * t_s)


def dbm_transit_s(v0_km_s, gamma_per_km, w_km_s, r0_km=START_DISTANCE_KM, target_km=AU_KM):
    """Seconds from r0 to the target distance, solving r(t) = target for every parameter set.

    Newton's method from t = (target − r0)/v0. Since dr/dt = v(t) lies between v0 and
    w, that start is below the root when the CME decelerates (r concave) and above it
    when it accelerates (r convex), so the iterates move monotonically to the root.

    Parameters
    ----------
    v0_km_s, gamma_per_km, w_km_s : array_like
        Broadcast together; km/s, km⁻¹, km/s.
    r0_km, target_km : float
        Start and target heliocentric distance, km (default 20 R☉ and 1 AU).

    Returns
    -------
    numpy.ndarray of float, seconds (broadcast shape)

    References
    ----------
    Vršnak et al. (2013), Solar Physics 285, 295.
    """
    v0, gamma, w = np.broadcast_arrays(
        np.asarray(v0_km_s, float), np.asarray(gamma_per_km, float), np.asarray(w_km_s, float)
    )
    t = (target_km - r0_km) / v0
    for _ in range(NEWTON_STEPS):
        miss = dbm_distance_km(t, v0, gamma, w, r0_km) - target_km
        step = miss / dbm_speed_km_s(t, v0, gamma, w)
        t = t - step
        if np.all(np.abs(step) < 1e-3):
            break
    return t


def check_speed(speed_km_s: float) -> float:
    """The launch speed, or InputError when outside SPEED_RANGE_KM_S."""
    low, high = SPEED_RANGE_KM_S
    if not np.isfinite(speed_km_s) or not low <= speed_km_s <= high:
        raise InputError(
            f"--speed {speed_km_s:g} km/s is outside {low:g} to {high:g} km/s; "
            "give the CME's speed near 20 solar radii"
        )
    return float(speed_km_s)


def arrival_window(
    launch_utc: dt.datetime,
    speed_km_s: float,
    gamma=GAMMA_PER_KM,
    wind=WIND_KM_S,
) -> dict:
    """Arrival time at 1 AU with the window spanned by the published γ and w ranges.

    Parameters
    ----------
    launch_utc : datetime.datetime
        Time the CME front is at 20 solar radii (timezone-aware, or UTC if naive).
    speed_km_s : float
        CME speed there, km/s, 100–5000.
    gamma, wind : dict
        ``nominal``, ``low`` and ``high`` drag parameter (km⁻¹) and solar-wind speed
        (km/s); defaults GAMMA_PER_KM and WIND_KM_S.

    Returns
    -------
    dict
        ``arrival``, ``earliest``, ``latest`` (aware UTC datetimes), ``transit_hours``,
        ``earliest_hours``, ``latest_hours``, ``impact_speed_km_s`` (nominal), and
        ``model`` (parameters, ranges, start distance, typical errors, citation).
        Earliest and latest are the extremes over a 5 × 5 grid of γ and w spanning the
        ranges (arrival time is monotone in each, so the corners decide).

    References
    ----------
    Vršnak et al. (2013), Solar Physics 285, 295; Dumbović et al. (2018), ApJ 854, 180.
    """
    speed = check_speed(speed_km_s)
    if launch_utc.tzinfo is None:
        launch_utc = launch_utc.replace(tzinfo=dt.UTC)
    launch_utc = launch_utc.astimezone(dt.UTC)
    g = np.geomspace(gamma["low"], gamma["high"], 5)
    w = np.linspace(wind["low"], wind["high"], 5)
    grid = dbm_transit_s(speed, g[:, None], w[None, :])
    nominal = float(dbm_transit_s(speed, gamma["nominal"], wind["nominal"]))
    impact = float(dbm_speed_km_s(nominal, speed, gamma["nominal"], wind["nominal"]))
    hours = {
        "transit_hours": nominal / 3600.0,
        "earliest_hours": float(grid.min()) / 3600.0,
        "latest_hours": float(grid.max()) / 3600.0,
    }

    def at(h):  # to the minute: the model is good to hours, not seconds
        return launch_utc.replace(second=0, microsecond=0) + dt.timedelta(minutes=round(h * 60))

    return {
        "launch": launch_utc,
        "speed_km_s": speed,
        "arrival": at(hours["transit_hours"]),
        "earliest": at(hours["earliest_hours"]),
        "latest": at(hours["latest_hours"]),
        **{k: round(v, 2) for k, v in hours.items()},
        "impact_speed_km_s": round(impact, 1),
        "model": {
            "name": "drag-based model",
            "gamma_per_km": gamma["nominal"],
            "gamma_range_per_km": [gamma["low"], gamma["high"]],
            "wind_km_s": wind["nominal"],
            "wind_range_km_s": [wind["low"], wind["high"]],
            "start_distance_km": START_DISTANCE_KM,
            "start_distance_solar_radii": START_DISTANCE_KM / SOLAR_RADIUS_KM,
            "target_km": AU_KM,
            "typical_error_hours": TYPICAL_ERROR_H,
            "citation": CITATION,
        },
    }


def _overlap_hours(a0, a1, b0, b1) -> float:
    return max(0.0, (min(a1, b1) - max(a0, b0)).total_seconds() / 3600.0)


def nights_touched(earliest: dt.datetime, latest: dt.datetime, tz: str, darkness=None) -> list:
    """Local nights (noon to noon in ``tz``) that the arrival window overlaps.

    Parameters
    ----------
    earliest, latest : datetime.datetime
        The arrival window (aware).
    tz : str
        IANA time zone of the base.
    darkness : list of dict, optional
        Darkness windows per local night as returned by
        ``auroraplan.sky.darkness_windows`` (``date``, ``dark_start``, ``dark_end`` as
        ISO strings or datetimes; None when the night has no darkness).

    Returns
    -------
    list of dict
        Per night: ``date`` (local date the night begins), ``window_hours`` (hours of
        the arrival window within that noon-to-noon night), and with ``darkness``
        also ``dark_start``, ``dark_end`` and ``dark_overlap_hours``.
    """
    from auroraplan.nights import night_bounds, night_of

    zone = zoneinfo.ZoneInfo(tz)
    first, last = night_of(earliest, zone), night_of(latest, zone)
    dark_by_date = {str(d["date"]): d for d in (darkness or [])}
    nights = []
    day = first
    while day <= last:
        start, end = night_bounds(day, zone)
        night = {
            "date": day.isoformat(),
            "window_hours": round(_overlap_hours(earliest, latest, start, end), 2),
        }
        if darkness is not None:
            night.update(_dark_overlap(dark_by_date.get(day.isoformat()), earliest, latest))
        nights.append(night)
        day += dt.timedelta(days=1)
    return nights


def _dark_overlap(dark: dict | None, earliest, latest) -> dict:
    if not dark or not dark.get("dark_start") or not dark.get("dark_end"):
        return {"dark_start": None, "dark_end": None, "dark_overlap_hours": 0.0}
    start, end = (
        dt.datetime.fromisoformat(v) if isinstance(v, str) else v
        for v in (dark["dark_start"], dark["dark_end"])
    )
    return {
        "dark_start": start.isoformat(),
        "dark_end": end.isoformat(),
        "dark_overlap_hours": round(_overlap_hours(earliest, latest, start, end), 2),
    }

