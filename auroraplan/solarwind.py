"""What will the next hour bring? Kp estimated from the solar wind measured upstream at L1.

A spacecraft near the Sun-Earth L1 point measures the interplanetary magnetic field and the
plasma about an hour before they reach the Earth. This module carries each measurement to
the magnetopause by its own speed (the flat, ballistic delay), turns it into the rate at
which the solar wind opens magnetic flux (Newell et al. 2007), and that into a Kp estimate
(Newell et al. 2008), with a spread. It then blends the estimate into a Kp forecast for the
hours it covers, handing back to the forecast as the estimate ages.

Everything here takes arrays and a frozen ``NowcastSettings``; reading the file is the
workspace loader's job.

References
----------
Newell, P. T., Sotirelis, T., Liou, K., Meng, C.-I. & Rich, F. J. (2007), A nearly universal
solar wind-magnetosphere coupling function inferred from 10 magnetospheric state variables,
J. Geophys. Res. 112, A01206, doi:10.1029/2006JA012015.
Newell, P. T., Sotirelis, T., Liou, K. & Rich, F. J. (2008), Pairs of solar
wind-magnetosphere coupling functions: combining a merging term with a viscous term to
predict magnetospheric activity, J. Geophys. Res. 113, A04218, doi:10.1029/2007JA012825.
Case, N. A. & Wild, J. A. (2012), A statistical comparison of solar wind propagation delays
derived from multispacecraft techniques, J. Geophys. Res. 117, A02101.
Cash, M. D. et al. (2016), Validation of an operational product to determine L1 to Earth
propagation time delays, Space Weather 14(2), 93-112.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from auroraplan import checks
from auroraplan.checks import setting

EARTH_RADIUS_KM = 6371.0
"""Mean Earth radius (IUGG), the unit R_E of magnetospheric distances."""

L1_DISTANCE_KM = 1.5e6
"""Distance of the Sun-Earth L1 point from the Earth, about 1.5 million km (0.01 AU); used
when the file gives no spacecraft distance."""

MAGNETOPAUSE_RE = 10.0
"""Typical subsolar magnetopause stand-off, about 10 R_E for ordinary solar wind pressure
(Shue et al. 1997, J. Geophys. Res. 102, 9497). The delay is counted to this point."""

NEWELL_2008_KP = (0.05, 2.244e-4, 2.844e-6)
"""Kp = a + b dΦ/dt + c n^(1/2) v^2 (Newell et al. 2008, their pair of a merging and a
viscous term for Kp), with dΦ/dt in the units of Newell et al. (2007): v in km/s, B in nT;
n in cm^-3, v in km/s."""

ACTIVITY_WORDS = ((5.0, "storm"), (4.0, "active"), (3.0, "unsettled"), (0.0, "quiet"))
"""Words for an estimated Kp: NOAA's scale starts storms (G1) at Kp 5; "active" at 4 and
"unsettled" at 3 follow the usual Kp classes (common practice, no source)."""

TREND_WORDS = {1: "rising", 0: "steady", -1: "falling"}

FILL_ABOVE = 9000.0
"""Any magnitude at or above this is a fill value, not a measurement: real-time solar wind
files mark gaps with -9999.9, 99999.9, -999.9 style numbers (from memory); no measured field,
speed or density comes near it."""

PLAUSIBLE = {
    "speed_km_s": (200.0, 3000.0),
    "density_cm3": (0.0, 200.0),
    "by_gsm_nt": (-200.0, 200.0),
    "bz_gsm_nt": (-200.0, 200.0),
    "bx_gsm_nt": (-200.0, 200.0),
}
"""Values outside these are spikes, not solar wind: speeds seen at L1 run from about 250
to about 2,500 km/s, densities rarely pass 100 cm^-3 and the field 100 nT even in the great
storms (from memory; the limits leave a wide margin). Density must be above 0."""


@dataclass(frozen=True)
class NowcastSettings:
    """operator.toml [nowcast]: how solar wind measured upstream becomes a Kp estimate,
    and how long it is trusted. The ranges are common practice, no source."""

    average_min: float = setting(
        60.0, checks.number(10, 360, "minutes"), "minutes",
        "trailing window over which the coupling is averaged. Newell et al. (2008) fitted "
        "3-hourly Kp; a 60-minute window lets the estimate follow the last hour at the cost "
        "of more scatter (assumption; 180 gives the 3-hour window of the index)")
    model_kp_sd: float = setting(
        0.8, checks.number(0, 3, "Kp"), "Kp",
        "spread of Kp about the Newell et al. (2008) relation: fits of Kp to a coupling "
        "function leave residuals of roughly 0.7-0.9 Kp (from memory)")
    delay_sd_min: float = setting(
        15.0, checks.number(0, 120, "minutes"), "minutes",
        "uncertainty of the flat delay: errors of 15 min are common (Cash et al. 2016); the "
        "flat delay is statistically as good as the OMNI delay (Case & Wild 2012)")
    hand_back_min: float = setting(
        60.0, checks.number(5, 720, "minutes"), "minutes",
        "after the last measurement has arrived, the estimate's weight against the forecast "
        "falls as exp(-age / hand_back_min) (assumption: activity forgets its driver within "
        "about an hour once the driver is unknown)")
    spacecraft_km: float = setting(
        L1_DISTANCE_KM, checks.number(1.0e5, 3.0e6, "km"), "km",
        "spacecraft distance upstream of the Earth when the file has no distance column "
        "(L1, about 1.5 million km)")
    step_min: float = setting(10.0, checks.number(1, 60, "minutes"), "minutes",
                              "step of the estimate at the Earth")


SPACECRAFT_KM_RANGE = (1.0e5, 3.0e6)
"""Distances upstream accepted in a solar-wind file's distance column, km (the range of
``NowcastSettings.spacecraft_km``)."""


def clock_angle_deg(by_nt, bz_nt):
    """IMF clock angle in the GSM y-z plane, degrees: 0 due north, 180 due south.

    Parameters
    ----------
    by_nt, bz_nt : array_like
        GSM components of the interplanetary magnetic field, nT.

    Returns
    -------
    numpy.ndarray
        θ_c = atan2(|B_y|, B_z) in 0..180 degrees (Newell et al. 2007, their θ_c).
    """
    return np.degrees(np.arctan2(np.abs(by_nt), bz_nt))


def newell_coupling(speed_km_s, by_nt, bz_nt):
    """Rate at which the solar wind opens magnetic flux at the magnetopause.

    dΦ_MP/dt = v^(4/3) B_T^(2/3) sin^(8/3)(θ_c / 2), with B_T = sqrt(B_y² + B_z²) the
    transverse field and θ_c the clock angle.

    Parameters
    ----------
    speed_km_s : array_like
        Solar wind bulk speed, km/s.
    by_nt, bz_nt : array_like
        GSM components of the interplanetary magnetic field, nT.

    Returns
    -------
    numpy.ndarray
        dΦ_MP/dt in the paper's units, (km/s)^(4/3) nT^(2/3). Zero for a due-north field.

    References
    ----------
    Newell et al. (2007), J. Geophys. Res. 112, A01206, their equation for dΦ_MP/dt.
    """
    v = np.asarray(speed_km_s, dtype=float)
    by = np.asarray(by_nt, dtype=float)
    bz = np.asarray(bz_nt, dtype=float)
    b_t = np.hypot(by, bz)
    half_clock = np.arctan2(np.abs(by), bz) / 2.0
    return v ** (4.0 / 3.0) * b_t ** (2.0 / 3.0) * np.sin(half_clock) ** (8.0 / 3.0)


def viscous_term(density_cm3, speed_km_s):
    """The viscous driver n^(1/2) v^2 of Newell et al. (2008), cm^-3/2 (km/s)^2."""
    return np.sqrt(np.asarray(density_cm3, dtype=float)) * np.asarray(speed_km_s, float) ** 2


def kp_from_coupling(coupling, viscous):
    """Kp estimated from the merging and viscous terms.

    Kp = 0.05 + 2.244e-4 dΦ_MP/dt + 2.844e-6 n^(1/2) v^2, limited to the scale 0..9.

    Parameters
    ----------
    coupling : array_like
        dΦ_MP/dt from ``newell_coupling``, (km/s)^(4/3) nT^(2/3).
    viscous : array_like
        n^(1/2) v^2 from ``viscous_term``.

    Returns
    -------
    numpy.ndarray
        Kp, 0 to 9.

    References
    ----------
    Newell et al. (2008), J. Geophys. Res. 113, A04218 (the Kp row of their table of
    paired fits).
    """
    a, b, c = NEWELL_2008_KP
    kp = a + b * np.asarray(coupling, dtype=float) + c * np.asarray(viscous, dtype=float)
    return np.clip(kp, 0.0, 9.0)


def flat_delay_s(speed_km_s, spacecraft_km):
    """Travel time from the spacecraft to the magnetopause nose, seconds.

    The flat (ballistic) delay: the plasma moves along the Sun-Earth line at its measured
    speed, (X_spacecraft - X_magnetopause) / v, with the magnetopause at MAGNETOPAUSE_RE.

    Parameters
    ----------
    speed_km_s : array_like
        Measured bulk speed, km/s (taken as radial).
    spacecraft_km : array_like
        Spacecraft distance upstream of the Earth along the Sun-Earth line, km.

    Returns
    -------
    numpy.ndarray
        Seconds; about 60 min at 400 km/s from L1, 35 min at 700 km/s.

    References
    ----------
    Case & Wild (2012): the flat delay agrees statistically with OMNI's; Cash et al. (2016):
    its errors are commonly 15 min.
    """
    distance = np.asarray(spacecraft_km, dtype=float) - MAGNETOPAUSE_RE * EARTH_RADIUS_KM
    return distance / np.asarray(speed_km_s, dtype=float)


def activity_word(kp: float) -> str:
    """"quiet", "unsettled", "active" or "storm" for a Kp (see ACTIVITY_WORDS)."""
    for floor, word in ACTIVITY_WORDS:
        if kp >= floor:
            return word
    return ACTIVITY_WORDS[-1][1]


@dataclass(frozen=True)
class Nowcast:
    """Kp estimated at the Earth from upstream solar wind.

    Attributes
    ----------
    times_utc : numpy.ndarray of datetime64[s] (K,)
        Times at the Earth, every ``step_min``.
    kp : numpy.ndarray (K,)
        Kp estimated at each time (trailing average of the coupling, then Newell 2008).
    kp_sd : numpy.ndarray (K,)
        Its spread: the relation's own scatter and the delay's uncertainty times the rate
        at which the estimate changes, added in quadrature.
    measured_until_utc : numpy.datetime64
        Time of the last good measurement at the spacecraft.
    valid_until_utc : numpy.datetime64
        When that measurement reaches the Earth: the end of what the solar wind tells.
    trend : int
        +1 rising, 0 steady, -1 falling, over the last hour before ``valid_until_utc``.
    kp_change_per_h : float
        The rate behind ``trend``, Kp per hour.
    delay_min : float
        Flat delay of the last good measurement, minutes.
    settings : NowcastSettings
    """

    times_utc: np.ndarray
    kp: np.ndarray
    kp_sd: np.ndarray
    measured_until_utc: np.datetime64
    valid_until_utc: np.datetime64
    trend: int
    kp_change_per_h: float
    delay_min: float
    settings: NowcastSettings

    @property
    def latest_kp(self) -> float:
        return float(self.kp[-1])

    @property
    def trend_word(self) -> str:
        return TREND_WORDS[self.trend]


TREND_KP_PER_H = 0.5
"""A change of at least half a Kp unit per hour counts as rising or falling (common
practice, no source); less is steady."""


def estimate(times_utc, speed_km_s, density_cm3, by_nt, bz_nt, spacecraft_km=None,
             settings: NowcastSettings | None = None) -> Nowcast | None:
    """Kp at the Earth from good upstream measurements.

    Parameters
    ----------
    times_utc : array_like of datetime64 (M,)
        Measurement times at the spacecraft, UTC, good rows only (see ``screen``).
    speed_km_s, density_cm3, by_nt, bz_nt : array_like (M,)
        Bulk speed, proton density, GSM B_y and B_z.
    spacecraft_km : array_like (M,) or None
        Spacecraft distance upstream, km; None = ``settings.spacecraft_km``.
    settings : NowcastSettings or None

    Returns
    -------
    Nowcast or None
        None when there is no measurement.

    Notes
    -----
    The coupling is computed per measurement and then averaged (the clock-angle factor must
    be averaged after it is computed, not from averaged field components: Lockwood &
    McWilliams 2021, J. Geophys. Res. 126, e2021JA029946). Each measurement counts at its
    arrival time; the estimate at time t averages the arrivals in (t - average_min, t].
    """
    cfg = settings or NowcastSettings()
    times = np.asarray(times_utc, dtype="datetime64[s]")
    if times.size == 0:
        return None
    v = np.asarray(speed_km_s, dtype=float)
    distance = np.full(v.shape, cfg.spacecraft_km) if spacecraft_km is None else \
        np.asarray(spacecraft_km, dtype=float)
    delay_s = flat_delay_s(v, distance)
    arrival = times.astype("int64") + np.round(delay_s).astype("int64")
    order = np.argsort(arrival, kind="stable")
    arrival = arrival[order]
    coupling = newell_coupling(v, by_nt, bz_nt)[order]
    viscous = viscous_term(density_cm3, v)[order]

    step = int(round(cfg.step_min * 60))
    window = int(round(cfg.average_min * 60))
    first = arrival[0] - arrival[0] % step + step
    last_measured = int(times.astype("int64").max())
    valid_until = int(arrival[-1])
    grid = np.arange(first, valid_until + 1, step, dtype="int64")
    if grid.size == 0:
        grid = np.array([valid_until], dtype="int64")
    # Trailing means by cumulative sums: arrivals in (t - window, t].
    c_sum = np.concatenate([[0.0], np.cumsum(coupling)])
    v_sum = np.concatenate([[0.0], np.cumsum(viscous)])
    hi = np.searchsorted(arrival, grid, side="right")
    lo = np.searchsorted(arrival, grid - window, side="right")
    count = hi - lo
    keep = count > 0
    grid, hi, lo, count = grid[keep], hi[keep], lo[keep], count[keep]
    kp = kp_from_coupling((c_sum[hi] - c_sum[lo]) / count, (v_sum[hi] - v_sum[lo]) / count)

    change_per_h = _change_per_hour(grid, kp)
    delay_part = np.abs(np.gradient(kp, grid / 3600.0)) * cfg.delay_sd_min / 60.0 \
        if kp.size > 1 else np.zeros_like(kp)
    kp_sd = np.hypot(cfg.model_kp_sd, delay_part)
    trend = 0 if abs(change_per_h) < TREND_KP_PER_H else int(math.copysign(1, change_per_h))
    return Nowcast(
        times_utc=grid.astype("datetime64[s]"),
        kp=kp,
        kp_sd=kp_sd,
        measured_until_utc=np.datetime64(last_measured, "s"),
        valid_until_utc=np.datetime64(valid_until, "s"),
        trend=trend,
        kp_change_per_h=float(change_per_h),
        delay_min=float(delay_s[np.argmax(times.astype("int64"))] / 60.0),
        settings=cfg,
    )


def _change_per_hour(grid_s, kp) -> float:
    """Least-squares slope of Kp over the last hour of the estimate, Kp per hour."""
    recent = grid_s >= grid_s[-1] - 3600
    if recent.sum() < 2:
        return 0.0
    hours = (grid_s[recent] - grid_s[recent][0]) / 3600.0
    slope = np.polyfit(hours, kp[recent], 1)[0]
    return float(slope)


def nowcast_weight(times_utc, nowcast: Nowcast):
    """Weight of the solar-wind estimate against the forecast at each time, 0..1.

    1 from the first estimate to ``valid_until_utc``; after it exp(-age / hand_back_min);
    0 before the first estimate.
    """
    t = np.asarray(times_utc, dtype="datetime64[s]").astype("int64")
    start = nowcast.times_utc[0].astype("int64")
    end = nowcast.valid_until_utc.astype("int64")
    age_min = (t - end) / 60.0
    weight = np.where(age_min <= 0, 1.0, np.exp(-np.maximum(age_min, 0.0)
                                                / nowcast.settings.hand_back_min))
    return np.where(t < start, 0.0, weight)


BLEND_FLOOR = 0.05
"""Below this weight the estimate is dropped and the forecast stands alone."""


def blend(times_utc, kp_mean, kp_sd, covered, nowcast: Nowcast | None):
    """Kp forecast with the solar-wind estimate laid over the hours it speaks for.

    Parameters
    ----------
    times_utc : array_like of datetime64 (T,)
    kp_mean, kp_sd : numpy.ndarray (T,)
        The forecast's Kp and spread (NaN where it says nothing).
    covered : numpy.ndarray of bool (T,)
        Where the forecast covers.
    nowcast : Nowcast or None

    Returns
    -------
    kp_mean, kp_sd, covered, weight : numpy.ndarray (T,)
        The blend is the two-component mixture: mean w·now + (1-w)·forecast, variance
        w·sd_now² + (1-w)·sd_fc² + w(1-w)(now - forecast)². Where the forecast says
        nothing the estimate stands alone while its weight is at least BLEND_FLOOR.
        ``weight`` is the estimate's share (0 where unused).
    """
    kp_mean = np.asarray(kp_mean, dtype=float)
    kp_sd = np.asarray(kp_sd, dtype=float)
    covered = np.asarray(covered, dtype=bool)
    if nowcast is None:
        return kp_mean, kp_sd, covered, np.zeros(kp_mean.shape)
    t = np.asarray(times_utc, dtype="datetime64[s]").astype("int64")
    grid = nowcast.times_utc.astype("int64")
    now_kp = np.interp(t, grid, nowcast.kp)
    now_sd = np.interp(t, grid, nowcast.kp_sd)
    weight = nowcast_weight(times_utc, nowcast)
    weight = np.where(weight >= BLEND_FLOOR, weight, 0.0)
    alone = ~covered & (weight > 0)
    weight = np.where(alone, 1.0, weight)
    fc_kp = np.where(covered, kp_mean, 0.0)
    fc_sd = np.where(covered, kp_sd, 0.0)
    mean = weight * now_kp + (1 - weight) * fc_kp
    var = weight * now_sd**2 + (1 - weight) * fc_sd**2 + weight * (1 - weight) * (now_kp - fc_kp)**2
    used = weight > 0
    return (np.where(used, mean, kp_mean), np.where(used, np.sqrt(var), kp_sd),
            covered | used, np.where(used, weight, 0.0))


def screen(speed_km_s, density_cm3, by_nt, bz_nt, bx_nt=None):
    """Which measurements are solar wind and which are gaps or spikes.

    Parameters
    ----------
    speed_km_s, density_cm3, by_nt, bz_nt, bx_nt : array_like (M,)
        NaN marks an empty cell.

    Returns
    -------
    good : numpy.ndarray of bool (M,)
    reason : list of str (M,)
        "" for a good row, else why it is not used: "gap" (empty cell or a fill value
        such as -9999.9, see FILL_ABOVE) or "spike" (outside PLAUSIBLE).
    """
    columns = {"speed_km_s": speed_km_s, "density_cm3": density_cm3,
               "by_gsm_nt": by_nt, "bz_gsm_nt": bz_nt}
    if bx_nt is not None:
        columns["bx_gsm_nt"] = bx_nt
    n = len(np.asarray(speed_km_s))
    reason = [""] * n
    good = np.ones(n, dtype=bool)
    for name, values in columns.items():
        x = np.asarray(values, dtype=float)
        gap = np.abs(x) >= FILL_ABOVE
        if name != "bx_gsm_nt":  # B_x is not used by the coupling: an empty cell is no gap
            gap |= np.isnan(x)
        low, high = PLAUSIBLE[name]
        spike = ~gap & ((x < low) | (x > high) | ((name == "density_cm3") & (x <= 0)))
        for i in np.flatnonzero((gap | spike) & good):
            reason[i] = f"{'gap' if gap[i] else 'spike'} in {name}"
        good &= ~(gap | spike)
    return good, reason
