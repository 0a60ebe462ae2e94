"""How likely geomagnetic activity reaches the Kp a site needs, from a 3-hourly Kp forecast."""

from __future__ import annotations

import datetime as dt
import math
import re
from dataclasses import dataclass

import numpy as np

from auroraplan import checks
from auroraplan.checks import setting
from auroraplan.nights import utc_datetime64

BLOCK_HOURS = 3
"""Kp is defined for the eight 3-hour UT intervals of a day (Bartels et al., 1939)."""

KP_MAX = 9.0

KP_THIRDS = {"-": -1.0 / 3.0, "o": 0.0, "+": 1.0 / 3.0}
"""Offsets of the thirds notation of the Kp index (Bartels et al., 1939; GFZ Potsdam):
"5-" is 4 2/3, "5o" is 5 and "5+" is 5 1/3. The scale runs 0o, 0+, 1-, ... 9-, 9o,
so "0-" and "9+" do not exist."""

G_SCALE_KP = {"G1": 5.0, "G2": 6.0, "G3": 7.0, "G4": 8.0, "G5": 9.0}
"""NOAA Space Weather Scales, geomagnetic storms: the Kp that each level starts at
(G1 = Kp 5, G2 = Kp 6, G3 = Kp 7, G4 = Kp 8, G5 = Kp 9)."""

_THIRDS_RE = re.compile(r"^([0-9])\s*([-+oO\u2212])$")

KP_SHOWN_CHARS = 30
"""Longest piece of a bad Kp value quoted back in an error line."""

KP_ALLOWED = (
    "give a Kp from 0 to 9 as a number (4.33), in thirds (4-, 4o, 4+; 0o to 9o) "
    "or a NOAA storm level G1 to G5"
)


def parse_kp(text) -> float:
    """Read one Kp value as written in a forecast.

    Parameters
    ----------
    text : str or float
        A number from 0 to 9 ("4", "4.33"), the thirds notation ("4-", "4o", "4+";
        the unicode minus sign is accepted too) or a NOAA G-scale level ("G1" to "G5").

    Returns
    -------
    float
        Kp, 0 to 9. Thirds are exact: "4-" is 3.667, "4+" is 4.333. A G level gives the
        Kp at which that level starts.

    Raises
    ------
    ValueError
        With a message saying what is allowed.

    References
    ----------
    Bartels, J., Heck, N. H. & Johnston, H. F. (1939), The three-hour-range index
    measuring geomagnetic activity, Terr. Magn. Atmos. Electr. 44, 411-454.
    NOAA Space Weather Prediction Center, NOAA Space Weather Scales (geomagnetic storms).
    """
    raw = str(text).strip()
    if not raw:
        raise ValueError(f"empty; {KP_ALLOWED}")
    quoted = repr(raw) if len(raw) <= KP_SHOWN_CHARS else repr(raw[:KP_SHOWN_CHARS]) + "..."
    g_level = G_SCALE_KP.get(raw.upper())
    if g_level is not None:
        return g_level
    thirds = _THIRDS_RE.match(raw)
    if thirds:
        base = int(thirds.group(1))
        sign = thirds.group(2).replace("\u2212", "-").lower()
        value = base + KP_THIRDS[sign]
        if value < 0 or value > KP_MAX:
            raise ValueError(f"{quoted} is not on the Kp scale (0o to 9o); {KP_ALLOWED}")
        return value
    try:
        value = float(raw)
    except ValueError:
        raise ValueError(f"{quoted} is not a Kp value; {KP_ALLOWED}") from None
    if not (math.isfinite(value) and 0.0 <= value <= KP_MAX):
        raise ValueError(f"{quoted} is outside 0 to 9; {KP_ALLOWED}")
    return value


# The spread of a Kp forecast. The numbers are common practice, no source: about half a Kp
# unit for the next block, growing over the three days of an outlook. No published
# verification found gives the Kp error by lead time as a number to copy: NOAA SWPC's
# verification pages plot the error of its 1-3 day maximum-Kp forecasts, and Sharpe &
# Murray (2017) verify storm probabilities (forecasts over-predict storms); both are why
# the spread is a setting in operator.toml rather than a constant.


