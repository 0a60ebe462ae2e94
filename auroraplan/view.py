"""Can the aurora be seen from a site: line of sight to the oval band, horizon masks, Kp needed.

The band is the discrete oval between its equatorward and poleward edges
(:mod:`auroraplan.oval`), at the emission height (``emission_height_km``,
default 110 km, the lower border of typical green aurora). Along the site's own magnetic meridian
(same AACGM longitude) points of the band are turned back into geographic
positions with AACGM-v2 at that height and seen from the site on a
spherical Earth (R = 6371.2 km, the IGRF reference radius): elevation from
the central angle, azimuth as the great-circle initial bearing (true north).
A point counts as visible when its elevation exceeds the site's horizon mask
at that azimuth plus the operator's margin (``min_elevation_deg``).

- A site equatorward of the band looks poleward, at the band's nearest
  visible part (usually its equatorward edge).
- A site under the band (equatorward edge <= |MLAT| <= poleward edge) sees it
  overhead: elevation 90, and we give the magnetic-poleward azimuth (the
  direction along the magnetic meridian toward the magnetic pole) as the way
  to face.
- A site poleward of the band (polar cap) looks equatorward, at the band's
  poleward edge.

Visibility need not keep rising with Kp. The oval expands equatorward as Kp
grows (Starkov 1994a; Feldstein & Starkov 1967), so a site poleward of the
band (the polar cap, e.g. Svalbard near 76 degrees MLAT) could in principle
lose the band below its southern horizon in a strong storm. Besides the
least Kp at which the band comes into view, the table therefore keeps the
least Kp above it at which the band has gone out of sight on the equator
side (``kp_lost``): out of view *and* its poleward edge below the lowest
magnetic latitude the site can see. A band that is merely poleward of a
site's view (as the oval is at low Kp) is never counted as lost. Found on
the same 0.25 Kp scan and 0.01 Kp bisection as the Kp needed.

The site's magnetic latitude is taken at the emission height straight above
it, the same height as the band's edges (Shepherd 2014: AACGM-v2 latitude
depends on height, here by 0.1-0.35 degrees between the ground and 110 km).

Southern sites use ``|MLAT|`` against the northern boundaries (hemispheric
symmetry, see :mod:`auroraplan.oval`) and look toward the southern pole.

The geometry of a point on the meridian does not depend on MLT or Kp, only
on its magnetic latitude. So, per site, we tabulate the clearance above the
mask on a grid of magnetic latitudes once, and then search Kp for all sites
and MLTs together with array operations (a coarse Kp grid, then bisection).

References
----------
Shepherd (2014), AACGM-v2, J. Geophys. Res. Space Physics 119, 7501.
Starkov (1994a), Geomagnetism and Aeronomy 34(3), 331-336.
Spherical-Earth line of sight and great-circle bearing: e.g. Bowditch,
The American Practical Navigator (NGA Pub. 9), chapter on great-circle
sailing; the elevation is atan2(r_p cos g - r_s, r_p sin g) for a point at
radius r_p seen from radius r_s across central angle g.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from auroraplan import checks, magnetic, oval
from auroraplan.blocks import row_blocks
from auroraplan.checks import setting
from auroraplan.errors import InputError
from auroraplan.sky import DARKNESS_DEG

R_EARTH_KM = 6371.2  # IGRF reference radius, used as a spherical Earth
MLT_STEP_H = 0.25  # Kp-needed table resolution in MLT (96 columns)
EDGE_MLT_STEP_H = 0.125  # MLT spacing of the tabulated oval edges (band_edges)
KP_FINE_STEP = 0.01  # resolution of Kp needed
KP_COARSE_EVERY = 25  # the first scan looks at every 25th fine Kp (0.25 Kp)
LAT_STEP_DEG = 0.5  # spacing of band sample points along the magnetic meridian
MASK_STEP_DEG = 0.5  # horizon masks are resampled on this azimuth grid
MASK_ELEVATION_RANGE = (-5.0, 90.0)
"""Allowed horizon-mask elevations, degrees: a horizon below 0 is the sea seen from a hill
(the dip is about 1 degree from 300 m; -5 leaves room for a cliff top). Common practice,
no source."""
SITE_CHUNK = 256  # sites per block in the Kp search (bounds memory)
NIGHT_MLT = (18.0, 6.0)  # MLT span treated as the night side for the best hour


@dataclass(frozen=True)
class ViewingSettings:
    """operator.toml [viewing]: when the sky counts as dark and how the band must be seen."""

    darkness: str = setting("nautical", checks.choice(DARKNESS_DEG), "level",
                            "sun depth that counts as dark (auroraplan.sky.DARKNESS_DEG)")
    min_elevation_deg: float = setting(
        5.0, checks.number(0, 30, "degrees"), "degrees",
        "margin the band must clear above each site's horizon (common practice, no source)")
    emission_height_km: float = setting(
        110.0, checks.number(80, 400, "km"), "km",
        "height of the aurora's lower border (typical green aurora)")
    oval_model: str = setting(oval.DEFAULT_MODEL, checks.choice(oval.VIEWING_MODELS), "name",
                              "oval boundary model with discrete-oval edges (auroraplan.oval)")
    extinction_k: float | None = setting(
        None, checks.number(0.05, 1.0, "magnitudes per airmass"), "V mag per airmass",
        "V-band extinction for moonlight; None: from each site's height (sky.extinction_k_v)")


@dataclass
class KpNeeded:
    """Kp needed per site and magnetic local time.

    Attributes
    ----------
    mlt_h : ndarray (M,)
        Magnetic local time of each column, 0 to 23.75 h in 15-minute steps.
    kp_horizon : ndarray (N, M)
        Least Kp at which some part of the band is above the site's horizon
        mask plus margin; ``inf`` when not reached by Kp 9.
    kp_lost : ndarray (N, M)
        Least Kp above ``kp_horizon`` at which the band has passed out of the
        site's sight on the equator side (its poleward edge below everything a
        polar-cap site can see); ``inf`` when it stays in view up to Kp 9 or
        never comes into view.
    kp_overhead : ndarray (N, M)
        Least Kp at which the site is under the band; ``inf`` when never.
    look_azimuth_deg, look_elevation_deg : ndarray (N, M)
        Where to look at the Kp in ``kp_horizon`` (true bearing, degrees; NaN
        where ``kp_horizon`` is inf). For any other Kp use :func:`sightline`.
    mlat, mlon : ndarray (N,)
        AACGM-v2 latitude and longitude of the point at the emission height
        straight above each site (the height of the band's edges).
    clearance : MeridianClearance
        The sites' sight lines along their magnetic meridians.
    """

    mlt_h: np.ndarray
    kp_horizon: np.ndarray
    kp_overhead: np.ndarray
    look_azimuth_deg: np.ndarray
    look_elevation_deg: np.ndarray
    mlat: np.ndarray
    mlon: np.ndarray
    model: str = oval.DEFAULT_MODEL
    settings: dict = field(default_factory=dict)
    kp_lost: np.ndarray | None = None
    clearance: MeridianClearance | None = None

    def __post_init__(self):
        if self.kp_lost is None:
            self.kp_lost = np.full(np.shape(self.kp_horizon), np.inf)


# --- spherical geometry ---------------------------------------------------------------------


def central_angle_and_bearing(lat1, lon1, lat2, lon2):
    """Central angle (radians) and initial true bearing (degrees) from point 1 to point 2.

    Haversine central angle and the great-circle initial course on a sphere
    (Bowditch, NGA Pub. 9, great-circle sailing).

    Parameters
    ----------
    lat1, lon1, lat2, lon2 : array_like
        Degrees; broadcast together.

    Returns
    -------
    gamma_rad, bearing_deg : ndarray
    """
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dl = np.radians(np.asarray(lon2) - np.asarray(lon1))
    hav = np.sin((p2 - p1) / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl / 2) ** 2
    gamma = 2.0 * np.arcsin(np.sqrt(np.clip(hav, 0.0, 1.0)))
    y = np.sin(dl) * np.cos(p2)
    x = np.cos(p1) * np.sin(p2) - np.sin(p1) * np.cos(p2) * np.cos(dl)
    bearing = np.mod(np.degrees(np.arctan2(y, x)), 360.0)
    return gamma, bearing


def elevation_deg(gamma_rad, site_height_km, point_height_km):
    """Elevation of a point at ``point_height_km`` seen across central angle ``gamma_rad``.

    Parameters
    ----------
    gamma_rad : array_like
        Central angle between the site and the point's foot, radians.
    site_height_km, point_height_km : array_like
        Heights above the sphere of radius ``R_EARTH_KM``.

    Returns
    -------
    ndarray
        Geometric elevation in degrees (no refraction), 90 straight up.
    """
    r_s = R_EARTH_KM + np.asarray(site_height_km, dtype=float)
    r_p = R_EARTH_KM + np.asarray(point_height_km, dtype=float)
    return np.degrees(np.arctan2(r_p * np.cos(gamma_rad) - r_s, r_p * np.sin(gamma_rad)))


# --- horizon masks --------------------------------------------------------------------------


def check_horizons(horizons, n: int, names=None) -> list:
    """Validate per-site horizon masks; one line per bad site.

    Parameters
    ----------
    horizons : sequence of (None or array_like (M, 2)) or None
        ``[azimuth_deg, elevation_deg]`` pairs per site; None = flat horizon.
    n : int
        Number of sites.
    names : sequence of str, optional
        Site names for the messages.

    Returns
    -------
    list of (ndarray (M, 2) or None)
    """
    if horizons is None:
        return [None] * n
    horizons = list(horizons)
    if len(horizons) != n:
        raise InputError(f"horizon masks: got {len(horizons)} for {n} sites; give one per site")
    out, problems = [], []
    lo, hi = MASK_ELEVATION_RANGE
    for i, h in enumerate(horizons):
        label = f"site {names[i]!r}" if names is not None else f"site #{i + 1}"
        if h is None:
            out.append(None)
            continue
        try:
            arr = np.asarray(h, dtype=float)
        except (TypeError, ValueError):
            arr = None
        if arr is None or arr.ndim != 2 or arr.shape[1] != 2 or arr.shape[0] < 1:
            problems.append(f"{label}: horizon must be a list of [azimuth, elevation] pairs")
            out.append(None)
            continue
        az, el = arr[:, 0], arr[:, 1]
        if not np.all(np.isfinite(arr)):
            problems.append(f"{label}: horizon has a value that is not a number")
        elif np.any((az < 0) | (az > 360)):
            problems.append(f"{label}: horizon azimuth must be 0 to 360 degrees")
        elif np.any((el < lo) | (el > hi)):
            problems.append(f"{label}: horizon elevation must be {lo:g} to {hi:g} degrees")
        out.append(arr)
    if problems:
        raise InputError(problems)
    return out


def horizon_table(horizons: list, n: int) -> np.ndarray:
    """Horizon masks resampled on a common azimuth grid, all sites at once.

    Elevation at an azimuth is linear interpolation between the mask's
    points, periodic in azimuth (360 = 0). Sites without a mask get 0.

    Parameters
    ----------
    horizons : list of (ndarray (M, 2) or None)
        Validated masks (see :func:`check_horizons`).
    n : int
        Number of sites.

    Returns
    -------
    ndarray (N, 360 / MASK_STEP_DEG)
        Mask elevation in degrees at azimuths 0, MASK_STEP_DEG, ...
    """
    grid = np.arange(0.0, 360.0, MASK_STEP_DEG)
    table = np.zeros((n, grid.size))
    have = [i for i, h in enumerate(horizons) if h is not None]
    if not have:
        return table
    sizes = np.array([len(horizons[i]) for i in have])
    pts = np.concatenate([horizons[i] for i in have])
    site = np.repeat(np.array(have), sizes)
    az = np.mod(pts[:, 0], 360.0)
    # Copies one turn either side make every query have neighbours in its own site.
    az3 = np.concatenate([az - 360.0, az, az + 360.0])
    el3 = np.tile(pts[:, 1], 3)
    key = np.tile(site, 3) * 2000.0 + az3 + 500.0
    order = np.argsort(key, kind="stable")
    key, el3 = key[order], el3[order]
    qsite = np.array(have)
    qkey = (qsite[:, None] * 2000.0 + grid[None, :] + 500.0).ravel()
    hi = np.clip(np.searchsorted(key, qkey, side="right"), 1, key.size - 1)
    lo = hi - 1
    span = key[hi] - key[lo]
    w = np.where(span > 0, (qkey - key[lo]) / np.where(span > 0, span, 1.0), 0.0)
    table[qsite] = (el3[lo] + w * (el3[hi] - el3[lo])).reshape(len(have), grid.size)
    return table


def mask_at(table: np.ndarray, azimuth_deg) -> np.ndarray:
    """Horizon elevation of each site (rows of ``table``) at azimuths (N, ...)."""
    az = np.asarray(azimuth_deg, dtype=float)
    n, m = table.shape
    f = np.mod(az, 360.0).reshape(n, -1) / MASK_STEP_DEG
    lo = np.floor(f).astype(int) % m
    hi = (lo + 1) % m
    w = f - np.floor(f)
    a = np.take_along_axis(table, lo, axis=1)
    b = np.take_along_axis(table, hi, axis=1)
    return (a + w * (b - a)).reshape(az.shape)


# --- Kp needed ------------------------------------------------------------------------------


def _as_site_arrays(lat, lon, height_m):
    lat = np.atleast_1d(np.asarray(lat, dtype=float))
    lon = np.atleast_1d(np.asarray(lon, dtype=float))
    if lat.shape != lon.shape or lat.ndim != 1:
        raise InputError("site latitudes and longitudes must be two lists of the same length")
    if np.any(~np.isfinite(lat) | (np.abs(lat) > 90)) or np.any(~np.isfinite(lon)):
        raise InputError("site latitude must be -90 to 90 and longitude a number")
    height = np.broadcast_to(np.asarray(height_m, dtype=float), lat.shape).astype(float)
    return lat, lon, np.nan_to_num(height)


def _discrete_edges(kp, mlt_h, model):
    """Equatorward and poleward edges of the discrete oval (degrees magnetic latitude)."""
    return oval.discrete_edges(kp, mlt_h, model)


@functools.lru_cache(maxsize=4)
def _edge_grid(model):
    """The discrete oval's edges every ``KP_FINE_STEP`` of Kp (0 to 9) and every
    ``EDGE_MLT_STEP_H`` of MLT (0 to 24 h, the last column equal to the first), as
    read-only arrays (F, M + 1), computed once per model."""
    kp = np.round(np.arange(0.0, oval.KP_MAX + 1e-9, KP_FINE_STEP), 6)
    mlt_h = np.arange(0.0, 24.0 + 1e-9, EDGE_MLT_STEP_H)
    eq, pw = _discrete_edges(kp[:, None], mlt_h[None, :], model)
    eq, pw = np.ascontiguousarray(eq, float), np.ascontiguousarray(pw, float)
    eq.flags.writeable = pw.flags.writeable = False
    return eq, pw


def band_edges(kp, mlt_h, model=oval.DEFAULT_MODEL):
    """Equatorward and poleward edges of the discrete oval at any Kp and MLT, from a table.

    Bilinear interpolation in the model's edges tabulated every ``KP_FINE_STEP`` (0.01) of
    Kp and ``EDGE_MLT_STEP_H`` (7.5 minutes) of MLT (:func:`_edge_grid`), periodic in MLT.
    The Starkov (1994a) boundaries are smooth in both (Fourier series of three harmonics
    in MLT, cubics in log AL): the interpolated edges stay within 0.005 degrees of the
    model evaluated at the point (tested against ``oval.boundaries``), a hundredth of the
    0.5-degree spacing of the meridian points they are compared with, at a tenth of the
    cost. The kinks of the default model (AL held below Kp 0.23, the storm extension from
    Kp 6) lie on or between neighbouring Kp nodes.

    Parameters
    ----------
    kp : array_like
        Kp, 0-9 (clipped); not NaN (``oval.check_kp`` refuses it upstream).
    mlt_h : array_like
        Magnetic local time in hours, broadcast with ``kp``; NaN gives NaN edges.
    model : str
        A key of ``oval.VIEWING_MODELS``.

    Returns
    -------
    equatorward_deg, poleward_deg : ndarray
        Magnetic latitude in degrees.
    """
    eq_grid, pw_grid = _edge_grid(model)
    n_kp, n_mlt = eq_grid.shape
    shape = np.broadcast_shapes(np.shape(kp), np.shape(mlt_h))
    kp, mlt_h = np.broadcast_arrays(np.atleast_1d(np.asarray(kp, dtype=float)),
                                    np.atleast_1d(np.asarray(mlt_h, dtype=float)))
    bad = ~np.isfinite(mlt_h)
    fk = np.clip(kp, 0.0, oval.KP_MAX) / KP_FINE_STEP
    i = np.minimum(fk.astype(np.intp), n_kp - 2)
    wk = fk - i
    fm = np.mod(np.where(bad, 0.0, mlt_h), 24.0) / EDGE_MLT_STEP_H
    j = np.minimum(fm.astype(np.intp), n_mlt - 2)
    wm = fm - j
    at = i * n_mlt + j
    out = []
    for grid in (eq_grid.ravel(), pw_grid.ravel()):
        low = grid[at]
        low += wm * (grid[at + 1] - low)
        high = grid[at + n_mlt]
        high += wm * (grid[at + n_mlt + 1] - high)
        low += wk * (high - low)
        low[bad] = np.nan
        out.append(low.reshape(shape))
    return out[0], out[1]


class MeridianClearance:
    """How far above its horizon mask each site sees points along its own magnetic meridian.

    Points of the meridian at the emission height are sampled every
    ``LAT_STEP_DEG`` of magnetic latitude (``lat_grid_deg``), turned into
    geographic positions with AACGM-v2 and seen from the site. The geometry
    does not depend on Kp or MLT, so it is computed once per site and reused
    for every Kp and time.

    Attributes
    ----------
    site_mlat_deg : ndarray (N,)
        ``|MLAT|`` of the point at the emission height straight above each
        site: the same height as the band's edges it is compared with.
    lat_grid_deg : ndarray (L,)
        Magnetic latitudes sampled along the meridian.
    elevation_deg, azimuth_deg, clearance_deg : ndarray (N, L)
        Elevation and true bearing of each point, and its elevation above the
        horizon mask plus margin (``-inf`` where undefined).
    lowest_visible_deg : ndarray (N,)
        The lowest magnetic latitude on the meridian that the site can see
        (``inf`` when it sees none): a band whose poleward edge lies below it
        has passed out of the site's sight on the equator side.
    """

    def __init__(self, lat, lon, site_height_km, mlat, mlon, mask, lat_grid_deg, emission_height_km,
                 margin_deg, when):
        self.lat_grid_deg = lat_grid_deg
        self.grid_start_deg = lat_grid_deg[0]
        hemi = np.where(mlat < 0, -1.0, 1.0)
        self.site_mlat_deg = np.abs(mlat)
        plat, plon = magnetic.aacgm_to_geo(hemi[:, None] * lat_grid_deg[None, :], mlon[:, None],
                                           emission_height_km, when)
        gamma, az = central_angle_and_bearing(lat[:, None], lon[:, None], plat, plon)
        el = elevation_deg(gamma, site_height_km[:, None], emission_height_km)
        clear = el - mask_at(mask, np.nan_to_num(az)) - margin_deg
        self.elevation_deg = np.where(np.isfinite(el), el, -90.0)
        self.azimuth_deg = np.where(np.isfinite(az), az, np.nan)
        self.clearance_deg = np.where(np.isfinite(clear), clear, -np.inf)
        visible = self.clearance_deg > 0
        self.visible_count = np.concatenate(
            [np.zeros((len(lat), 1), dtype=np.int32), np.cumsum(visible, axis=1, dtype=np.int32)],
            axis=1,
        )
        self.lowest_visible_deg = np.where(
            visible.any(axis=1), lat_grid_deg[np.argmax(visible, axis=1)], np.inf)
        # Facing the magnetic pole from under the band: bearing to the next point poleward.
        k = np.clip(np.nan_to_num(np.ceil((self.site_mlat_deg - self.grid_start_deg)
                                          / LAT_STEP_DEG)).astype(int) + 1,
                    0, lat_grid_deg.size - 1)
        self.poleward_azimuth_deg = self.azimuth_deg[np.arange(len(lat)), k]

    def _index(self, edge_deg):
        """Fractional position of latitudes on the grid: (lower index, weight)."""
        n_lat = self.lat_grid_deg.size
        f = np.clip((edge_deg - self.grid_start_deg) / LAT_STEP_DEG, 0.0, n_lat - 1.0)
        lo = np.minimum(np.floor(f).astype(np.intp), n_lat - 2)
        return lo, f - lo

    @staticmethod
    def _pick(values, idx, shared):
        """values (n, L) at idx: shared by every site (K, M) -> (n, K, M), or per site (n, M)."""
        if shared:
            return values[:, idx]
        return np.take_along_axis(values, idx, axis=1)

    def _interp(self, values, edge_deg, shared=False):
        lo, w = self._index(edge_deg)
        a = self._pick(values, lo, shared)
        return a + w * (self._pick(values, lo + 1, shared) - a)

    def _site_mlat(self, rows, edge_deg, shared):
        return self.site_mlat_deg[rows].reshape((-1,) + (1,) * (edge_deg.ndim if shared else 1))

    def visible(self, rows, equatorward_deg, poleward_deg, shared=False):
        """Is some part of the band visible from each site, and is the site under it?

        ``equatorward_deg`` and ``poleward_deg`` are either shared by all
        sites, shape (K, M), giving (n, K, M) results, or one row per site,
        shape (n, M).
        """
        clear, count = self.clearance_deg[rows], self.visible_count[rows]
        m = self._site_mlat(rows, equatorward_deg, shared)
        under = (equatorward_deg <= m) & (m <= poleward_deg)
        seen = ((self._interp(clear, equatorward_deg, shared) > 0)
                | (self._interp(clear, poleward_deg, shared) > 0))
        n_lat = self.lat_grid_deg.size
        a = np.clip(np.floor((equatorward_deg - self.grid_start_deg) / LAT_STEP_DEG)
                    .astype(np.intp) + 1, 0, n_lat)
        b = np.clip(np.ceil((poleward_deg - self.grid_start_deg) / LAT_STEP_DEG)
                    .astype(np.intp), 0, n_lat)
        inside = (self._pick(count, b, shared) - self._pick(count, a, shared)) > 0
        return under | seen | (inside & (b > a)), under

    def passed_equatorward(self, rows, poleward_deg, shared=False):
        """Has the band's poleward edge passed equatorward of all the site can see?"""
        lowest = self.lowest_visible_deg[rows].reshape(
            (-1,) + (1,) * (poleward_deg.ndim if shared else 1))
        return poleward_deg < lowest

    def look(self, rows, equatorward_deg, poleward_deg):
        """Azimuth and elevation of the band's best-cleared point, and whether the site
        is under the band; (n, M) each, with one band per site and column."""
        clear = self.clearance_deg[rows]
        grid = self.lat_grid_deg[None, None, :]
        within = (grid > equatorward_deg[..., None]) & (grid < poleward_deg[..., None])
        inner = np.where(within, clear[:, None, :], -np.inf)
        k_in = np.argmax(inner, axis=2)
        c_in = np.take_along_axis(inner, k_in[..., None], axis=2)[..., 0]
        n_lat = self.lat_grid_deg.size
        k_e = np.clip(np.rint((equatorward_deg - self.grid_start_deg) / LAT_STEP_DEG)
                      .astype(np.intp), 0, n_lat - 1)
        k_p = np.clip(np.rint((poleward_deg - self.grid_start_deg) / LAT_STEP_DEG)
                      .astype(np.intp), 0, n_lat - 1)
        choice = np.argmax(np.stack([self._interp(clear, equatorward_deg),
                                     self._interp(clear, poleward_deg), c_in]), axis=0)
        k = np.choose(choice, [k_e, k_p, k_in])
        el_rows = self.elevation_deg[rows]
        el = np.choose(choice, [self._interp(el_rows, equatorward_deg),
                                self._interp(el_rows, poleward_deg),
                                np.take_along_axis(el_rows, k, axis=1)])
        az = np.take_along_axis(self.azimuth_deg[rows], k, axis=1)
        m = self.site_mlat_deg[rows][:, None]
        under = (equatorward_deg <= m) & (m <= poleward_deg)
        az = np.where(under, self.poleward_azimuth_deg[rows][:, None], az)
        el = np.where(under, 90.0, el)
        return az, el, under


    def _first_max_table(self):
        """Sparse table of each meridian's best-cleared point over every run of 2**j grid
        latitudes: (J, N, L) positions, the first of equal maxima (as ``np.argmax``).
        Built once per table (Bender and Farach-Colton 2000, the sparse table for range
        maximum queries), so that the best point between two edges is two look-ups."""
        found = getattr(self, "_first_max", None)
        if found is not None:
            return found
        clear = self.clearance_deg
        n, n_lat = clear.shape
        levels = [np.broadcast_to(np.arange(n_lat, dtype=np.int32), (n, n_lat)).copy()]
        span = 1
        rows = np.arange(n)[:, None]
        while 2 * span <= n_lat:
            prev = levels[-1]
            left, right = prev[:, :n_lat - span], prev[:, span:]
            take_left = clear[rows, left] >= clear[rows, right]
            level = prev.copy()
            level[:, :n_lat - span] = np.where(take_left, left, right)
            levels.append(level)
            span *= 2
        self._first_max = np.stack(levels)
        return self._first_max

    def look_fast(self, rows, equatorward_deg, poleward_deg):
        """As :meth:`look` (the same choice of point, the same numbers), by look-ups in place
        of a scan along the meridian: a few array reads per site and time whatever the
        length of the meridian grid. ``rows`` (n,), edges (n, T)."""
        first_max = self._first_max_table()
        n_lat = self.lat_grid_deg.size
        clear = self.clearance_deg.ravel()
        elev = self.elevation_deg.ravel()
        base = (np.asarray(rows, np.intp) * n_lat)[:, None]

        def at_edge(edge_deg):
            f = np.clip((edge_deg - self.grid_start_deg) / LAT_STEP_DEG, 0.0, n_lat - 1.0)
            lo = np.minimum(f.astype(np.intp), n_lat - 2)
            w = f - lo
            i = base + lo
            with np.errstate(invalid="ignore"):
                c = clear[i] + w * (clear[i + 1] - clear[i])
                e = elev[i] + w * (elev[i + 1] - elev[i])
            nearest = np.minimum(np.rint(f).astype(np.intp), n_lat - 1)
            return c, e, nearest

        c_e, el_e, k_e = at_edge(equatorward_deg)
        c_p, el_p, k_p = at_edge(poleward_deg)
        # Grid points strictly between the edges: a <= k < b.
        a = np.clip(np.floor((equatorward_deg - self.grid_start_deg) / LAT_STEP_DEG)
                    .astype(np.intp) + 1, 0, n_lat)
        b = np.clip(np.ceil((poleward_deg - self.grid_start_deg) / LAT_STEP_DEG)
                    .astype(np.intp), 0, n_lat)
        length = b - a
        inside = length > 0
        level = _FLOOR_LOG2[np.clip(length, 1, n_lat)]
        a = np.where(inside, a, 0)
        b2 = np.where(inside, b - (1 << level), 0)
        stride = first_max.shape[1] * n_lat
        levels = first_max.ravel()
        k1 = levels[level * stride + base + a]
        k2 = levels[level * stride + base + b2]
        c1, c2 = clear[base + k1], clear[base + k2]
        k_in = np.where(c1 >= c2, k1, k2)
        c_in = np.where(inside, np.maximum(c1, c2), -np.inf)
        # np.argmax over (equatorward, poleward, inside), NaN counting as the largest.
        pick_e = np.isnan(c_e) | ((c_e >= c_p) & (c_e >= c_in))
        pick_p = ~pick_e & (np.isnan(c_p) | (c_p >= c_in))
        k = np.where(pick_e, k_e, np.where(pick_p, k_p, k_in))
        el = np.where(pick_e, el_e, np.where(pick_p, el_p, elev[base + k_in]))
        az = self.azimuth_deg.ravel()[base + k]
        m = self.site_mlat_deg[rows][:, None]
        under = (equatorward_deg <= m) & (m <= poleward_deg)
        az = np.where(under, self.poleward_azimuth_deg[rows][:, None], az)
        el = np.where(under, 90.0, el)
        return az, el, under


_FLOOR_LOG2 = np.concatenate([[0], np.floor(np.log2(np.arange(1, 4097))).astype(np.intp)])
"""floor(log2(length)) for run lengths 0 to 4096 along a meridian grid (0 for 0)."""


def _lat_grid(equatorward_deg, poleward_deg):
    """Magnetic latitudes sampled along the meridian: all the band can reach, with a margin."""
    return np.arange(np.floor(np.min(equatorward_deg)) - 1.0,
                     np.ceil(np.max(poleward_deg)) + 1.0 + 1e-9, LAT_STEP_DEG)


LOOK_CELLS = 4_000_000
"""Most (site, time, latitude) cells the exact :func:`sightline` holds at once (bounds memory)."""
LOOK_STEPS = 32_000
"""Most (site, time) pairs :func:`sightline` works on at once: its working arrays stay in
the processor's cache (measured on 10,000 sites over a week: 32,000 takes 0.7 of the time of
250,000; 4,000 is slower again)."""


def sightline(table: KpNeeded, kp, mlt_h, visible=True, exact=False) -> dict:
    """Whether, and where, each site of a Kp-needed table sees the band at given Kp and MLT.

    Parameters
    ----------
    table : KpNeeded
        From :func:`kp_needed_table` (it carries the sites' meridian geometry).
    kp : array_like (N, T)
        Kp at each site and time (broadcast with ``mlt_h``).
    mlt_h : array_like (N, T)
        Magnetic local time of each site at each time, hours.
    visible : bool
        Also say whether the band is in view (False leaves ``visible`` out: the look
        alone, as the chance grid asks for it).
    exact : bool
        The reference computation: the oval model evaluated at every site and time and
        the meridian scanned point by point for the best-cleared one. By default the
        edges come from the model tabulated on a fine grid (:func:`band_edges`, within
        0.005 degrees) and the best point from look-ups
        (:meth:`MeridianClearance.look_fast`), some ten times faster; the two agree
        within 1 degree of azimuth and 0.5 degrees of elevation wherever the chosen
        point is the same, and choose differently only when the edges straddle a
        meridian grid latitude within the tabulation error (tests/test_view.py).

    Returns
    -------
    dict of ndarray (N, T)
        ``visible`` (bool), ``overhead`` (bool: the site is under the band),
        ``look_azimuth_deg`` and ``look_elevation_deg``: the band's
        best-cleared point (elevation 90 and the magnetic-poleward bearing
        when overhead; toward the equator when the band lies equatorward).
    """
    clearance = table.clearance
    n = clearance.site_mlat_deg.size
    kp = oval.check_kp(kp)
    mlt_h = np.asarray(mlt_h, dtype=float)
    shape = np.broadcast_shapes(kp.shape, mlt_h.shape)
    if len(shape) < 2:
        shape = (n, shape[0] if shape else 1)
    kp, mlt_h = np.broadcast_to(kp, shape), np.broadcast_to(mlt_h, shape)
    out = {"visible": np.zeros(shape, bool), "overhead": np.zeros(shape, bool),
           "look_azimuth_deg": np.full(shape, np.nan), "look_elevation_deg": np.full(shape, np.nan)}
    if not visible:
        del out["visible"]
    bad = ~np.isfinite(table.mlat)
    if exact:
        equatorward_deg, poleward_deg = _discrete_edges(kp, mlt_h, table.model)
        blocks = row_blocks(n, shape[1] * clearance.lat_grid_deg.size, LOOK_CELLS)
    else:
        blocks = row_blocks(n, shape[1], LOOK_STEPS)
    for part in blocks:
        rows = np.arange(part.start, part.stop)
        if exact:
            eq, pw = equatorward_deg[rows], poleward_deg[rows]
            look = clearance.look
        else:
            # Sites where AACGM-v2 is undefined get a placeholder band, blanked below.
            eq, pw = _edges_for_look(clearance, rows, kp[rows],
                                     np.where(bad[rows, None], 0.0, mlt_h[rows]), table.model)
            look = clearance.look_fast
        if visible:
            out["visible"][rows] = clearance.visible(rows, eq, pw)[0]
        az, el, under = look(rows, eq, pw)
        out["look_azimuth_deg"][rows], out["look_elevation_deg"][rows] = az, el
        out["overhead"][rows] = under
    out["overhead"][bad] = False
    if visible:
        out["visible"][bad] = False
    out["look_azimuth_deg"][bad] = out["look_elevation_deg"][bad] = np.nan
    return out


EDGE_TOLERANCE_DEG = 0.005
"""Largest difference between :func:`band_edges` and the oval model at the point (twice
the largest seen over two million random Kp and MLT, tests/test_view.py)."""


def _edges_for_look(clearance, rows, kp, mlt_h, model):
    """The band's edges for :meth:`MeridianClearance.look_fast`: tabulated
    (:func:`band_edges`), except where an edge lies within ``EDGE_TOLERANCE_DEG`` of a
    latitude at which the look changes its choice (a meridian grid latitude or the midpoint
    between two: which grid point is nearest or inside the band; or the site's own
    latitude: under the band or not). There the model is evaluated at the point, so the
    choice is the exact computation's and the tabulation moves the look only within a
    choice (at most some thousandths of a degree). About one site-step in twelve."""
    eq, pw = band_edges(kp, mlt_h, model)
    site = clearance.site_mlat_deg[rows][:, None]
    half = LAT_STEP_DEG / 2.0
    near = np.zeros(eq.shape, bool)
    for edge in (eq, pw):
        f = (edge - clearance.grid_start_deg) / half
        near |= np.abs(f - np.rint(f)) * half < EDGE_TOLERANCE_DEG
        near |= np.abs(edge - site) < EDGE_TOLERANCE_DEG
    if near.any():
        eq[near], pw[near] = _discrete_edges(kp[near], mlt_h[near], model)
    return eq, pw


def _first_index(flags, coarse):
    """Fine-grid index where ``flags`` (n, K, M) first turns true along K; -1 if never."""
    hit = flags.any(axis=1)
    return np.where(hit, coarse[np.argmax(flags, axis=1)], -1)


def _bisect(test, first, coarse_step):
    """Least fine-grid index where ``test(idx (n, M)) -> bool`` holds, searched below ``first``.

    ``first`` is the first true coarse index (or -1 for never); the index
    ``coarse_step`` below it was false, so bisection between them finds the
    first true fine index assuming a single change within the coarse step.
    """
    todo = first > 0
    hi = first.copy()
    lo = np.where(todo, first - coarse_step, first)
    while np.any(hi - lo > 1):
        mid = np.where(hi - lo > 1, (lo + hi) // 2, hi)
        ok = test(np.maximum(mid, 0))
        hi = np.where(ok, mid, hi)
        lo = np.where(ok, lo, mid)
    return hi


def kp_needed_table(lat, lon, height_m, horizons, min_elevation_deg=5.0,
                    emission_height_km=110.0, model=oval.DEFAULT_MODEL, when=None,
                    names=None) -> KpNeeded:
    """Least Kp at which each site sees the oval band, per magnetic local time.

    Parameters
    ----------
    lat, lon : array_like (N,)
        Site latitude and longitude in degrees (north and east positive).
    height_m : float or array_like (N,)
        Site height above sea level in metres.
    horizons : sequence of (None or array_like (M, 2)) or None
        Per-site horizon mask, ``[azimuth_deg, elevation_deg]`` pairs (true
        azimuth 0-360, elevation -10 to 90); None = flat horizon at 0.
    min_elevation_deg : float
        Margin above the mask the aurora must clear, degrees (default 5).
    emission_height_km : float
        Height of the band's lower border in km (default 110).
    model : str
        Oval model name with discrete-oval edges (see ``oval.MODELS``).
    when : datetime or None
        Epoch for AACGM-v2 (UTC); None = now.
    names : sequence of str, optional
        Site names, used only in error messages.

    Returns
    -------
    KpNeeded
        Tables (N, 96) of Kp needed on the horizon and overhead, where to
        look, and the sites' magnetic coordinates. Kp not reached by 9 is
        inf. Resolution 0.01 Kp: a 0.25 Kp scan, then bisection on a 0.01
        grid (a change of visibility and back within 0.25 Kp is not seen).

    References
    ----------
    See the module docstring.
    """
    oval.check_viewing_model(model)
    lat, lon, height_m = _as_site_arrays(lat, lon, height_m)
    n = lat.size
    horizons = check_horizons(horizons, n, names)
    mlt_h = np.arange(0.0, 24.0, MLT_STEP_H)
    kp_fine = np.round(np.arange(0.0, oval.KP_MAX + 1e-9, KP_FINE_STEP), 6)
    eq, pw = _discrete_edges(kp_fine[:, None], mlt_h[None, :], model)  # (F, M)
    coarse = np.arange(0, kp_fine.size, KP_COARSE_EVERY)
    # One height for both sides of every comparison: the site's magnetic
    # coordinates are those of the point at the emission height above it.
    mlat, mlon = magnetic.geo_to_aacgm(lat, lon, float(emission_height_km), when)
    clearance = MeridianClearance(lat, lon, height_m / 1000.0, mlat, mlon,
                                  horizon_table(horizons, n), _lat_grid(eq, pw),
                                  float(emission_height_km), float(min_elevation_deg), when)
    cols = np.arange(mlt_h.size)[None, :]

    shape = (n, mlt_h.size)
    kp_horizon, kp_overhead = np.full(shape, np.inf), np.full(shape, np.inf)
    kp_lost = np.full(shape, np.inf)
    look_az, look_el = np.full(shape, np.nan), np.full(shape, np.nan)
    for start in range(0, n, SITE_CHUNK):
        rows = np.arange(start, min(start + SITE_CHUNK, n))

        def seen(k, rows=rows):
            return clearance.visible(rows, eq[k, cols], pw[k, cols])[0]

        def under(k, rows=rows):
            m = clearance.site_mlat_deg[rows][:, None]
            return (eq[k, cols] <= m) & (m <= pw[k, cols])

        def gone(k, rows=rows):
            return ~seen(k) & clearance.passed_equatorward(rows, pw[k, cols])

        vis, overhead = clearance.visible(rows, eq[coarse], pw[coarse], shared=True)  # (n, K, M)
        first_h = _first_index(vis, coarse)
        first_o = _first_index(overhead, coarse)
        # First coarse Kp after the first visible one at which the band has passed
        # equatorward of everything the site can see.
        after = coarse[None, :, None] > np.where(first_h >= 0, first_h, coarse[-1])[:, None, :]
        out_of_sight = ~vis & clearance.passed_equatorward(rows, pw[coarse], shared=True)
        first_l = _first_index(out_of_sight & after, coarse)
        first_h = _bisect(seen, first_h, KP_COARSE_EVERY)
        first_l = _bisect(gone, first_l, KP_COARSE_EVERY)
        first_o = _bisect(under, first_o, KP_COARSE_EVERY)
        kp_lost[rows] = np.where(first_l >= 0, kp_fine[np.maximum(first_l, 0)], np.inf)
        kp_horizon[rows] = np.where(first_h >= 0, kp_fine[np.maximum(first_h, 0)], np.inf)
        kp_overhead[rows] = np.where(first_o >= 0, kp_fine[np.maximum(first_o, 0)], np.inf)
        k = np.maximum(first_h, 0)
        az, el, _ = clearance.look_fast(rows, eq[k, cols], pw[k, cols])
        look_az[rows] = np.where(first_h >= 0, az, np.nan)
        look_el[rows] = np.where(first_h >= 0, el, np.nan)
    bad = ~np.isfinite(mlat)  # near the magnetic equator AACGM is undefined: never
    kp_horizon[bad], kp_overhead[bad], kp_lost[bad] = np.inf, np.inf, np.inf
    return KpNeeded(
        mlt_h=mlt_h, kp_horizon=kp_horizon, kp_overhead=kp_overhead, kp_lost=kp_lost,
        look_azimuth_deg=look_az, look_elevation_deg=look_el, mlat=mlat, mlon=mlon,
        model=model, clearance=clearance,
        settings={"min_elevation_deg": float(min_elevation_deg),
                  "emission_height_km": float(emission_height_km)},
    )


def kp_needed_at(table: KpNeeded, mlt_h) -> np.ndarray:
    """Kp needed on the horizon at any MLT per site, interpolated periodically.

    Parameters
    ----------
    table : KpNeeded
    mlt_h : array_like (N, T)
        Magnetic local time of each site at each time, hours.

    Returns
    -------
    ndarray (N, T)
        Linear interpolation between the 15-minute columns; where a
        neighbour is inf (not reachable) the larger, i.e. inf, is kept.
    """
    return _interp_mlt(table, table.kp_horizon, mlt_h, np.maximum)


def kp_lost_at(table: KpNeeded, mlt_h) -> np.ndarray:
    """Kp at which the band has left the site's view again, per site and MLT (N, T).

    Interpolated like :func:`kp_needed_at`; where a neighbour is inf (stays
    in view) the smaller, finite value is kept, so a polar-cap site is never
    credited with a storm that has carried the band out of its sight.
    """
    if np.isposinf(table.kp_lost).all():  # no site loses the band by Kp 9: inf everywhere
        return np.full(np.shape(mlt_h), np.inf)
    return _interp_mlt(table, table.kp_lost, mlt_h, np.minimum)


MLT_CELLS = 65_536
"""(site, time) cells :func:`kp_needed_at` and :func:`kp_lost_at` work on at once: the
working arrays stay in the processor's cache (a third of the time of one pass over 10,000
sites by a week of steps)."""


def _interp_mlt(table: KpNeeded, values, mlt_h, pick):
    """Periodic linear interpolation of a (N, 96) Kp table at MLTs (N, T); ``pick`` chooses
    between neighbours when one is infinite."""
    mlt_h = np.asarray(mlt_h, dtype=float)
    n, m = values.shape
    flat_mlt = mlt_h.reshape(n, -1)
    # Each row closed by its first column, so the upper neighbour is the next one.
    ring = np.concatenate([values, values[:, :1]], axis=1).ravel()
    out = np.empty(flat_mlt.shape)
    for part in row_blocks(n, flat_mlt.shape[1], MLT_CELLS):
        f = np.mod(flat_mlt[part], 24.0) / MLT_STEP_H
        f[~(f < m)] = 0.0  # 24 h after rounding, and NaN (whose result is NaN all the same)
        lo = f.astype(np.intp)
        w = f - lo
        w[np.isnan(flat_mlt[part])] = np.nan
        at = lo + (np.arange(part.start, part.stop) * (m + 1))[:, None]
        a, b = ring[at], ring[at + 1]
        finite = np.isfinite(a) & np.isfinite(b)
        with np.errstate(invalid="ignore"):
            lin = a + w * (b - a)
        out[part] = np.where(finite, lin, np.where(w == 0, a, pick(a, b)))
    return out.reshape(mlt_h.shape)


def best_night_mlt(table: KpNeeded) -> tuple[np.ndarray, np.ndarray]:
    """The night-side MLT (18-06 h) of least Kp needed on the horizon, and that Kp, per site.

    Ties (for example a site that sees the band at Kp 0 all night) go to the
    MLT closest to magnetic midnight, where substorm aurora is most frequent.
    """
    t = table.mlt_h
    night = (t >= NIGHT_MLT[0]) | (t <= NIGHT_MLT[1])
    kp = np.where(night[None, :], table.kp_horizon, np.inf)
    from_midnight = np.minimum(t, 24.0 - t)
    score = np.where(np.isfinite(kp), kp * 100.0 + from_midnight[None, :], np.inf)
    k = np.argmin(np.where(night[None, :], score, np.inf), axis=1)
    all_inf = ~np.isfinite(score).any(axis=1)
    k = np.where(all_inf, 0, k)
    return t[k], kp[np.arange(len(kp)), k]


def band_outline(kp, when_utc, model=oval.DEFAULT_MODEL, emission_height_km=110.0,
                 hemisphere="north") -> dict:
    """Geographic outline of the oval band at one time, for maps.

    Parameters
    ----------
    kp : float
        Kp, 0-9.
    when_utc : datetime or numpy.datetime64
        The time (fixes which magnetic longitude is at which MLT).
    model : str
        Oval model name.
    emission_height_km : float
        Height of the outline (the emission height), km.
    hemisphere : {"north", "south"}

    Returns
    -------
    dict
        ``mlt_h`` (97,) 0..24 closing the ring, and ``equatorward_lat``,
        ``equatorward_lon``, ``poleward_lat``, ``poleward_lon``,
        ``diffuse_lat``, ``diffuse_lon`` in geographic degrees (NaN where the
        model has no such edge).
    """
    signs = {"north": 1.0, "south": -1.0}
    if hemisphere not in signs:
        raise InputError(f"hemisphere {hemisphere!r}: give north or south")
    b_mlt = np.linspace(0.0, 24.0, 97)
    bounds = oval.boundaries(kp, b_mlt, model)
    mlt_at_zero = magnetic.mlt(np.array([0.0]), np.array([when_utc]))[0, 0]
    mlon = np.mod((b_mlt - mlt_at_zero) * 15.0 + 180.0, 360.0) - 180.0
    out = {"mlt_h": b_mlt, "kp": float(kp), "model": model, "hemisphere": hemisphere}
    for name in oval.BOUNDARY_NAMES:
        lat, lon = magnetic.aacgm_to_geo(signs[hemisphere] * bounds[name], mlon, emission_height_km,
                                         when_utc, refine=1)
        out[f"{name}_lat"], out[f"{name}_lon"] = lat, lon
    return out
