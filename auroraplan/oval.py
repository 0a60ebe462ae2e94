"""Where the auroral oval lies for a given Kp: published boundary models keyed by name.

Every model is a function ``f(kp, mlt_h) -> dict(poleward, equatorward,
diffuse)`` of broadcasting arrays, returning magnetic latitude in degrees
(northern hemisphere; southern sites use the same boundaries for ``|MLAT|``,
the usual assumption of hemispheric symmetry). The models:

``starkov1994`` (default)
    Starkov (1994a) poleward and equatorward edges of the discrete oval and
    the equatorward edge of the diffuse aurora, with Kp turned into AL by
    Starkov (1994b), held at its minimum below Kp 0.23 (see :func:`kp_to_al`).
    Starkov's Kp-to-AL relation flattens above Kp ~ 7 (AL 491 nT at Kp 6,
    579 at 7, 652 at 9), so his equatorward boundaries barely move between
    Kp 7 and 9, while the equatorward boundary of the diffuse aurora observed
    by DMSP keeps moving about 2 degrees per Kp (Gussenhoven et al. 1983,
    linear fits over all Kp in their data). What the default changes relative
    to the published model, and nothing else: above Kp 6 the two
    *equatorward* boundaries (discrete and diffuse) keep their Kp 6 shape and
    move by Gussenhoven et al.'s slope at that MLT times (Kp - 6). The
    poleward edge is Starkov's as published at every Kp: no published source
    moves it with the diffuse boundary. The threshold Kp 6 is our choice
    (common practice, no source): it is where Starkov's AL(Kp) curve starts to
    bend over. See ``STORM_HANDLING``.
``starkov1994-published``
    The same model exactly as published, without the storm extension.
``gussenhoven1983``
    The equatorward edge of the diffuse aurora, linear in Kp per MLT hour
    (Gussenhoven, Hardy and Heinemann 1983, table of fits). This model has
    no discrete-oval edges: ``poleward`` and ``equatorward`` are NaN, so a
    visibility computation that needs them refuses it rather than guessing.

The discrete oval's equatorward edge is what a person can see: it is the
default boundary for visibility in :mod:`auroraplan.view`.

References
----------
Starkov, G. V. (1994a), Mathematical model of the auroral boundaries,
Geomagnetism and Aeronomy 34(3), 331-336 (English translation).
Starkov, G. V. (1994b), Statistical dependences between the magnetic activity
indices, Geomagnetism and Aeronomy 34(1), 101-103.
Sigernes, F. et al. (2011), Two methods to forecast auroral displays,
J. Space Weather Space Clim. 1, A03, doi:10.1051/swsc/2011003 (reproduces
the Starkov coefficient table and the Kp-AL relation).
Gussenhoven, M. S., D. A. Hardy and N. Heinemann (1983), Systematics of the
equatorward diffuse auroral boundary, J. Geophys. Res. 88(A7), 5692-5708.
"""

from __future__ import annotations

import numpy as np

from auroraplan.errors import InputError

KP_MIN, KP_MAX = 0.0, 9.0
DEFAULT_MODEL = "starkov1994"
BOUNDARY_NAMES = ("poleward", "equatorward", "diffuse")

# Starkov (1994b): |AL| in nT from Kp, coefficients of 1, Kp, Kp^2, Kp^3.
KP_TO_AL = (18.0, -12.3, 27.2, -2.0)