@dataclass(frozen=True)
class ActivitySettings:
    """operator.toml [activity]: how uncertain a Kp forecast is, and the Kp history to use.

    kp_sd = sd0 + rate_per_day * lead_days, at most sd_max, where the lead counts from
    ``issued_utc`` (an aware UTC datetime; None means the start of the forecast's first
    block).
    """

    sd0: float = setting(0.5, checks.number(0.0, 3.0, "Kp"), "Kp",
                         "spread of the forecast for the block it was issued in")
    rate_per_day: float = setting(0.4, checks.number(0.0, 3.0, "Kp"), "Kp per day",
                                  "growth of the spread per day of lead time")
    sd_max: float = setting(2.0, checks.number(0.1, 5.0, "Kp"), "Kp",
                            "largest spread, however far ahead")
    issued_utc: dt.datetime | None = setting(None, checks.time_setting, "ISO 8601 time",
                                             "when the forecast in activity.csv was made")
    history_file: str | None = setting(
        None, checks.text, "path",
        "Kp history in the CelesTrak space-weather format, relative to the workspace, "
        "used instead of the bundled file for the climatology")


def kp_spread(lead_days, spread: ActivitySettings):
    """Standard deviation of the forecast Kp at a lead time.

    Parameters
    ----------
    lead_days : array_like
        Time from the forecast's issue to the block's start, days. Negative leads (blocks
        before the issue time) count as 0.
    spread : ActivitySettings

    Returns
    -------
    numpy.ndarray
        kp_sd = min(sd0 + rate_per_day * lead_days, sd_max), Kp units.

    References
    ----------
    Linear growth with a cap and the default numbers: common practice, no source.
    Sharpe, M. A. & Murray, S. A. (2017), Verification of space weather forecasts issued by
    the Met Office Space Weather Operations Centre, Space Weather 15, 1383-1395 (skill of
    multi-day geomagnetic storm forecasts, for context).
    """
    lead = np.maximum(np.asarray(lead_days, dtype=float), 0.0)
    return np.minimum(spread.sd0 + spread.rate_per_day * lead, spread.sd_max)


def forecast_at(activity_df, times_utc, settings=None):
    """Forecast Kp and its spread at given times.

    Parameters
    ----------
    activity_df : pandas.DataFrame
        Columns ``start_utc`` (UTC), ``kp`` (float) and optionally ``kp_sd`` (float, NaN =
        use the spread rule), one row per 3-hour block, as read by ``load_workspace``.
    times_utc : array_like of datetime64, shape (T,)
        UTC times.
    settings : ActivitySettings or None
        The spread rule; None = defaults.

    Returns
    -------
    kp_mean : numpy.ndarray (T,)
        Kp of the block holding each time (a time t is in a block when
        start <= t < start + 3 h); NaN where no block covers the time.
    kp_sd : numpy.ndarray (T,)
        The explicit ``kp_sd`` of the block if given, else ``kp_spread`` at the lead time of
        the block's start; NaN where not covered.
    covered : numpy.ndarray of bool (T,)
        False where the forecast says nothing. Such times are never treated as quiet: the
        caller falls back to climatology.

    References
    ----------
    Bartels et al. (1939) for the 3-hour blocks; see ``kp_spread`` for the spread rule.
    """
    times = utc_datetime64(times_utc).astype("int64")
    spread = settings or ActivitySettings()
    shape = times.shape
    nan = np.full(shape, np.nan)
    if activity_df is None or len(activity_df) == 0:
        return nan, nan.copy(), np.zeros(shape, dtype=bool)

    starts = utc_datetime64(activity_df["start_utc"]).astype("int64")
    order = np.argsort(starts, kind="stable")
    starts = starts[order]
    kp = np.asarray(activity_df["kp"], dtype=float)[order]
    if "kp_sd" in activity_df:
        explicit_sd = np.asarray(activity_df["kp_sd"], dtype=float)[order]
    else:
        explicit_sd = np.full(kp.shape, np.nan)

    issued = starts[0] if spread.issued_utc is None else \
        utc_datetime64([spread.issued_utc]).astype("int64")[0]
    lead_days = (starts - issued) / 86400.0
    block_sd = np.where(np.isnan(explicit_sd), kp_spread(lead_days, spread), explicit_sd)

    block = np.searchsorted(starts, times, side="right") - 1
    safe = np.clip(block, 0, len(starts) - 1)
    covered = (block >= 0) & (times < starts[safe] + BLOCK_HOURS * 3600)
    kp_mean = np.where(covered, kp[safe], np.nan)
    kp_sd = np.where(covered, block_sd[safe], np.nan)
    return kp_mean, kp_sd, covered


