"""How good have the chances been? Scores for probability forecasts of a yes/no outcome.

Every function takes arrays of issued chances ``p`` (0..1) and outcomes ``o``
(0 or 1, one per forecast) and returns plain numbers or records, so the
``verify`` command, its JSON and the tests read the same values.

References
----------
Brier, G. W. (1950). Verification of forecasts expressed in terms of
probability. Monthly Weather Review 78, 1-3.
Murphy, A. H. (1973). A new vector partition of the probability score.
Journal of Applied Meteorology 12, 595-600.
Stephenson, D. B., Coelho, C. A. S. and Jolliffe, I. T. (2008). Two extra
components in the Brier score decomposition. Weather and Forecasting 23, 752-757.
Wilson, E. B. (1927). Probable inference, the law of succession, and
statistical inference. JASA 22, 209-212.
Wilks, D. S. (2011). Statistical Methods in the Atmospheric Sciences, 3rd ed.,
chapter 8 (Brier skill score, reliability diagram, ROC).
Hanley, J. A. and McNeil, B. J. (1982). The meaning and use of the area under
a receiver operating characteristic (ROC) curve. Radiology 143, 29-36.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

RELIABILITY_BINS = 10
"""Equal-width chance bins of the reliability table: 0-10 %, 10-20 % ... (Wilks 2011, 8.4.4)."""

Z95 = 1.959963984540054
"""Standard normal quantile for a two-sided 95 % interval."""

SKILL_TOLERANCE = 0.1
"""A skill score "means something" when its 95 % interval is at most ± this wide.
Common practice, no source: a tenth of the gap between no skill and a perfect forecast."""

MIN_EACH_OUTCOME = 10
"""Sightings and blank nights each needed before the ROC area or a skill score is read.
Common practice, no source (the usual "ten events" rule for a binary outcome)."""

MIN_OUTCOMES = 30
"""Fewest outcomes for any figure at all. Common practice, no source."""


def _pairs(p, o):
    p = np.asarray(p, float).ravel()
    o = np.asarray(o, float).ravel()
    if p.shape != o.shape:
        raise ValueError(f"{p.size} chances but {o.size} outcomes")
    if np.any((p < 0) | (p > 1)) or np.any(~np.isin(o, (0.0, 1.0))):
        raise ValueError("chances must lie in 0..1 and outcomes be 0 or 1")
    return p, o


def brier_score(p, o) -> float:
    """Mean squared difference between chance and outcome (Brier 1950); NaN for no pairs."""
    p, o = _pairs(p, o)
    return float(np.mean((p - o) ** 2)) if p.size else math.nan


def brier_skill_score(p, o, p_reference) -> float:
    """1 − BS / BS_reference: the share of the reference's error removed (Wilks 2011, eq. 8.37).

    Positive when the chances beat the reference (here the Kp-climatology outlook),
    0 when no better, negative when worse. NaN when the reference is perfect.
    """
    bs = brier_score(p, o)
    ref = brier_score(p_reference, o)
    return 1.0 - bs / ref if ref > 0 else math.nan


def wilson_interval(successes, n, z=Z95):
    """Wilson (1927) score interval for a binomial proportion.

    Parameters
    ----------
    successes, n : array_like of int
        Sightings and outcomes per bin.
    z : float
        Normal quantile (1.96 for 95 %).

    Returns
    -------
    (low, high) : ndarrays; NaN where ``n`` is 0.
    """
    k = np.asarray(successes, float)
    n = np.asarray(n, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        phat = k / n
        denom = 1.0 + z**2 / n
        centre = (phat + z**2 / (2 * n)) / denom
        half = z * np.sqrt(phat * (1 - phat) / n + z**2 / (4 * n**2)) / denom
    low = np.where(n > 0, np.clip(centre - half, 0.0, 1.0), np.nan)
    high = np.where(n > 0, np.clip(centre + half, 0.0, 1.0), np.nan)
    return low, high


def bin_index(p, bins=RELIABILITY_BINS):
    """Bin of each chance: edges 0, 1/bins, ... 1; a chance on an inner edge goes to the lower
    bin, 0 to the first (the convention of scikit-learn's ``calibration_curve``)."""
    edges = np.linspace(0.0, 1.0, bins + 1)
    return np.searchsorted(edges[1:-1], np.asarray(p, float), side="left")


@dataclass(frozen=True)
class ReliabilityBin:
    """One row of the reliability table."""

    low: float  # bin's lower edge, chance 0..1
    high: float  # upper edge
    count: int  # outcomes in the bin
    sightings: int  # outcomes that were sightings
    mean_chance: float | None  # mean issued chance in the bin
    observed: float | None  # observed frequency of sightings
    observed_low: float | None  # Wilson 95 % interval of the observed frequency
    observed_high: float | None


def reliability_table(p, o, bins=RELIABILITY_BINS) -> list[ReliabilityBin]:
    """Issued chance against observed frequency per equal-width bin (Wilks 2011, 8.4.4).

    Each bin carries its count and the Wilson (1927) 95 % interval of the observed
    frequency; empty bins have None for the means.
    """
    p, o = _pairs(p, o)
    idx = bin_index(p, bins)
    count = np.bincount(idx, minlength=bins)
    hits = np.bincount(idx, weights=o, minlength=bins)
    sums = np.bincount(idx, weights=p, minlength=bins)
    low, high = wilson_interval(hits, count)
    rows = []
    for b in range(bins):
        n = int(count[b])
        rows.append(ReliabilityBin(
            low=b / bins, high=(b + 1) / bins, count=n, sightings=int(hits[b]),
            mean_chance=float(sums[b] / n) if n else None,
            observed=float(hits[b] / n) if n else None,
            observed_low=float(low[b]) if n else None,
            observed_high=float(high[b]) if n else None,
        ))
    return rows


@dataclass(frozen=True)
class BrierParts:
    """Brier score decomposition; ``brier = reliability − resolution + uncertainty
    + within_bin_variance − within_bin_covariance`` holds exactly."""

    brier: float
    reliability: float  # lower is better: mean squared gap between chance and frequency per bin
    resolution: float  # higher is better: how far bin frequencies stray from the base rate
    uncertainty: float  # base rate × (1 − base rate): the outcome's own variance
    within_bin_variance: float
    within_bin_covariance: float
    base_rate: float


def brier_decomposition(p, o, bins=RELIABILITY_BINS) -> BrierParts:
    """Murphy (1973) partition of the Brier score over the reliability bins.

    With chances that vary inside a bin, Murphy's three terms no longer add up to
    the score; the two extra terms of Stephenson, Coelho & Jolliffe (2008, eq. 6)
    make the identity exact:

        BS = REL − RES + UNC + WBV − WBC,
        REL = Σ n_k (p̄_k − ō_k)² / n,  RES = Σ n_k (ō_k − ō)² / n,  UNC = ō (1 − ō),
        WBV = Σ_k Σ_i (p_i − p̄_k)² / n,  WBC = 2 Σ_k Σ_i (o_i − ō_k)(p_i − p̄_k) / n.
    """
    p, o = _pairs(p, o)
    n = p.size
    if n == 0:
        return BrierParts(*([math.nan] * 7))
    idx = bin_index(p, bins)
    count = np.bincount(idx, minlength=bins).astype(float)
    safe = np.maximum(count, 1.0)
    p_bar = np.bincount(idx, weights=p, minlength=bins) / safe
    o_bar = np.bincount(idx, weights=o, minlength=bins) / safe
    base = float(o.mean())
    dp = p - p_bar[idx]
    return BrierParts(
        brier=float(np.mean((p - o) ** 2)),
        reliability=float(np.sum(count * (p_bar - o_bar) ** 2) / n),
        resolution=float(np.sum(count * (o_bar - base) ** 2) / n),
        uncertainty=base * (1.0 - base),
        within_bin_variance=float(np.sum(dp**2) / n),
        within_bin_covariance=float(2.0 * np.sum((o - o_bar[idx]) * dp) / n),
        base_rate=base,
    )


def roc_auc(p, o) -> float:
    """Area under the ROC curve: P(chance on a sighting night > chance on a blank night),
    ties counting one half (the Mann-Whitney statistic; Hanley & McNeil 1982).
    NaN unless both outcomes occur."""
    from scipy.stats import rankdata

    p, o = _pairs(p, o)
    pos = int(o.sum())
    neg = p.size - pos
    if pos == 0 or neg == 0:
        return math.nan
    ranks = rankdata(p)  # mid-ranks for ties
    return float((ranks[o == 1].sum() - pos * (pos + 1) / 2) / (pos * neg))


def outcomes_needed(p, o, p_reference=None) -> int:
    """How many more outcomes before the skill figures mean something (0 when enough).

    The rule: at least ``MIN_OUTCOMES`` outcomes, ``MIN_EACH_OUTCOME`` of each kind at
    the base rate seen so far, and (with a reference) enough that the 95 % interval of
    the Brier skill score, from the spread of the per-pair score differences, is
    at most ± ``SKILL_TOLERANCE``: n ≥ (z · sd(d) / (tol · BS_ref))² with
    d_i = (p_i − o_i)² − (r_i − o_i)² (a normal approximation; Wilks 2011, 5.2).
    """
    p, o = _pairs(p, o)
    n = p.size
    need = MIN_OUTCOMES
    if n:
        rate = o.mean()
        rare = min(rate, 1.0 - rate)
        need = max(need, math.ceil(MIN_EACH_OUTCOME / rare) if rare > 0 else 2 * n + MIN_OUTCOMES)
    if p_reference is not None and n >= 2:
        r = np.asarray(p_reference, float).ravel()
        d = (p - o) ** 2 - (r - o) ** 2
        ref = float(np.mean((r - o) ** 2))
        sd = float(np.std(d, ddof=1))
        if ref > 0 and sd > 0:
            need = max(need, math.ceil((Z95 * sd / (SKILL_TOLERANCE * ref)) ** 2))
    return max(0, need - n)


def scores(p, o, p_reference=None, bins=RELIABILITY_BINS) -> dict:
    """Every score for one set of pairs, JSON-ready.

    Returns
    -------
    dict
        ``count``, ``sightings``, ``brier``, ``brier_reference``, ``skill`` (Brier skill
        score against the reference), ``decomposition`` (:class:`BrierParts`),
        ``roc_auc``, ``reliability`` (rows of :class:`ReliabilityBin`) and
        ``more_needed`` (:func:`outcomes_needed`).
    """
    p, o = _pairs(p, o)
    has_ref = p_reference is not None and p.size > 0
    ref = np.asarray(p_reference, float).ravel() if has_ref else None
    return {
        "count": int(p.size),
        "sightings": int(o.sum()),
        "brier": _json_float(brier_score(p, o)),
        "brier_reference": _json_float(brier_score(ref, o)) if has_ref else None,
        "skill": _json_float(brier_skill_score(p, o, ref)) if has_ref else None,
        "decomposition": {k: _json_float(v) for k, v in asdict(brier_decomposition(p, o, bins)).items()},
        "roc_auc": _json_float(roc_auc(p, o)),
        "reliability": [asdict(b) for b in reliability_table(p, o, bins)],
        "more_needed": outcomes_needed(p, o, ref),
    }


def cloud_scores(seen_pct, forecasts) -> dict:
    """Each weather model's cloud forecasts against the cloud the guides saw.

    Parameters
    ----------
    seen_pct : sequence of float
        Cloud cover seen per site-night, percent 0-100.
    forecasts : sequence of dict
        Per site-night, weather-model name -> its forecast cloud cover in percent (the
        mean over the hours out); a model missing from a night is not scored there.

    Returns
    -------
    dict
        Model -> ``count`` (site-nights), ``mae_pct`` (mean absolute error), ``bias_pct``
        (mean of forecast minus seen: above 0 the model forecast too much cloud) and
        ``closest_share`` (share of its site-nights on which it was nearest the cloud seen
        among the models forecast for that night; a tie counts as a share for each tied
        model, common practice, no source). Mean absolute error and mean error (bias) are
        the usual scores of a continuous forecast (Wilks 2011, chapter 8).
    """
    errors: dict[str, list[float]] = {}
    wins: dict[str, float] = {}
    for seen, models in zip(seen_pct, forecasts, strict=True):
        gaps = {m: float(f) - float(seen) for m, f in models.items()}
        if not gaps:
            continue
        best = min(abs(g) for g in gaps.values())
        nearest = [m for m, g in gaps.items() if abs(g) == best]
        for m, g in gaps.items():
            errors.setdefault(m, []).append(g)
            wins[m] = wins.get(m, 0.0) + (1.0 / len(nearest) if m in nearest else 0.0)
    return {m: {"count": len(e), "mae_pct": _json_float(float(np.mean(np.abs(e)))),
                "bias_pct": _json_float(float(np.mean(e))),
                "closest_share": _json_float(wins[m] / len(e))}
            for m, e in sorted(errors.items())}


def _json_float(x):
    return float(x) if x is not None and math.isfinite(x) else None