# Starkov (1994a) as reproduced by Sigernes et al. (2011): for each boundary,
# each Fourier coefficient is a cubic b0 + b1 x + b2 x^2 + b3 x^3 in
# x = log10|AL|. The series gives colatitude theta in degrees:
#   theta = A0 + A1 cos(15(t + a1)) + A2 cos(15(2t + a2)) + A3 cos(15(3t + a3))
# with t the MLT in hours, the a's in hours and the cosine argument in degrees
# (a PLUS sign inside the cosine). Magnetic latitude = 90 - theta.
STARKOV_1994 = {
    "poleward": {  # poleward edge of the discrete oval
        "A0": (-0.07, 24.54, -12.53, 2.15),
        "A1": (-10.06, 19.83, -9.33, 1.24),
        "a1": (-6.61, 10.17, -5.80, 1.19),
        "A2": (-4.44, 7.47, -3.01, 0.25),
        "a2": (6.37, -1.10, 0.34, -0.38),
        "A3": (-3.77, 7.90, -4.73, 0.91),
        "a3": (-4.48, 10.16, -5.87, 0.98),
    },
    "equatorward": {  # equatorward edge of the discrete oval
        # b0 = 1.61 as in Sigernes et al. (2011) Appendix A; one public
        # transcription of Starkov's table has 1.16, which moves the edge 0.45 deg.
        "A0": (1.61, 23.21, -10.97, 2.03),
        "A1": (-9.59, 17.78, -7.20, 0.96),
        "a1": (-2.22, 1.50, -0.58, 0.08),
        "A2": (-12.07, 17.49, -7.96, 1.15),
        "a2": (-23.98, 42.79, -26.96, 5.56),
        "A3": (-6.56, 11.44, -6.73, 1.31),
        "a3": (-20.07, 36.67, -24.20, 5.11),
    },
    "diffuse": {  # equatorward edge of the diffuse aurora
        "A0": (3.44, 29.77, -16.38, 3.35),
        "A1": (-2.41, 7.89, -4.32, 0.87),
        "a1": (-1.68, -2.48, 1.58, -0.28),
        "A2": (-0.74, 3.94, -3.09, 0.72),
        "a2": (8.69, -20.73, 13.03, -2.14),
        "A3": (-2.12, 3.24, -1.67, 0.31),
        "a3": (8.61, -5.34, -1.36, 0.76),
    },
}

# Gussenhoven, Hardy and Heinemann (1983), linear fits of the equatorward
# diffuse auroral boundary lambda = lambda0 + slope * Kp (corrected geomagnetic
# latitude, degrees) per one-hour MLT bin: hour -> (lambda0, slope).
# The paper gives no fit for the bins 02, 03, 13 and 14 MLT.
GUSSENHOVEN_1983 = {
    0: (66.1, -1.99), 1: (65.1, -1.55), 4: (67.7, -1.48), 5: (67.8, -1.87),
    6: (68.2, -1.90), 7: (68.9, -1.91), 8: (69.3, -1.87), 9: (69.5, -1.67),
    10: (69.6, -1.41), 11: (70.1, -1.25), 12: (69.4, -0.84), 15: (70.9, -0.81),
    16: (71.6, -1.28), 17: (71.1, -1.31), 18: (71.2, -1.74), 19: (70.4, -1.83),
    20: (69.4, -1.89), 21: (68.6, -1.86), 22: (67.9, -1.78), 23: (67.8, -2.07),
}

# Above this Kp the default Starkov model follows Gussenhoven's slopes (our choice).
STORM_KP = 6.0

STORM_HANDLING = {
    "starkov1994": (
        "above Kp 6 the two equatorward Starkov boundaries keep their Kp 6 shape and move "
        "equatorward by Gussenhoven et al. (1983) diffuse-boundary slope x (Kp - 6); the "
        "poleward edge stays as published"
    ),
    "starkov1994-published": "none: Starkov (1994) as published (boundaries stall above Kp 7)",
    "gussenhoven1983": "none: the published linear fits in Kp, used up to Kp 9",
}


def check_kp(kp) -> np.ndarray:
    """Kp as a float array, refusing values outside 0-9 with one line.

    Parameters
    ----------
    kp : float or array_like
        Planetary K index as a decimal (thirds as 4.33, 4.67).

    Returns
    -------
    ndarray
    """
    kp = np.asarray(kp, dtype=float)
    bad = ~((kp >= KP_MIN) & (kp <= KP_MAX))
    if np.any(bad):
        value = kp[bad].flat[0] if kp.ndim else float(kp)
        raise InputError(f"Kp {value:g} is outside 0 to 9; give a Kp from 0 to 9 (e.g. 3 or 4.33)")
    return kp


