"""Combining darkness, moonlight, activity and cloud into the chance of seeing the aurora.

Per site and time step the chance is the product of four factors:

    chance = darkness × moon factor × P(aurora visible) × P(clear)

and per local night it is summarised as the best window, the expected
visible minutes and the probability of at least one visible display.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from auroraplan import checks
from auroraplan.checks import setting

# Factor names in the order used for "what limits it".
FACTORS = ("darkness", "moon", "activity", "cloud")

@dataclass(frozen=True)
class ChanceSettings:
    """operator.toml [chance]: the assumptions of the chance model.

    The ranges are what the formulas here can use (probabilities 0-1, durations above 0 and
    within a day, Kp spreads and margins on the 0-9 scale); common practice, no source.
    """

    boundary_sd_kp: float = setting(
        0.5, checks.number(0, 3, "Kp"), "Kp",
        "spread of the oval boundary itself, added in quadrature to the forecast's spread. "
        "Assumption: the observed equatorward boundary scatters about 1 degree of latitude "
        "around a model (Starkov 1994 quotes boundary errors of this order) and moves about "
        "2 degrees per Kp (Gussenhoven et al. 1983), hence about 0.5 Kp")
    moon_beta: float = setting(
        0.5, checks.number(0, 3), "",
        "moon rule: the share of displays that still stand out against a sky brightened by "
        "dm magnitudes is 10**(-0.4 * beta * dm), from a display-brightness distribution "
        "P(I >= x) proportional to x**-beta (a power law; beta is an assumption, common "
        "practice, no source) and a fixed contrast threshold against the sky (Weber's law)")
    display_quiet: float = setting(
        0.3, checks.number(0, 1, "(a probability)"), "probability",
        "chance of a visible display in one decorrelation time when the band is just within "
        "reach. The band being within view is not yet a display bright enough to see: "
        "displays come and go with substorms (assumption, common practice, no source)")
    display_active: float = setting(
        0.8, checks.positive(1, "(a probability)"), "probability",
        "the same when activity exceeds the need by strong_margin_kp: a stronger driver "
        "gives brighter, longer displays (assumption, common practice, no source)")
    strong_margin_kp: float = setting(2.0, checks.number(0, 9, "Kp"), "Kp",
                                      "Kp above the need at which activity counts as strong")
    decorrelation_min: float = setting(
        120.0, checks.positive(1440, "minutes"), "minutes",
        "displays are taken as independent from one decorrelation time to the next (about "
        "one substorm cycle; substorm expansions recur every 2-4 h; assumption)")
    min_window_min: float = setting(30.0, checks.positive(1440, "minutes"), "minutes",
                                    "a best window is never shorter than this")
    max_window_min: float = setting(180.0, checks.positive(1440, "minutes"), "minutes",
                                    "nor longer than this")

    ORDERED = (
        # (lower, upper, what the pair means): the loader checks lower <= upper
        ("display_quiet", "display_active",
         "a display is no less likely when activity is strong"),
        ("min_window_min", "max_window_min",
         "the shortest best window is not longer than the longest"),
    )


def display_probability(p_reach, p_strong, settings: ChanceSettings | None = None):
    """Chance of a visible display in one decorrelation time, given activity.

    ``p_reach`` = P(Kp needed ≤ Kp < Kp lost), ``p_strong`` = P(Kp needed +
    margin ≤ Kp < Kp lost), where Kp lost (``view.kp_lost_at``) is where the
    band leaves the view of a polar-cap site (inf elsewhere).
    q = q_quiet · p_reach + (q_active − q_quiet) · p_strong. Below Kp lost
    both terms rise with Kp, so q never falls when the forecast rises; a
    forecast beyond Kp lost lowers q for that site, as it should.
    """
    settings = settings or ChanceSettings()
    q0, q1 = settings.display_quiet, settings.display_active
    return q0 * np.asarray(p_reach) + (q1 - q0) * np.asarray(p_strong)


def activity_factor(p_at_least, kp_needed, kp_lost, cfg: ChanceSettings | None = None):
    """Chance of a visible display per decorrelation time from P(Kp ≥ k) (N, T).

    A storm that carries the band out of a polar-cap site's sight does not
    help it: the band is in view for Kp needed ≤ Kp < Kp lost
    (:func:`auroraplan.view.kp_lost_at`), so
    p_reach = P(Kp ≥ need) − P(Kp ≥ lost) and p_strong likewise with the
    need raised by ``strong_margin_kp``; then :func:`display_probability`.

    Parameters
    ----------
    p_at_least : callable
        ``p_at_least(kp (N, T)) -> (N, T)``: P(Kp ≥ kp) from a forecast or climatology.
    kp_needed, kp_lost : ndarray (N, T)
        Kp needed on the horizon and Kp at which the band is lost (inf: never).
    cfg : ChanceSettings, optional
        ``strong_margin_kp``, ``display_quiet``, ``display_active``.
    """
    return display_probability(*activity_parts(p_at_least, kp_needed, kp_lost, cfg), cfg)


def activity_parts(p_at_least, kp_needed, kp_lost, cfg=None):
    """(p_reach, p_strong) (N, T) of :func:`activity_factor`; the forecast archive keeps them."""
    cfg = cfg or ChanceSettings()
    p_lost = np.zeros(kp_needed.shape)
    if np.isfinite(kp_lost).any():
        p_lost = np.where(np.isfinite(kp_lost),
                          p_at_least(np.where(np.isfinite(kp_lost), kp_lost, 0.0)), 0.0)
    p_reach = np.maximum(p_at_least(kp_needed) - p_lost, 0.0)
    p_strong = np.maximum(p_at_least(kp_needed + cfg.strong_margin_kp) - p_lost, 0.0)
    return p_reach, p_strong


@dataclass
class ChanceGrid:
    """Chance and its factors per site (N) and time step (T)."""

    times_utc: np.ndarray  # (T,) datetime64[s]
    night_index: np.ndarray  # (T,) int, 0..nights-1
    step_min: float
    darkness: np.ndarray  # (N, T) 0 or 1: dark, and a group can be at the site then
    moon: np.ndarray  # (N, T) 0..1
    activity: np.ndarray  # (N, T) chance of a display per decorrelation time; NaN without data
    p_clear: np.ndarray  # (N, T) P(clear line of sight) 0..1
    chance: np.ndarray  # (N, T)
    kp_needed: np.ndarray  # (N, T)
    look_azimuth_deg: np.ndarray  # (N, T) where to look at the forecast Kp (true bearing)
    look_elevation_deg: np.ndarray  # (N, T)
    overhead: np.ndarray  # (N, T) bool: the band is over the site at the forecast Kp
    cloud_pct: np.ndarray  # (N, T), NaN where no cloud forecast
    kp_mean: np.ndarray  # (T,) forecast Kp, NaN beyond the forecast
    kp_sd: np.ndarray  # (T,)
    kind: np.ndarray  # (T,) "forecast" | "outlook" | "none"
    mlt: np.ndarray  # (N, T) magnetic local time, hours
    dark_sky: np.ndarray  # (N, T) bool: dark at the operator's level, at any hour
    outing: np.ndarray  # (T,) bool: inside the outing hours (derived or the operator's)
    sun_alt: np.ndarray  # (N, T)
    moon_alt: np.ndarray  # (N, T)
    moon_illumination: np.ndarray  # (T,)
    warnings: list = field(default_factory=list)
    nowcast_weight: np.ndarray | None = None  # (T,) share of the solar-wind Kp estimate, 0..1
    outing_hours: str = ""  # local "HH:MM–HH:MM" of the first night's outing hours
    # The activity factor's parts and the moon's brightening, kept so that the forecast
    # archive can refit the settings (auroraplan.calibrate) without the sky again.
    sky_brightening_mag: np.ndarray | None = None  # (N, T) dark − moonlit sky, mag ≥ 0
    p_reach: np.ndarray | None = None  # (N, T) P(Kp needed ≤ Kp < Kp lost)
    p_strong: np.ndarray | None = None  # (N, T) the same with the strong margin
    cloud_source_code: np.ndarray | None = None  # (N, T) uint8, weather.CloudGrid.source_code
    cloud_models: list = field(default_factory=list)  # (M,) weather-model names
    cloud_model_pct: np.ndarray | None = None  # (M, N, T) each model's cloud, percent
    cloud_spread_pct: np.ndarray | None = None  # (N, T) largest minus smallest model value
    cloud_note: str = ""  # where the cloud figures come from (weather.source_note)
    cloud_tally: object = None  # weather.CloudTally: what the cloud warnings and note rest on
    outside_hours_at: dict = field(default_factory=dict)  # site -> steps (outside_hours_found)


def moon_factor(dark_sky_mag, moonlit_sky_mag, beta=ChanceSettings.moon_beta):
    """Share of aurora displays still visible when moonlight brightens the sky.

    Parameters
    ----------
    dark_sky_mag : array_like
        The site's moonless sky brightness, V mag/arcsec².
    moonlit_sky_mag : array_like
        Sky brightness toward the aurora with the moon, V mag/arcsec²
        (Krisciunas & Schaefer 1991, via :func:`auroraplan.sky.moonlit_sky_mag`).
    beta : float
        Exponent of the display-brightness distribution P(I ≥ x) ∝ x^-beta.

    Returns
    -------
    ndarray
        Factor in (0, 1]; 1 when the moon adds nothing.

    Notes
    -----
    A display is seen when its surface brightness exceeds a fixed fraction of
    the sky's (a constant-contrast threshold, Weber's law). Moonlight raises
    the sky by dm = dark − moonlit magnitudes, i.e. by a factor 10^(0.4 dm)
    in intensity, so only displays that much brighter remain: a share
    10^(-0.4 · beta · dm) of them. For scale: a green-line display of 1 kR has
    a surface brightness near 21.7 V mag/arcsec² (about the dark sky), the
    International Brightness Coefficient classes I–IV are 1, 10, 100 and
    1000 kR (Hunten 1955; Chamberlain 1961, Physics of the Aurora and
    Airglow).
    """
    dm = np.maximum(np.asarray(dark_sky_mag, float) - np.asarray(moonlit_sky_mag, float), 0.0)
    return 10.0 ** (-0.4 * beta * dm)


def p_aurora_from_forecast(kp_needed, kp_mean, kp_sd, boundary_sd_kp):
    """P(aurora visible) = P(Kp + boundary error ≥ Kp needed), on the Kp scale 0-9.

    The forecast's spread and the boundary's own spread add in quadrature;
    the result is a normal truncated to [0, 9]
    (:func:`auroraplan.activity.forecast_p_kp_at_least`).
    """
    from auroraplan.activity import forecast_p_kp_at_least

    total_sd = np.sqrt(np.asarray(kp_sd, float) ** 2 + boundary_sd_kp**2)
    return forecast_p_kp_at_least(kp_needed, kp_mean, total_sd)


# Three-point Gauss–Hermite rule for E[f(X)], X ~ N(0, 1) (Abramowitz &
# Stegun 1964, table 25.10, rescaled to the standard normal).
_GH_NODES = np.array([-np.sqrt(3.0), 0.0, np.sqrt(3.0)])
_GH_WEIGHTS = np.array([1.0 / 6.0, 2.0 / 3.0, 1.0 / 6.0])


def p_aurora_from_climatology(climatology, kp_needed, times_utc, boundary_sd_kp, known=None):
    """P(Kp ≥ Kp needed) from the climatology, smeared by the boundary's spread.

    With ``known`` = (block starts, Kp) of known activity, times one solar
    rotation after a known block use the 27-day recurrence blend
    (:meth:`auroraplan.climatology.Climatology.p_kp_at_least_with_recurrence`).
    """
    def one(need):
        if known is not None and len(known[0]):
            return climatology.p_kp_at_least_with_recurrence(need, times_utc, *known)
        return climatology.p_kp_at_least(need, times_utc)

    total = np.zeros(np.shape(kp_needed))
    for node, weight in zip(_GH_NODES, _GH_WEIGHTS, strict=True):
        total += weight * one(kp_needed + node * boundary_sd_kp)
    return total


def site_arrays(sites):
    """Columns of the site list as arrays (N,)."""
    return {
        "lat": np.array([s.lat for s in sites], float),
        "lon": np.array([s.lon for s in sites], float),
        "height_m": np.array([s.height_m for s in sites], float),
        "sky_mag": np.array([s.sky_mag for s in sites], float),
        "drive_min": np.array([getattr(s, "drive_min", 0.0) for s in sites], float),
        "horizons": [s.horizon for s in sites],
    }


def compute_grid(
    sites, times_utc, night_index, step_min, *, tz, settings, activity=None, clouds=None,
    climatology=None, table=None, nowcast=None, cloud=None, all_steps=False,
    warn_outside_hours=True,
):
    """Chance per site and time step.

    Parameters
    ----------
    sites : list of Site
        The sites to evaluate.
    times_utc : ndarray of datetime64, shape (T,)
    night_index : ndarray of int, shape (T,)
    step_min : float
        Step between times, minutes.
    tz : str
        IANA time zone of the base (outing hours are local clock hours).
    settings : auroraplan.settings.Settings
        The stage settings: ``viewing``, ``activity``, ``chance`` and ``outing``.
    activity : csvcolumns.ActivityTable or pandas.DataFrame, optional
        The Kp forecast (``start_utc``, ``kp``, ``kp_sd``); None or empty = no forecast,
        as in long-range work (season), where the climatology serves alone.
    clouds : csvcolumns.CloudTable or pandas.DataFrame, optional
        Hourly cloud per site (``site``, ``time_utc``, ``cloud_pct``); None or empty = each
        site's monthly clear-sky fraction.
    climatology : object with ``p_kp_at_least(kp_needed, times_utc)``, optional
        Used beyond the forecast; without it such steps have NaN activity.
    table : auroraplan.view.KpNeeded, optional
        A Kp-needed table already computed for these sites (long ranges reuse it).
    cloud : auroraplan.weather.CloudGrid, optional
        Cloud already combined from clouds.csv, weather-model files and sky reports
        (``report.cloud_for``); without it, ``clouds`` or the climatology.
    nowcast : auroraplan.solarwind.Nowcast, optional
        Kp estimated from upstream solar wind; laid over the forecast for the hours it
        covers (``solarwind.blend``).
    all_steps : bool
        Work out the oval, look, moonlit sky and activity at every step. By default only
        at :func:`working_steps` (dark outing steps and an hour around them); elsewhere
        the chance is 0 and ``kp_needed`` and the look are NaN, ``moon`` 1 and
        ``activity`` 0. A timeline over the whole night asks for every step.
    warn_outside_hours : bool
        When the operator set outing hours, name the sites whose best time falls outside
        them (:func:`outside_hours_found`; it needs every dark step worked out). Long
        ranges (season) leave it out.
    """
    from auroraplan import magnetic, sky, view, weather
    from auroraplan.activity import forecast_at
    from auroraplan.nights import hours_text

    cfg = settings.chance
    viewing = settings.viewing
    arr = site_arrays(sites)
    times_utc = np.asarray(times_utc, dtype="datetime64[s]")
    warnings: list[str] = []

    track = sky.sun_moon_altaz(arr["lat"], arr["lon"], arr["height_m"], times_utc)
    dark = track.sun_alt < sky.DARKNESS_DEG[viewing.darkness]

    if table is None:
        table = kp_table(sites, times_utc[len(times_utc) // 2], viewing)
    mlt = magnetic.mlt(table.mlon, times_utc)
    outing, usable = outing_for(settings.outing, times_utc, night_index, tz, step_min, mlt,
                                table.mlon, dark, arr["drive_min"], arr["lon"])
    darkness = (dark & usable).astype(float)

    has_forecast = activity is not None and len(activity) > 0
    if has_forecast:
        kp_mean, kp_sd, covered = forecast_at(activity, times_utc, settings.activity)
    else:
        kp_mean = np.full(times_utc.shape, np.nan)
        kp_sd = np.full(times_utc.shape, np.nan)
        covered = np.zeros(times_utc.shape, bool)
    nowcast_weight = np.zeros(times_utc.shape)
    if nowcast is not None:
        from auroraplan.solarwind import blend

        kp_mean, kp_sd, covered, nowcast_weight = blend(times_utc, kp_mean, kp_sd, covered,
                                                        nowcast)
    kind = np.where(covered, "forecast", "none").astype(object)
    rest = ~covered if climatology else np.zeros_like(covered)
    kind[rest] = "outlook"
    known = None
    if has_forecast and hasattr(climatology, "p_kp_at_least_with_recurrence"):
        from auroraplan.nights import utc_datetime64

        known = (utc_datetime64(activity["start_utc"]), np.asarray(activity["kp"], dtype=float))

    # The oval, the look and the moonlit sky only where a chance can be shown.
    # With the operator's own hours, every dark step: a site's best time outside them is
    # looked for (outside_hours_found).
    warn_outside = warn_outside_hours and settings.outing.set_by_operator
    work = np.ones(times_utc.shape, bool) if all_steps else working_steps(
        dark if warn_outside else darkness, step_min)
    at = _StepsAt(work)
    mlt_w = at.take(mlt)
    kp_needed_w = view.kp_needed_at(table, mlt_w)
    kp_lost_w = view.kp_lost_at(table, mlt_w)
    look = look_for_forecast(table, kp_needed_w, kp_lost_w, at.take(kp_mean), mlt_w)
    look_az, look_el = look["look_azimuth_deg"], look["look_elevation_deg"]

    target_alt = np.clip(np.nan_to_num(look_el, nan=viewing.min_elevation_deg),
                         viewing.min_elevation_deg, 90.0)
    target_az = np.nan_to_num(look_az, nan=0.0)
    k_v = (np.full(len(sites), float(viewing.extinction_k)) if viewing.extinction_k is not None
           else sky.extinction_k_v(arr["height_m"]))
    moonlit = sky.moonlit_sky_mag(
        arr["sky_mag"][:, None], at.take(track.moon_alt), at.take(track.moon_az), target_alt,
        target_az, at.take(track.moon_phase_angle_deg)[None, :], k_v=k_v[:, None],
    )
    moon_w = moon_factor(arr["sky_mag"][:, None], moonlit, cfg.moon_beta)
    covered_w, rest_w, times_w = at.take(covered), at.take(rest), at.take(times_utc)
    kp_mean_w, kp_sd_w = at.take(kp_mean), at.take(kp_sd)

    def p_at_least(kp):
        """P(Kp ≥ kp) (N, W) from the forecast, else the climatology."""
        p = np.full(kp.shape, np.nan)
        if covered_w.any():
            p[:, covered_w] = p_aurora_from_forecast(
                kp[:, covered_w], kp_mean_w[covered_w], kp_sd_w[covered_w],
                cfg.boundary_sd_kp)
        if rest_w.any():
            p[:, rest_w] = p_aurora_from_climatology(
                climatology, kp[:, rest_w], times_w[rest_w], cfg.boundary_sd_kp, known)
        return p

    p_reach, p_strong = activity_parts(p_at_least, kp_needed_w, kp_lost_w, cfg)
    activity = display_probability(p_reach, p_strong, cfg)

    if cloud is None:  # worked out where the chance is, like the factors above
        cloud = at.cloud(weather.cloud_grid(sites, clouds, times_w, tz=tz,
                                            settings=settings.weather))
    p_clear, cloud_pct = cloud.p_clear, cloud.cloud_pct
    warnings.extend(cloud.warnings)

    # Per step: the chance of a visible display in one decorrelation time
    # around it; also the expected share of the step with a display in sight.
    moon, activity = at.full(moon_w, 1.0), at.full(activity, 0.0)
    chance = darkness * moon * activity * p_clear
    found = {}
    if warn_outside:
        found = outside_hours_found(night_index, dark * moon * activity * p_clear, usable)
        warnings.extend(outside_hours_lines([s.name for s in sites], times_utc, found,
                                            np.unique(night_index).size, settings.outing, tz))
    return ChanceGrid(
        times_utc=times_utc, night_index=np.asarray(night_index), step_min=float(step_min),
        darkness=darkness, moon=moon, activity=activity, p_clear=p_clear, chance=chance,
        kp_needed=at.full(kp_needed_w, np.nan), look_azimuth_deg=at.full(look_az, np.nan),
        look_elevation_deg=at.full(look_el, np.nan), overhead=at.full(look["overhead"], False),
        cloud_pct=cloud_pct, kp_mean=kp_mean, kp_sd=kp_sd, kind=kind,
        mlt=mlt, sun_alt=track.sun_alt, moon_alt=track.moon_alt, dark_sky=dark, outing=outing,
        moon_illumination=track.moon_illumination, warnings=warnings,
        nowcast_weight=nowcast_weight,
        outing_hours=hours_text(times_utc, outing, tz),
        sky_brightening_mag=at.full(np.maximum(arr["sky_mag"][:, None] - moonlit, 0.0), 0.0),
        p_reach=at.full(p_reach, 0.0), p_strong=at.full(p_strong, 0.0),
        cloud_source_code=cloud.source_code, cloud_models=cloud.models, cloud_model_pct=cloud.model_pct,
        cloud_spread_pct=cloud.spread_pct, cloud_note=cloud.note, cloud_tally=cloud.tally,
        outside_hours_at=found,
    )


NIGHTS_SITE_STEPS = 1_000_000
"""Site-steps worked out at once by :func:`compute_nights` (whole nights, at least one at
a time): a week over 10,000 sites is then seven grids of a night each instead of one grid
of ten million site-steps, which held gigabytes."""


@dataclass
class PeakLook:
    """Where to look at each site (N) and night (D), at the night's peak step
    (``NightSummary.peak_step``): as the same fields of :class:`ChanceGrid`, by night."""

    look_azimuth_deg: np.ndarray  # (N, D)
    look_elevation_deg: np.ndarray  # (N, D)
    overhead: np.ndarray  # (N, D) bool


@dataclass
class NightsOverview:
    """A run of nights worked out a few at a time (:func:`compute_nights`): what a report
    over many nights reads besides the :class:`NightSummary`.

    The per-step fields keep the time axis (T,); ``darkness``, ``dark_sky`` and ``sun_alt``
    hold one row (1, T) standing for all the sites together (the darkest any site gets:
    the largest ``darkness``, any ``dark_sky``, the lowest sun), which is all a report over
    the sites reads of them. The warnings and the cloud note are those of one grid over
    all the nights."""

    times_utc: np.ndarray  # (T,) datetime64[s]
    night_index: np.ndarray  # (T,)
    step_min: float
    kind: np.ndarray  # (T,)
    outing: np.ndarray  # (T,) bool
    outing_hours: str
    darkness: np.ndarray  # (1, T)
    dark_sky: np.ndarray  # (1, T) bool
    sun_alt: np.ndarray  # (1, T)
    look: PeakLook
    warnings: list
    cloud_note: str
    cloud_models: list


def night_runs(night_index, n_sites, site_steps=NIGHTS_SITE_STEPS):
    """(first night, last night + 1) of each run of whole nights holding at most
    ``site_steps`` site-steps (always at least one night)."""
    counts = np.bincount(np.asarray(night_index, int))
    runs, first, held = [], 0, 0
    for d, count in enumerate(counts):
        size = int(count) * max(n_sites, 1)
        if d > first and held + size > site_steps:
            runs.append((first, d))
            first, held = d, 0
        held += size
    if counts.size:
        runs.append((first, counts.size))
    return runs


def compute_nights(sites, times_utc, night_index, step_min, nights, *, tz, settings,
                   cloud=None, each=None, site_steps=None, table=None,
                   warn_outside_hours=True, **grid_options):
    """:func:`compute_grid` and :func:`summarise_nights` a few whole nights at a time.

    Every value is the one grid over all the nights would give: the Kp-needed table is
    taken at the middle of the whole span as there, each night's steps and outing hours
    depend on that night alone, and the warnings and cloud note are joined over the runs
    (``weather.CloudTally.join``, :func:`outside_hours_found`).

    Parameters
    ----------
    cloud : callable, optional
        ``cloud(times_utc) -> weather.CloudGrid`` for a run's steps; without it the
        ``clouds`` option of :func:`compute_grid` serves.
    each : callable, optional
        ``each(grid, summary, first_night)`` for every run while its grid is at hand (the
        forecast archive keeps its parts); ``grid`` counts its nights from 0.
    site_steps : int, optional
        Site-steps per run (``NIGHTS_SITE_STEPS``).
    Other keywords go to :func:`compute_grid`.

    Returns
    -------
    (NightsOverview, NightSummary)
    """
    times_utc = np.asarray(times_utc, dtype="datetime64[s]")
    night_index = np.asarray(night_index)
    if table is None:
        table = kp_table(sites, times_utc[len(times_utc) // 2], settings.viewing)
    n = len(sites)
    parts, overview = [], {"kind": [], "outing": [], "darkness": [], "dark_sky": [],
                           "sun_alt": []}
    looks = {"look_azimuth_deg": [], "look_elevation_deg": [], "overhead": []}
    found, tally, note, models = {}, None, "", []
    for first, last in night_runs(night_index, n, site_steps or NIGHTS_SITE_STEPS):
        cols = np.flatnonzero((night_index >= first) & (night_index < last))
        grid = compute_grid(
            sites, times_utc[cols], night_index[cols] - first, step_min, tz=tz,
            settings=settings, table=table, warn_outside_hours=warn_outside_hours,
            cloud=cloud(times_utc[cols]) if cloud is not None else None, **grid_options)
        summary = summarise_nights(grid, last - first, settings.chance)
        if each is not None:
            each(grid, summary, first)
        steps = np.where(summary.peak_step >= 0, summary.peak_step, 0)
        rows = np.arange(n)[:, None]
        for key in looks:
            looks[key].append(getattr(grid, key)[rows, steps])
        summary.peak_step = np.where(summary.peak_step >= 0, summary.peak_step + cols[0], -1)
        parts.append(summary)
        overview["kind"].append(grid.kind)
        overview["outing"].append(grid.outing)
        overview["darkness"].append(grid.darkness.max(axis=0, initial=0.0)[None, :])
        overview["dark_sky"].append(grid.dark_sky.any(axis=0)[None, :])
        overview["sun_alt"].append(grid.sun_alt.min(axis=0, initial=np.inf)[None, :]
                                   if n else np.empty((0, cols.size)))
        for i, steps_at in grid.outside_hours_at.items():
            found.setdefault(i, []).extend(cols[steps_at])
        tally = grid.cloud_tally if tally is None else tally.join(grid.cloud_tally)
        note, models = grid.cloud_note, grid.cloud_models
        del grid
    # compute_grid's warnings are the cloud's, then the outside-the-hours lines: both as
    # one grid over all the nights would give them.
    cloud_lines, note = (tally.warnings(sites), tally.note()) if tally else ([], note)
    warnings = cloud_lines + outside_hours_lines(
        [s.name for s in sites], times_utc, found, int(np.unique(night_index).size),
        settings.outing, tz)
    outing = np.concatenate(overview["outing"])
    from auroraplan.nights import hours_text

    over = NightsOverview(
        times_utc=times_utc, night_index=night_index, step_min=float(step_min),
        kind=np.concatenate(overview["kind"]), outing=outing,
        outing_hours=hours_text(times_utc, outing, tz),
        darkness=np.concatenate(overview["darkness"], axis=1),
        dark_sky=np.concatenate(overview["dark_sky"], axis=1),
        sun_alt=np.concatenate(overview["sun_alt"], axis=1),
        look=PeakLook(**{k: np.concatenate(v, axis=1) for k, v in looks.items()}),
        warnings=warnings, cloud_note=note, cloud_models=models)
    return over, join_summaries(parts)


def join_summaries(parts) -> NightSummary:
    """One :class:`NightSummary` from summaries of consecutive runs of nights."""
    return NightSummary(**{
        f.name: np.concatenate([getattr(p, f.name) for p in parts],
                               axis=0 if f.name == "kind" else 1)
        for f in dataclasses.fields(NightSummary)})


WORKING_MARGIN_MIN = 60.0
"""Steps this close to a dark outing step are worked out in full too: the hour rows of
a report take their look and cloud from the start and the middle of each hour."""


def working_steps(darkness, step_min) -> np.ndarray:
    """(T,) bool: the steps at which the oval, the look, the moonlit sky and the activity
    are worked out: where any site is dark inside the outing hours, widened by
    ``WORKING_MARGIN_MIN`` on each side. Elsewhere the chance is 0 whatever they are."""
    active = np.asarray(darkness).any(axis=0)
    reach = int(np.ceil(WORKING_MARGIN_MIN / float(step_min)))
    if reach <= 0 or not active.any():
        return active
    kernel = np.ones(2 * reach + 1)
    return np.convolve(active.astype(float), kernel, mode="same") > 0


class _StepsAt:
    """Puts values worked out at some steps (N, W) back on the whole time axis (N, T)."""

    def __init__(self, work):
        self.work = np.asarray(work, bool)
        self.every = bool(self.work.all())
        idx = np.flatnonzero(self.work)
        # One run of steps (a night's dark hours) is a slice: copied, never gathered.
        self.cols = as_slice(idx)

    def take(self, values):
        """``values`` (..., T) at the steps worked out (..., W), a new contiguous array."""
        return np.ascontiguousarray(values[..., self.cols])

    def cloud(self, grid):
        """A weather.CloudGrid worked out at the steps, on the whole time axis: no chance
        of a clear sky (0), no cloud figure (NaN) and no source elsewhere."""
        import dataclasses

        from auroraplan.weather import NO_SOURCE

        if self.every:
            return grid
        return dataclasses.replace(
            grid, p_clear=self.full(grid.p_clear, 0.0), cloud_pct=self.full(grid.cloud_pct, np.nan),
            source_code=self.full(grid.source_code, NO_SOURCE),
            model_pct=self.full(grid.model_pct, np.nan),
            model_weight=self.full(grid.model_weight, 0.0),
            spread_pct=self.full(grid.spread_pct, np.nan))

    def full(self, values, fill):
        """``values`` (N, W) on the time axis, ``fill`` at the steps not worked out."""
        if self.every:
            return values
        out = np.empty(values.shape[:-1] + self.work.shape, dtype=values.dtype)
        if isinstance(self.cols, slice):
            out[..., :self.cols.start] = fill
            out[..., self.cols.stop:] = fill
        else:
            out[...] = fill
        out[..., self.cols] = values
        return out


def outing_for(hours, times_utc, night_index, tz, step_min, mlt, mlon, dark, drive_min, lon):
    """(outing (T,), usable (N, T)): the outing hours and the steps a group can be at each site.

    ``hours`` is the operator's :class:`auroraplan.nights.OutingHours`; unset ends come from
    the sites' magnetic midnight. ``mlt`` (N, T) is AACGM-v2 MLT from
    :func:`auroraplan.magnetic.mlt` (Shepherd 2014, the ``aacgmv2`` package), which is one
    time term plus mlon / 15 per site, so the sites' circular mean MLT is one site's row
    plus the circular mean of the others' offsets, without a pass over every site and
    step. Where AACGM-v2 is undefined for every site (near the magnetic equator), local
    mean solar time at the sites' mean longitude stands in. The operator's ends are met by
    the drive there and back (:func:`auroraplan.nights.at_site`).
    """
    from auroraplan import nights

    times = np.asarray(times_utc, "datetime64[s]")
    mlon = np.asarray(mlon, float)
    known = np.flatnonzero(np.isfinite(mlon))
    if known.size:
        k = known[0]
        offset = nights.mean_mlt(((mlon[known] - mlon[k]) / 15.0)[:, None])[0]
        mean = np.mod(np.asarray(mlt, float)[k] + offset, 24.0)
    else:
        hours_utc = (times.astype(np.int64) % 86400) / 3600.0
        mean = nights.mean_mlt(hours_utc[None, :] + np.asarray(lon, float)[:, None] / 15.0)
    outing = nights.outing_steps(hours, times, night_index, tz, step_min, mean,
                                 np.asarray(dark).any(axis=0))
    usable = outing[None, :] & nights.at_site(hours, times, tz, drive_min, step_min)
    return outing, usable


OUTSIDE_HOURS_SHOWN = 5
"""Sites named one by one in the outside-the-hours warning; the rest are counted."""


def outside_hours_found(night_index, unlimited, usable) -> dict:
    """Site index -> the best steps, one per night, of the site-nights whose best time
    falls outside the operator's outing hours, in the order met night by night.

    ``unlimited`` (N, T) is the chance with darkness but no outing hours; ``usable`` (N, T)
    the steps a group can be at each site. A site-night counts when its best step lies
    outside ``usable`` and beats the best inside by more than the tie margin of the best
    window (0.1 %). :func:`outside_hours_lines` words them, one line per site.
    """
    values = np.nan_to_num(np.asarray(unlimited, float), nan=0.0)
    night_index = np.asarray(night_index)
    found: dict[int, list] = {}
    for night in np.unique(night_index):
        cols = np.flatnonzero(night_index == night)
        block = values[:, cols]
        best = np.argmax(block, axis=1)
        top = block[np.arange(block.shape[0]), best]
        inside = np.where(usable[:, cols], block, 0.0).max(axis=1)
        outside = ~usable[np.arange(block.shape[0]), cols[best]]
        for i in np.flatnonzero(outside & (top > 0) & (top > inside * (1.0 + 1e-3) + 1e-12)):
            found.setdefault(int(i), []).append(cols[best[i]])
    return found


def outside_hours_lines(names, times_utc, found, n_nights, hours, tz):
    """One line per site of ``found`` (:func:`outside_hours_found`) over ``n_nights``
    nights, with the nights affected and the clock times; the rest counted."""
    from auroraplan import nights

    if not found:
        return []
    lines = []
    for i in list(found)[:OUTSIDE_HOURS_SHOWN]:
        clocks = sorted(nights.local_minutes(np.asarray(times_utc)[found[i]], tz),
                        key=lambda m: nights.night_minute(m))
        span = "–".join(dict.fromkeys(f"{m // 60:02d}:{m % 60:02d}"
                                      for m in (clocks[0], clocks[-1])))
        on = "tonight" if n_nights == 1 else f"on {len(found[i])} of {n_nights} nights"
        lines.append(
            f"{names[i]}: the best time for aurora ({span} local, {on}) falls outside the "
            f"outing hours ({hours.text()}, [planner] outing_from / outing_until, with the "
            "drive there and back); widen them to count it")
    if len(found) > OUTSIDE_HOURS_SHOWN:
        lines.append(f"{len(found) - OUTSIDE_HOURS_SHOWN} more sites have their best time "
                     "outside the outing hours")
    return lines


LOOK_KP_BELOW_LOST = 0.01
"""How far below Kp lost the look is taken when the forecast exceeds it (one fine Kp step)."""


def look_for_forecast(table, kp_needed, kp_lost, kp_mean, mlt, exact=False):
    """Where to look per site and time for the Kp forecast at that time.

    The band is placed at the forecast Kp when that reaches the site's need
    (a storm: overhead, or equatorward of the site), else at the Kp needed
    (where the band will first appear). Without a forecast the Kp needed is
    used; past Kp lost, the last Kp at which the band is still in sight.

    Parameters
    ----------
    table : auroraplan.view.KpNeeded
    kp_needed, kp_lost : ndarray (N, T)
    kp_mean : ndarray (T,)
        Forecast Kp, NaN where none.
    mlt : ndarray (N, T)
    exact : bool
        The reference computation of :func:`auroraplan.view.sightline`; by default its
        tabulated edges and look-ups (the tolerances are stated there).

    Returns
    -------
    dict of ndarray (N, T)
        As :func:`auroraplan.view.sightline`, NaN look where the need is not
        reachable by Kp 9.
    """
    from auroraplan import view

    kp_look = np.fmax(np.broadcast_to(kp_mean, kp_needed.shape), kp_needed)
    kp_look = np.where(np.isfinite(kp_lost), np.minimum(kp_look, kp_lost - LOOK_KP_BELOW_LOST),
                       kp_look)
    reachable = np.isfinite(kp_look)
    out = view.sightline(table, np.clip(np.nan_to_num(kp_look, posinf=0.0), 0.0, 9.0), mlt,
                         visible=False, exact=exact)
    for key in ("look_azimuth_deg", "look_elevation_deg"):
        out[key] = np.where(reachable, out[key], np.nan)
    out["overhead"] = out["overhead"] & reachable
    return out


KEEP_TABLES_FROM_SITES = 200
"""Kp-needed tables of this many sites or more are kept in the user's cache directory
(folder ``kptables``, ``auroraplan.usercache``), since 10,000 sites take seconds to
compute; a table depends on the sites, the viewing settings and the time, all in its key."""
KEEP_TABLES = 6
"""Most tables kept (each night asked for has its own, a week one)."""
TABLE_VERSION = 1
"""Bumped whenever view.kp_needed_table or KpNeeded changes."""


def kp_table(sites, when_utc, viewing):
    """The Kp-needed table (sites × MLT) for the viewing settings (view.ViewingSettings).

    A table of KEEP_TABLES_FROM_SITES sites or more is kept between runs, keyed by every
    input (positions, heights, horizon masks, settings, the instant, aacgmv2's version):
    the guide's repeated check of a large list of sites skips the table."""
    import aacgmv2

    from auroraplan import usercache, view

    arr = site_arrays(sites)
    when = np.datetime64(when_utc, "s").astype(object)

    def build():
        return view.kp_needed_table(
            arr["lat"], arr["lon"], arr["height_m"], arr["horizons"],
            min_elevation_deg=viewing.min_elevation_deg,
            emission_height_km=viewing.emission_height_km, model=viewing.oval_model, when=when,
        )

    if len(sites) < KEEP_TABLES_FROM_SITES:
        return build()
    masks = [b"-" if h is None else np.ascontiguousarray(h, float).tobytes()
             for h in arr["horizons"]]
    key = usercache.digest(
        (TABLE_VERSION, aacgmv2.__version__, when.isoformat(), viewing.min_elevation_deg,
         viewing.emission_height_km, viewing.oval_model,
         usercache.digest([m.hex() for m in masks])),
        (arr["lat"], arr["lon"], arr["height_m"]))
    return usercache.kept("kptables", key, TABLE_VERSION, build, keep=KEEP_TABLES)


@dataclass
class NightSummary:
    """Per site (N) and night (D) summaries of a :class:`ChanceGrid`."""

    p_any: np.ndarray  # (N, D) P(at least one visible display), NaN without activity data
    expected_min: np.ndarray  # (N, D) expected visible minutes
    peak: np.ndarray  # (N, D) highest step chance
    window_start: np.ndarray  # (N, D) datetime64[s] or NaT
    window_end: np.ndarray  # (N, D) datetime64[s] or NaT
    peak_step: np.ndarray  # (N, D) index into the time axis, -1 when none
    limiting: np.ndarray  # (N, D) object: one of FACTORS or None
    dark_hours: np.ndarray  # (N, D)
    kind: np.ndarray  # (D,) "forecast" | "outlook" | "none" (worst over the dark steps)


def nan_as_zero(values) -> np.ndarray:
    """``values`` (a probability or chance: never infinite) with NaN as 0; a new array."""
    values = np.asarray(values, float)
    return np.where(np.isnan(values), 0.0, values)


def p_display_seen(display, p_clear, step_min, decorrelation_min):
    """P(at least one display seen) over the steps along the last axis.

    Parameters
    ----------
    display : ndarray (..., K)
        Chance of a visible display per decorrelation time at each step, with
        darkness and moonlight already applied (0 where it is light).
    p_clear : ndarray (..., K)
        P(clear line of sight) at each step.
    step_min, decorrelation_min : float
        Step length and decorrelation time τ, minutes.

    Returns
    -------
    ndarray (...)

    Notes
    -----
    Displays are independent from one decorrelation time to the next, so
    with a clear sky throughout P = 1 − Π (1 − d_i)^(Δt/τ). Cloud over one
    site through one night is one weather state, not independent hour by
    hour: hours are coupled comonotonically (a single uniform U per night;
    step i is clear when U < c_i). Then
    P = Σ_k (c_(k) − c_(k+1)) · [1 − Π_{j ≤ k} (1 − d_(j))^(Δt/τ)]
    with the c sorted from clearest down and c_(K+1) = 0. Both couplings are
    stated assumptions. More cloud or less display never raises P.
    """
    d = np.clip(nan_as_zero(display), 0.0, 1.0 - 1e-12)
    c = np.clip(nan_as_zero(p_clear), 0.0, 1.0)
    order = np.argsort(-c, axis=-1, kind="stable")
    c_sorted = np.take_along_axis(c, order, axis=-1)
    d_sorted = np.take_along_axis(d, order, axis=-1)
    seen_if_clear = -np.expm1(np.cumsum(np.log1p(-d_sorted), axis=-1) * (step_min / decorrelation_min))
    c_next = np.concatenate([c_sorted[..., 1:], np.zeros(c_sorted.shape[:-1] + (1,))], axis=-1)
    return np.sum((c_sorted - c_next) * seen_if_clear, axis=-1)


def summarise_nights(grid: ChanceGrid, nights: int,
                     settings: ChanceSettings | None = None) -> NightSummary:
    """Best window, expected minutes and P(at least one display) per site and night.

    The best window is the block of at most ``max_window_min`` with the most
    expected display time, ties going to the block nearest magnetic
    midnight (where substorm onsets cluster: Frey et al. 2004, JGR 109,
    A10304), trimmed of dark-less or chance-less ends down to at least
    ``min_window_min``. "What limits it" is the factor with the lowest mean
    over that window, activity measured against its most active value.
    """
    cfg = settings or ChanceSettings()
    n_sites = grid.chance.shape[0]
    shape = (n_sites, nights)
    out = NightSummary(
        p_any=np.full(shape, np.nan), expected_min=np.zeros(shape), peak=np.zeros(shape),
        window_start=np.full(shape, np.datetime64("NaT"), dtype="datetime64[s]"),
        window_end=np.full(shape, np.datetime64("NaT"), dtype="datetime64[s]"),
        peak_step=np.full(shape, -1), limiting=np.full(shape, None, dtype=object),
        dark_hours=np.zeros(shape), kind=np.full(nights, "none", dtype=object),
    )
    rows = np.arange(n_sites)
    step = np.timedelta64(int(round(grid.step_min * 60)), "s")
    for d in range(nights):
        cols = np.flatnonzero(grid.night_index == d)
        if cols.size == 0:
            continue
        at = as_slice(cols)  # a night's steps are one run: views, not copies
        dark_steps = (grid.darkness[:, at] > 0).any(axis=0)
        out.dark_hours[:, d] = grid.dark_sky[:, at].sum(axis=1) * grid.step_min / 60.0
        # Worst source over the dark steps; a night without darkness is described by
        # its whole span, so a forecast that covers it is not reported as missing.
        kinds = set(grid.kind[cols][dark_steps] if dark_steps.any() else grid.kind[cols]) or {"none"}
        out.kind[d] = next(k for k in ("none", "outlook", "forecast") if k in kinds)
        out.expected_min[:, d] = nan_as_zero(grid.chance[:, at]).sum(axis=1) * grid.step_min
        # The rest only over the steps a window can reach (window_steps): outside them
        # every site is light and its chance 0.
        reach = window_steps(dark_steps, grid.chance[:, at], grid.step_min, cfg)
        cols, dark_steps = cols[reach], dark_steps[reach]
        at = as_slice(cols)
        dark = grid.darkness[:, at]
        shown = dark * grid.moon[:, at] * grid.activity[:, at]
        has_data = (~np.isnan(shown) | (dark == 0)).all(axis=1)
        # Steps without darkness at any site add nothing to P (d = 0 there: p_display_seen).
        p = p_display_seen(shown[:, dark_steps], grid.p_clear[:, cols[dark_steps]],
                           grid.step_min, cfg.decorrelation_min)
        out.p_any[:, d] = np.where(has_data, p, np.nan)
        filled = nan_as_zero(grid.chance[:, at])
        lo, hi = best_windows(filled, dark > 0, grid.mlt[:, at], grid.step_min, cfg)
        peak = np.argmax(np.where(
            (np.arange(cols.size)[None, :] >= lo[:, None]) & (np.arange(cols.size)[None, :] <= hi[:, None]),
            filled, -1.0), axis=1)
        any_dark = dark.any(axis=1)
        out.peak[:, d] = np.where(any_dark, filled[rows, peak], 0.0)
        out.peak_step[:, d] = np.where(any_dark, cols[peak], -1)
        out.window_start[:, d] = np.where(any_dark, grid.times_utc[cols[lo]], np.datetime64("NaT"))
        out.window_end[:, d] = np.where(any_dark, grid.times_utc[cols[hi]] + step, np.datetime64("NaT"))
        out.limiting[:, d] = limiting_factor(grid, at, lo, hi, any_dark, cfg)
    return out


FAINT_STEP = 1e-10
"""A site whose largest chance in a step is this small (or smaller) may have a best block
that ties with an all-light one (``best_windows``: near the best means within 1e-3 of it
less 1e-12; 1e-10 leaves room for the rounding of the running sums)."""


def window_steps(dark_steps, chance, step_min, cfg) -> slice:
    """The night's steps (a slice of its K) that every step of a best window of
    :func:`best_windows` lies in: from ``max(window, shortest window)`` steps before the
    first step dark at any site to as many after the last. The windows found over them
    are those over the whole night: blocks wholly outside add 0 and are never the best
    (the trims and the widening to the shortest window stay inside), except when a
    site's largest step is at most ``FAINT_STEP``, where an all-light block ties with it;
    then the whole night. ``chance`` (N, K) is the night's chance (NaN counts as 0)."""
    k = dark_steps.size
    on = np.flatnonzero(dark_steps)
    if on.size == 0:
        return slice(0, k)
    pad = max(1, int(round(cfg.max_window_min / step_min)),
              int(np.ceil(cfg.min_window_min / step_min)))
    first, last = max(0, on[0] - pad + 1), min(k, on[-1] + pad)
    if first == 0 and last == k:
        return slice(0, k)
    top = np.fmax.reduce(chance[:, first:last], axis=1, initial=0.0)
    if ((top > 0) & (top <= FAINT_STEP)).any():
        return slice(0, k)
    return slice(first, last)


def best_windows(chance, dark, mlt, step_min, cfg):
    """First and last step (inclusive) of each row's best window; rows without dark get 0, 0."""
    n, k = chance.shape
    length = max(1, min(k, int(round(cfg.max_window_min / step_min))))
    min_steps = max(1, int(np.ceil(cfg.min_window_min / step_min)))
    sums = np.zeros((n, k + 1))
    np.cumsum(chance, axis=1, out=sums[:, 1:])
    block = sums[:, length:] - sums[:, :-length]  # (n, k - length + 1)
    centre = np.arange(block.shape[1]) + length // 2
    hour = mlt[:, centre] % 24.0
    from_midnight = np.minimum(hour, 24.0 - hour)
    best = block.max(axis=1, keepdims=True)
    near_best = block >= best * (1.0 - 1e-3) - 1e-12
    start = np.argmin(np.where(near_best, from_midnight, np.inf), axis=1)
    no_chance = best[:, 0] <= 0
    # Without any chance, describe the dark period itself.
    first_dark = np.argmax(dark, axis=1)
    last_dark = k - 1 - np.argmax(dark[:, ::-1], axis=1)
    lo = np.where(no_chance, first_dark, start)
    hi = np.where(no_chance, np.minimum(last_dark, first_dark + length - 1), start + length - 1)
    # Trim ends without darkness or chance, keeping at least min_steps.
    idx = np.arange(k)[None, :]
    useful = dark & ((chance > 0) | no_chance[:, None])
    inside = (idx >= lo[:, None]) & (idx <= hi[:, None]) & useful
    has = inside.any(axis=1)
    lo = np.where(has, np.argmax(inside, axis=1), lo)
    hi = np.where(has, k - 1 - np.argmax(inside[:, ::-1], axis=1), hi)
    short = hi - lo + 1 < min_steps
    hi = np.where(short, np.minimum(k - 1, lo + min_steps - 1), hi)
    lo = np.where(short, np.maximum(0, hi - min_steps + 1), lo)
    none = ~dark.any(axis=1)
    return np.where(none, 0, lo), np.where(none, 0, hi)


def as_slice(cols):
    """``cols`` (increasing step indices) as a slice when they are one run, else as given."""
    return slice(cols[0], cols[-1] + 1) if cols.size and cols[-1] - cols[0] + 1 == cols.size \
        else cols


def limiting_factor(grid, cols, lo, hi, any_dark, cfg):
    """Name of the factor with the lowest mean over each row's window; ``cols`` the
    night's steps (indices or a slice)."""
    idx = np.arange(grid.times_utc[cols].size)[None, :]
    inside = (idx >= lo[:, None]) & (idx <= hi[:, None])
    count = np.maximum(inside.sum(axis=1), 1)

    def mean(values):
        return np.where(inside & ~np.isnan(values), values, 0.0).sum(axis=1) / count

    factors = np.stack([
        mean(grid.darkness[:, cols]),
        mean(grid.moon[:, cols]),
        mean(grid.activity[:, cols]) / cfg.display_active,
        mean(grid.p_clear[:, cols]),
    ])
    names = np.array(FACTORS, dtype=object)[np.argmin(factors, axis=0)]
    return np.where(any_dark, names, "darkness")
