"""Fitting the chance settings to what the guides saw, by maximum likelihood.

The chance of a sighting during a night's outing window is rebuilt from the
parts the forecast archive keeps per dark step (archive.FACTOR_ROWS):

    shown_k = 10^(−0.4 · moon_beta · Δm_k)
              · (display_quiet · p_reach_k + (display_active − display_quiet) · p_strong_k)
    P = chance.p_display_seen(shown, p_clear, step, decorrelation_min)

(the moon rule and display probability of auroraplan.chance). The settings
``display_quiet``, ``display_active`` and ``moon_beta`` are fitted by
maximising the Bernoulli log-likelihood of the logged outcomes, Σ y log P +
(1 − y) log(1 − P) (e.g. Wilks 2011, Statistical Methods in the Atmospheric
Sciences, 3rd ed., 7.6.2). ``decorrelation_min`` is held: with the display
rates free it only rescales them (P depends on the rate and the number of
cycles together), so the outcomes cannot tell the two apart.
``strong_margin_kp`` is held because the archive keeps the chance of the
strong case at the margin used, not at others.

Uncertainty: the nights are resampled with replacement (all sites of a night
together, as they share the sky) and the fit repeated; the 2.5 and 97.5
percentiles are the 95 % interval (percentile bootstrap, Efron & Tibshirani
1993, An Introduction to the Bootstrap, ch. 13).

Skill: K-fold cross-validation by night (never by hour of the same night):
each fold's nights are held out, the settings fitted on the others, and the
Brier score of the current and the fitted settings taken on the held-out
nights.

Fallback with few outcomes, or chances kept without their parts: logistic
recalibration of the issued chance, logit P' = a + b · logit P (Cox 1958,
Biometrika 45, 562), fitted the same way.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

FITTED = ("display_quiet", "display_active", "moon_beta")
"""Settings of auroraplan.chance that the outcomes can fit."""

HELD = ("decorrelation_min", "strong_margin_kp")
"""Settings kept at their current value (see the module's notes)."""

BOUNDS = {"display_active": (0.001, 1.0), "quiet_share": (0.0, 1.0), "moon_beta": (0.0, 3.0)}
"""Search ranges: the probabilities within 0-1 and display_quiet ≤ display_active (fitted as a
share of display_active), moon_beta within the range operator.toml accepts."""

MIN_MODEL_OUTCOMES = 20
"""Fewest outcomes with kept parts, and ``MIN_MODEL_EACH`` of each kind, for fitting the
settings; below that the logistic recalibration is used. Common practice, no source."""
MIN_MODEL_EACH = 3
MIN_LOGISTIC_OUTCOMES = 10
"""Fewest outcomes for any fit. Common practice, no source."""

FOLDS = 5
BOOTSTRAP = 200
"""Bootstrap resamples (Efron & Tibshirani 1993 suggest 200 or more for percentile intervals
is the lower end; more in the benchmark)."""

_EPS = 1e-9


@dataclass
class Parts:
    """Factor parts of M nights padded to K steps, sorted clearest first (p_display_seen)."""

    dm: np.ndarray  # (M, K)
    reach: np.ndarray
    strong: np.ndarray
    clear_step: np.ndarray  # (M, K) c_(k) − c_(k+1)
    steps_per_tau: float  # step_min (divided by τ at evaluation)


def prepare(factors: list[dict], step_min: float) -> Parts:
    """Stack the kept parts of M nights (archive.factors_of) for fast evaluation."""
    m = len(factors)
    k = max([len(f["p_clear"]) for f in factors] + [1])
    rows = {name: np.zeros((m, k)) for name in ("dm", "reach", "strong", "clear")}
    for i, f in enumerate(factors):
        n = len(f["p_clear"])
        rows["dm"][i, :n] = f["sky_brightening_mag"]
        rows["reach"][i, :n] = f["p_reach"]
        rows["strong"][i, :n] = f["p_strong"]
        rows["clear"][i, :n] = f["p_clear"]
    c = np.clip(rows["clear"], 0.0, 1.0)
    order = np.argsort(-c, axis=1, kind="stable")
    c = np.take_along_axis(c, order, axis=1)
    c_next = np.concatenate([c[:, 1:], np.zeros((m, 1))], axis=1)
    take = {name: np.take_along_axis(rows[name], order, axis=1) for name in ("dm", "reach", "strong")}
    return Parts(dm=take["dm"], reach=take["reach"], strong=take["strong"],
                 clear_step=c - c_next, steps_per_tau=float(step_min))


def night_chances(parts: Parts, settings: dict) -> np.ndarray:
    """The chance of a sighting during the outing window per night for ``settings``.

    The same formula as chance.compute_grid and chance.p_display_seen, on the kept parts.
    """
    q0, q1 = settings["display_quiet"], settings["display_active"]
    moon = 10.0 ** (-0.4 * settings["moon_beta"] * parts.dm)
    d = np.clip(moon * (q0 * parts.reach + (q1 - q0) * parts.strong), 0.0, 1.0 - 1e-12)
    cum = np.cumsum(np.log1p(-d), axis=1) * (parts.steps_per_tau / settings["decorrelation_min"])
    return np.sum(parts.clear_step * -np.expm1(cum), axis=1)


def _log_likelihood(p, y):
    p = np.clip(p, _EPS, 1 - _EPS)
    return float(np.sum(y * np.log(p) + (1 - y) * np.log1p(-p)))


def _to_settings(x, held):
    active, share, beta = x
    return {**held, "display_active": active, "display_quiet": share * active, "moon_beta": beta}


def fit_settings(parts: Parts, y, current: dict, guess: dict | None = None) -> dict:
    """Maximum-likelihood display_quiet, display_active and moon_beta (L-BFGS-B, scipy).

    Started from the current settings and from a middle point, the better kept; with
    ``guess`` (a fit already made, as for bootstrap resamples) from that alone.
    """
    from scipy.optimize import minimize

    y = np.asarray(y, float)
    held = {k: current[k] for k in ("decorrelation_min",)}
    bounds = [BOUNDS["display_active"], BOUNDS["quiet_share"], BOUNDS["moon_beta"]]
    start_share = current["display_quiet"] / max(current["display_active"], _EPS)
    best = None
    starts = ((current["display_active"], start_share, current["moon_beta"]), (0.5, 0.5, 1.0))
    if guess is not None:
        starts = ((guess["display_active"],
                   guess["display_quiet"] / max(guess["display_active"], _EPS), guess["moon_beta"]),)
    for x0 in starts:
        x0 = [min(max(v, lo), hi) for v, (lo, hi) in zip(x0, bounds, strict=True)]
        res = minimize(lambda x: -_log_likelihood(night_chances(parts, _to_settings(x, held)), y),
                       x0, method="L-BFGS-B", bounds=bounds)
        if best is None or res.fun < best.fun:
            best = res
    return {k: float(v) for k, v in _to_settings(best.x, held).items() if k in FITTED}


def _logit(p):
    p = np.clip(np.asarray(p, float), 1e-6, 1 - 1e-6)
    return np.log(p) - np.log1p(-p)


def logistic_chances(p, coef) -> np.ndarray:
    """P' = 1 / (1 + exp(−(a + b · logit P)))."""
    a, b = coef
    return 1.0 / (1.0 + np.exp(-(a + b * _logit(p))))


def fit_logistic(p, y) -> tuple[float, float]:
    """Maximum-likelihood (a, b) of the logistic recalibration (Cox 1958)."""
    from scipy.optimize import minimize

    y = np.asarray(y, float)
    res = minimize(lambda c: -_log_likelihood(logistic_chances(p, c), y), [0.0, 1.0],
                   method="L-BFGS-B", bounds=[(-10, 10), (0.0, 10)])
    return float(res.x[0]), float(res.x[1])


def night_folds(nights, folds=FOLDS) -> np.ndarray:
    """Fold number per outcome: whole nights go to one fold, in date order round-robin."""
    unique = sorted(set(nights))
    where = {n: i % folds for i, n in enumerate(unique)}
    return np.array([where[n] for n in nights], int)


def _subset(parts: Parts, idx) -> Parts:
    return Parts(dm=parts.dm[idx], reach=parts.reach[idx], strong=parts.strong[idx],
                 clear_step=parts.clear_step[idx], steps_per_tau=parts.steps_per_tau)


def _bootstrap(fit, nights, rng, n_boot):
    """Refit on nights resampled with replacement; list of results."""
    nights = np.asarray(nights)
    unique = np.unique(nights)
    members = {n: np.flatnonzero(nights == n) for n in unique}
    out = []
    for _ in range(n_boot):
        pick = rng.choice(unique, size=unique.size, replace=True)
        idx = np.concatenate([members[n] for n in pick])
        out.append(fit(idx))
    return out


def calibrate(y, nights, issued, factors, step_min, current: dict, n_boot=BOOTSTRAP,
              folds=FOLDS, seed=0) -> dict:
    """Fit the settings (or the logistic fallback) with bootstrap intervals and CV Brier scores.

    Parameters
    ----------
    y : array (M,) of 0/1
        Logged outcomes (a sighting or not).
    nights : list of str (M,)
        The night of each outcome (cross-validation and bootstrap keep nights whole).
    issued : array (M,)
        The chance issued for each outcome.
    factors : list of dict or None (M,)
        The kept parts of each issued chance (archive.factors_of).
    step_min : float
    current : dict
        The workspace's chance settings now.

    Returns
    -------
    dict (JSON-ready) with ``method`` ("settings" or "logistic"), ``reason``, ``outcomes``,
    ``settings`` rows {name, current, fitted, low, high}, ``logistic`` {a, b, a_low ...},
    ``cv`` {folds, brier_current, brier_fitted, nights}.
    """
    y = np.asarray(y, float)
    issued = np.asarray(issued, float)
    nights = list(nights)
    rng = np.random.default_rng(seed)
    n = y.size
    sightings = int(y.sum())
    with_parts = [i for i, f in enumerate(factors) if f is not None and len(f["p_clear"])]
    out = {"outcomes": n, "sightings": sightings, "nights": len(set(nights)),
           "bootstrap": n_boot, "folds": folds}
    if n < MIN_LOGISTIC_OUTCOMES or sightings == 0 or sightings == n:
        out.update(method=None, reason=(
            f"{n} outcomes with {sightings} sightings: at least {MIN_LOGISTIC_OUTCOMES}, with "
            "both sightings and blank nights, are needed for any fit"))
        return out
    use_model = (len(with_parts) == n and n >= MIN_MODEL_OUTCOMES
                 and min(sightings, n - sightings) >= MIN_MODEL_EACH)
    fold = night_folds(nights, folds)
    if use_model:
        parts = prepare([factors[i] for i in range(n)], step_min)
        cur = {k: float(current[k]) for k in FITTED + ("decorrelation_min",)}

        def fit(idx, guess=None):
            return fit_settings(_subset(parts, idx), y[idx], cur, guess)

        fitted = fit(np.arange(n))
        boot = _bootstrap(lambda idx: fit(idx, fitted), nights, rng, n_boot)
        rows = []
        for name in FITTED:
            values = np.array([b[name] for b in boot])
            rows.append({"name": name, "current": cur[name], "fitted": fitted[name],
                         "low": float(np.percentile(values, 2.5)),
                         "high": float(np.percentile(values, 97.5))})
        cv_cur, cv_fit = [], []
        for k in range(folds):
            test, train = np.flatnonzero(fold == k), np.flatnonzero(fold != k)
            if not test.size or not train.size:
                continue
            f = fit(train)
            cv_fit.append((night_chances(_subset(parts, test), {**cur, **f}) - y[test]) ** 2)
            cv_cur.append((night_chances(_subset(parts, test), cur) - y[test]) ** 2)
        out.update(method="settings", settings=rows, reason=(
            f"{n} outcomes ({sightings} sightings) with the parts of each chance kept: the "
            "settings themselves were fitted"),
            held={k: float(current[k]) for k in HELD})
    else:
        def fit(idx):
            return fit_logistic(issued[idx], y[idx])

        a, b = fit(np.arange(n))
        boot = np.array(_bootstrap(fit, nights, rng, n_boot))
        cv_cur, cv_fit = [], []
        for k in range(folds):
            test, train = np.flatnonzero(fold == k), np.flatnonzero(fold != k)
            if not test.size or not train.size:
                continue
            coef = fit(train)
            cv_fit.append((logistic_chances(issued[test], coef) - y[test]) ** 2)
            cv_cur.append((issued[test] - y[test]) ** 2)
        why = ("some chances were kept without their parts" if len(with_parts) < n else
               f"fewer than {MIN_MODEL_OUTCOMES} outcomes or {MIN_MODEL_EACH} of each kind")
        out.update(method="logistic", reason=(
            f"{n} outcomes ({sightings} sightings); {why}: a logistic recalibration of the "
            "issued chance was fitted instead of the settings"),
            logistic={"a": a, "b": b,
                      "a_low": float(np.percentile(boot[:, 0], 2.5)),
                      "a_high": float(np.percentile(boot[:, 0], 97.5)),
                      "b_low": float(np.percentile(boot[:, 1], 2.5)),
                      "b_high": float(np.percentile(boot[:, 1], 97.5))})
    cur_all = np.concatenate(cv_cur) if cv_cur else np.array([])
    fit_all = np.concatenate(cv_fit) if cv_fit else np.array([])
    out["cv"] = {
        "folds": len(cv_cur),
        "brier_current": float(cur_all.mean()) if cur_all.size else None,
        "brier_fitted": float(fit_all.mean()) if fit_all.size else None,
    }
    return out


def suggestion_toml(result: dict, operator: str, made_at: str, span: str) -> str:
    """The suggested [chance] block, with its evidence as comments, for the operator to review."""
    lines = [
        f"# Suggested [chance] settings for {operator}, made {made_at} by `auroraplan calibrate`",
        f"# from {result['outcomes']} logged outcomes ({result['sightings']} sightings, "
        f"{result['nights']} nights, {span}).",
        "# Review them, then copy the lines you accept into operator.toml yourself;",
        "# this file is not read by auroraplan.",
        f"# Method: {result['reason']}.",
    ]
    cv = result.get("cv") or {}
    if cv.get("brier_current") is not None:
        lines.append(f"# Brier score on held-out nights ({cv['folds']} folds by night): current "
                     f"{cv['brier_current']:.4f}, fitted {cv['brier_fitted']:.4f} (lower is better).")
    if result.get("method") == "settings":
        lines.append("#   setting          current   fitted   95 % interval (bootstrap over nights)")
        for r in result["settings"]:
            lines.append(f"#   {r['name']:<16} {r['current']:>7.3f}  {r['fitted']:>7.3f}   "
                         f"{r['low']:.3f} to {r['high']:.3f}")
        lines += ["", "[chance]"]
        lines += [f"{r['name']} = {_round(r['fitted'])}" for r in result["settings"]]
    elif result.get("method") == "logistic":
        lg = result["logistic"]
        lines += [
            "# The model's own settings were not fitted. A recalibrated chance would be",
            f"#   P' = 1 / (1 + exp(-({lg['a']:.3f} + {lg['b']:.3f} * logit(P))))",
            f"#   a: 95 % interval {lg['a_low']:.3f} to {lg['a_high']:.3f}; "
            f"b: {lg['b_low']:.3f} to {lg['b_high']:.3f}",
            "# b below 1 means the chances have been too confident; a below 0 that they have",
            "# been too high. Log more outcomes to fit the settings themselves.",
            "", "[chance]",
        ]
    return "\n".join(lines) + "\n"


def _round(x: float) -> str:
    return f"{x:.3f}".rstrip("0").rstrip(".") if math.isfinite(x) else "nan"