def _al_turning_kp() -> float:
    """Kp at which Starkov's AL(Kp) cubic has its minimum (dAL/dKp = 0, the smaller root)."""
    _, c1, c2, c3 = KP_TO_AL
    a, b, c = 3.0 * c3, 2.0 * c2, c1
    roots = np.roots([a, b, c]).real
    return float(min(r for r in roots if r > 0))


KP_AL_TURNING = _al_turning_kp()
"""Kp ~ 0.232 where AL = 18 - 12.3 Kp + 27.2 Kp^2 - 2 Kp^3 has its minimum (16.6 nT)."""


def kp_to_al(kp):
    """|AL| in nT from Kp by Starkov (1994b): AL = 18 - 12.3 Kp + 27.2 Kp^2 - 2.0 Kp^3.

    The published cubic dips from 18 nT at Kp 0 to 16.6 nT at Kp 0.232 before
    rising, which would shrink the oval slightly as Kp rises from 0 (an
    artefact of the fit, not physics). Below ``KP_AL_TURNING`` AL is held at
    that minimum, so AL never falls as Kp rises and no equatorward boundary
    moves poleward with Kp.

    Parameters
    ----------
    kp : array_like
        Planetary K index, 0-9.

    Returns
    -------
    ndarray
        Magnitude of the AL index in nT.

    References
    ----------
    Starkov (1994b), Geomagnetism and Aeronomy 34(1), 101-103; Sigernes et al. (2011).
    """
    kp = np.maximum(np.asarray(kp, dtype=float), KP_AL_TURNING)
    c0, c1, c2, c3 = KP_TO_AL
    return np.abs(c0 + kp * (c1 + kp * (c2 + kp * c3)))


def _cubic(coeffs, x):
    b0, b1, b2, b3 = coeffs
    return b0 + x * (b1 + x * (b2 + x * b3))


def starkov_colatitude(boundary: str, al, mlt_h):
    """Colatitude of one Starkov (1994a) boundary in degrees.

    Parameters
    ----------
    boundary : {"poleward", "equatorward", "diffuse"}
    al : array_like
        AL index in nT (its magnitude is used).
    mlt_h : array_like
        Magnetic local time in hours; broadcast with ``al``.

    Returns
    -------
    ndarray
        Magnetic colatitude in degrees.

    References
    ----------
    Starkov (1994a), Geomagnetism and Aeronomy 34(3), 331-336.
    """
    c = STARKOV_1994[boundary]
    x = np.log10(np.abs(np.asarray(al, dtype=float)))
    t = np.asarray(mlt_h, dtype=float)
    deg = np.pi / 180.0
    return (
        _cubic(c["A0"], x)
        + _cubic(c["A1"], x) * np.cos(15.0 * (t + _cubic(c["a1"], x)) * deg)
        + _cubic(c["A2"], x) * np.cos(15.0 * (2.0 * t + _cubic(c["a2"], x)) * deg)
        + _cubic(c["A3"], x) * np.cos(15.0 * (3.0 * t + _cubic(c["a3"], x)) * deg)
    )


def starkov1994_published(kp, mlt_h) -> dict:
    """Starkov (1994a) boundaries for Kp via Starkov (1994b) AL, exactly as published.

    Parameters
    ----------
    kp : array_like
        Kp, 0-9.
    mlt_h : array_like
        Magnetic local time in hours; broadcast with ``kp``.

    Returns
    -------
    dict of ndarray
        ``poleward``, ``equatorward``, ``diffuse``: magnetic latitude in degrees.

    References
    ----------
    Starkov (1994a, 1994b); Sigernes et al. (2011).
    """
    al = kp_to_al(kp)
    return {name: 90.0 - starkov_colatitude(name, al, mlt_h) for name in BOUNDARY_NAMES}