def forecast_p_kp_at_least(kp_needed, kp_mean, kp_sd):
    """Chance that the true Kp reaches the Kp a site needs, from a forecast and its spread.

    The true Kp is taken as a normal distribution about the forecast truncated
    to the Kp scale [0, 9] (Kp cannot leave it), so P(Kp >= 0) = 1 and
    P(Kp > 9) = 0:

        P(Kp >= k) = (Phi(b) - Phi(z)) / (Phi(b) - Phi(a)),
        a = (0 - mean) / sd,  b = (9 - mean) / sd,  z = (k - mean) / sd,

    with Phi the standard normal distribution function (`normal_cdf`)
    and k clipped to [0, 9]. A normal error about the forecast is common
    practice, no source; truncation keeps every probability on the scale.

    Parameters
    ----------
    kp_needed : array_like (N, T)
        Kp needed per site and time; ``inf`` means not reachable.
    kp_mean : array_like (T,)
        Forecast Kp; NaN where there is no forecast.
    kp_sd : array_like (T,)
        Spread of the forecast, Kp units. Zero means certain: P is 1 when the forecast
        reaches the need and 0 otherwise.

    Returns
    -------
    numpy.ndarray (N, T)
        Probability 0-1; NaN where ``kp_mean`` is NaN, except 0 where ``kp_needed`` is inf.

    References
    ----------
    Johnson, N. L., Kotz, S. & Balakrishnan, N. (1994), Continuous Univariate
    Distributions vol. 1, 2nd ed., Wiley, ch. 13 (the truncated normal distribution).
    """
    ndtr = normal_cdf
    needed = np.asarray(kp_needed, dtype=float)
    mean, sd = np.asarray(kp_mean, dtype=float), np.asarray(kp_sd, dtype=float)
    k = np.clip(needed, 0.0, KP_MAX)
    with np.errstate(divide="ignore", invalid="ignore"):
        # The scale's ends depend on the forecast alone (T,): worked out once per time.
        lower = np.broadcast_to(ndtr((0.0 - mean) / sd), needed.shape)
        upper = np.broadcast_to(ndtr((KP_MAX - mean) / sd), needed.shape)
        mean, sd = np.broadcast_to(mean, needed.shape), np.broadcast_to(sd, needed.shape)
        inside = upper - lower
        p = (upper - ndtr((k - mean) / sd)) / inside
    certain = np.where(mean >= needed, 1.0, 0.0)
    # A forecast far outside the scale leaves no normal mass on it: the nearer end holds it.
    p = np.where(inside > 0, np.clip(p, 0.0, 1.0), np.where(mean >= KP_MAX, 1.0, 0.0))
    p = np.where(sd > 0, p, certain)
    p = np.where(needed <= 0.0, 1.0, p)
    p = np.where(needed > KP_MAX, 0.0, p)
    p = np.where(np.isnan(mean) | np.isnan(sd), np.nan, p)
    # an unreachable need stays unreachable with or without a forecast
    p = np.where(np.isposinf(needed), 0.0, p)
    return np.where(np.isneginf(needed), 1.0, p)


ERFC_CHEBYSHEV = (-1.26551223, 1.00002368, 0.37409196, 0.09678418, -0.18628806, 0.27886807,
                  -1.13520398, 1.48851587, -0.82215223, 0.17087277)
"""Coefficients of the Chebyshev fit to erfc, lowest order first (Press et al. 1992, §6.2)."""


def normal_cdf(x):
    """Standard normal distribution function Phi(x) = erfc(-x / sqrt 2) / 2, vectorised.

    erfc comes from the Chebyshev fit of Press, Teukolsky, Vetterling & Flannery
    (1992), Numerical Recipes in C, 2nd ed., §6.2 (``erfcc``): fractional error
    below 1.2e-7 everywhere, far below what a Kp forecast resolves, without
    importing scipy. ``tests/test_activity.py`` checks it against ``math.erfc``.

    Parameters
    ----------
    x : array_like
        Standard normal deviates; ±inf give 1 and 0, NaN gives NaN.

    Returns
    -------
    numpy.ndarray
        Phi(x), 0..1.
    """
    z = np.abs(np.asarray(x, dtype=float)) / math.sqrt(2.0)
    t = 1.0 / (1.0 + 0.5 * z)
    poly = np.zeros_like(t)
    for coefficient in reversed(ERFC_CHEBYSHEV[1:]):
        poly = t * (coefficient + poly)
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        tail = t * np.exp(-z * z + ERFC_CHEBYSHEV[0] + poly)  # erfc(|x| / sqrt 2)
    tail = np.where(np.isposinf(z), 0.0, tail)
    return np.where(np.asarray(x) < 0, 0.5 * tail, 1.0 - 0.5 * tail)