def _gussenhoven_fit(mlt_h):
    """Gussenhoven (1983) intercept and slope at any MLT, interpolated periodically.

    Each published one-hour bin ``h`` is placed at its centre, MLT ``h + 0.5``
    (our reading of the hourly bins). Between centres, and across the bins
    without a published fit (02, 03, 13 and 14 MLT), intercept and slope are
    interpolated linearly, periodic over 24 h.
    """
    hours = np.array(sorted(GUSSENHOVEN_1983), dtype=float)
    lam0 = np.array([GUSSENHOVEN_1983[int(h)][0] for h in hours])
    slope = np.array([GUSSENHOVEN_1983[int(h)][1] for h in hours])
    t = np.mod(np.asarray(mlt_h, dtype=float), 24.0)
    centres = hours + 0.5
    return (np.interp(t, centres, lam0, period=24.0), np.interp(t, centres, slope, period=24.0))


def gussenhoven1983(kp, mlt_h) -> dict:
    """Gussenhoven, Hardy and Heinemann (1983) equatorward edge of the diffuse aurora.

    lambda = lambda0(MLT) + slope(MLT) * Kp, from the paper's hourly linear
    fits. Hours 02, 03, 13 and 14 MLT have no published fit and are
    interpolated from their neighbours (periodic in MLT); each fit applies at
    the centre of its hour bin.

    Parameters
    ----------
    kp : array_like
        Kp, 0-9 (the fits are extrapolated linearly above the paper's data).
    mlt_h : array_like
        Magnetic local time in hours.

    Returns
    -------
    dict of ndarray
        ``diffuse`` in degrees magnetic latitude; ``poleward`` and
        ``equatorward`` are NaN (the model has no discrete-oval edges).

    References
    ----------
    Gussenhoven et al. (1983), J. Geophys. Res. 88(A7), 5692-5708.
    """
    kp = np.asarray(kp, dtype=float)
    lam0, slope = _gussenhoven_fit(mlt_h)
    diffuse = lam0 + slope * kp
    nan = np.full(diffuse.shape, np.nan)
    return {"poleward": nan, "equatorward": nan.copy(), "diffuse": diffuse}


def starkov1994(kp, mlt_h) -> dict:
    """Starkov (1994a) boundaries whose equatorward edges keep moving in storms (the default).

    Up to Kp 6 identical to :func:`starkov1994_published`. Above Kp 6 the
    equatorward edges of the discrete oval and of the diffuse aurora are their
    Kp 6 positions plus Gussenhoven et al.'s (1983) slope at that MLT times
    (Kp - 6): continuous at Kp 6 and moving about 2 degrees of latitude per Kp
    near magnetic midnight, as the diffuse boundary does in Gussenhoven's
    fits. The poleward edge is Starkov's as published at every Kp.

    Parameters
    ----------
    kp : array_like
        Kp, 0-9.
    mlt_h : array_like
        Magnetic local time in hours.

    Returns
    -------
    dict of ndarray
        ``poleward``, ``equatorward``, ``diffuse`` in degrees magnetic latitude.

    References
    ----------
    Starkov (1994a, 1994b); Gussenhoven et al. (1983) for the slopes.
    """
    kp = np.asarray(kp, dtype=float)
    published = starkov1994_published(kp, mlt_h)
    base = starkov1994_published(np.minimum(kp, STORM_KP), mlt_h)
    _, slope = _gussenhoven_fit(mlt_h)
    shift = slope * np.maximum(kp - STORM_KP, 0.0)
    return {"poleward": published["poleward"],
            "equatorward": base["equatorward"] + shift,
            "diffuse": base["diffuse"] + shift}


def discrete_edges(kp, mlt_h, model: str = DEFAULT_MODEL):
    """Equatorward and poleward edges of the discrete oval alone, degrees magnetic latitude.

    The same numbers as ``MODELS[model](kp, mlt_h)["equatorward"]`` and ``["poleward"]``
    (tests/test_oval.py), at a third of the cost for the Starkov models: two of the six
    boundary series are evaluated, and Gussenhoven's slope only above ``STORM_KP``. A
    model without discrete-oval edges gives NaN.

    Parameters
    ----------
    kp : array_like
        Kp, 0-9.
    mlt_h : array_like
        Magnetic local time in hours; broadcast with ``kp``.
    model : str
        A key of ``MODELS``.

    Returns
    -------
    equatorward, poleward : ndarray

    References
    ----------
    See :func:`starkov1994` and :func:`starkov1994_published`.
    """
    kp = np.asarray(kp, dtype=float)
    if model not in ("starkov1994", "starkov1994-published"):
        b = MODELS[model](kp, mlt_h)
        return b["equatorward"], b["poleward"]
    al = kp_to_al(kp)
    poleward = 90.0 - starkov_colatitude("poleward", al, mlt_h)
    if model == "starkov1994-published":
        return 90.0 - starkov_colatitude("equatorward", al, mlt_h), poleward
    storm = kp > STORM_KP
    base_al = np.where(storm, kp_to_al(np.minimum(kp, STORM_KP)), al) if storm.any() else al
    equatorward = 90.0 - starkov_colatitude("equatorward", base_al, mlt_h)
    if storm.any():
        _, slope = _gussenhoven_fit(mlt_h)
        equatorward = equatorward + slope * np.maximum(kp - STORM_KP, 0.0)
    return equatorward, poleward


MODELS = {
    "starkov1994": starkov1994,
    "starkov1994-published": starkov1994_published,
    "gussenhoven1983": gussenhoven1983,
}


VIEWING_MODELS = tuple(
    name for name, fn in MODELS.items() if np.isfinite(fn(3.0, 0.0)["equatorward"]))
"""Models with discrete-oval edges: the ones a site's view (auroraplan.view) can use.
``gussenhoven1983`` gives only the diffuse boundary, so it serves the oval chart alone."""


def check_model(model: str) -> str:
    """The model name, or one line listing the known ones."""
    if model not in MODELS:
        raise InputError(
            f"unknown oval model {model!r}; known models: {', '.join(MODELS)}"
        )
    return model


def check_viewing_model(model: str) -> str:
    """The model name if a site's view can use it (VIEWING_MODELS), or one line listing those."""
    if model not in VIEWING_MODELS:
        raise InputError(
            f"oval model {model!r} cannot give a site's view (it has no discrete-oval edges); "
            f"use one of {', '.join(VIEWING_MODELS)}"
        )
    return model


def boundaries(kp, mlt_h, model: str = DEFAULT_MODEL) -> dict:
    """Boundary latitudes of the auroral oval for Kp and MLT by a named model.

    Parameters
    ----------
    kp : float or array_like
        Planetary K index, 0-9 as a decimal; anything else raises
        :class:`~auroraplan.errors.InputError`.
    mlt_h : float or array_like
        Magnetic local time in hours; broadcast with ``kp``.
    model : str
        A key of ``MODELS`` (default ``"starkov1994"`` with storm handling).

    Returns
    -------
    dict of ndarray
        ``poleward``, ``equatorward``, ``diffuse``: magnetic latitude in
        degrees (NaN where the model has no such boundary).

    References
    ----------
    See the module docstring.
    """
    fn = MODELS[check_model(model)]
    kp = check_kp(kp)
    out = fn(kp, mlt_h)
    shape = np.broadcast_shapes(np.shape(kp), np.shape(mlt_h))
    return {name: np.broadcast_to(out[name], shape).astype(float) for name in BOUNDARY_NAMES}
