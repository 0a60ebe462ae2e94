"""Fitting the chance settings: known settings are recovered inside their intervals, a
known over-forecast is removed, and the logistic fallback is used when it should be."""

import numpy as np
import pytest

from auroraplan import calibrate

CURRENT = {"display_quiet": 0.3, "display_active": 0.8, "moon_beta": 0.5,
           "decorrelation_min": 120.0, "strong_margin_kp": 2.0}


def simulated_parts(rng, nights=60, sites=5):
    """Invented factor parts for nights × sites (test data): 24-48 dark 10-minute steps,
    half the nights moonlit (0-3 mag brighter), activity and cloud varying by night."""
    factors, names = [], []
    for d in range(nights):
        k = int(rng.integers(24, 49))
        moonlit = rng.random() < 0.5
        kp_level = rng.random()
        cloud = rng.random()
        for _ in range(sites):
            reach = np.clip(kp_level + 0.2 * rng.standard_normal(k), 0, 1)
            strong = reach * np.clip(kp_level ** 2 + 0.1 * rng.standard_normal(k), 0, 1)
            factors.append({
                "sky_brightening_mag": (rng.random(k) * 3.0) if moonlit else np.zeros(k),
                "p_reach": reach, "p_strong": strong,
                "p_clear": np.clip(cloud + 0.2 * rng.standard_normal(k), 0, 1),
            })
            names.append(f"2027-01-{d:02d}")
    return factors, names


def test_the_parts_give_the_same_chance_as_the_step_by_step_formula():
    # chance.p_display_seen on the product of the factors (auroraplan.chance), night by night
    from auroraplan.chance import moon_factor, p_display_seen

    rng = np.random.default_rng(3)
    factors, _ = simulated_parts(rng, nights=4, sites=2)
    parts = calibrate.prepare(factors, 10.0)
    got = calibrate.night_chances(parts, CURRENT)
    for f, p in zip(factors, got, strict=True):
        shown = moon_factor(21.0, 21.0 - f["sky_brightening_mag"], CURRENT["moon_beta"]) * (
            0.3 * f["p_reach"] + 0.5 * f["p_strong"])
        assert p == pytest.approx(p_display_seen(shown, f["p_clear"], 10.0, 120.0), abs=1e-12)


def test_known_settings_are_recovered_inside_their_intervals():
    # Parameter recovery: outcomes simulated from the model with chosen settings; the
    # 95 % bootstrap interval should hold the true value in about 95 % of simulations
    # (few here; benchmarks/bench_calibrate.py runs 100).
    truth = {"display_quiet": 0.2, "display_active": 0.55, "moon_beta": 0.9,
             "decorrelation_min": 120.0}
    inside = {name: 0 for name in calibrate.FITTED}
    sims = 4
    for seed in range(sims):
        rng = np.random.default_rng(100 + seed)
        factors, nights = simulated_parts(rng)
        p = calibrate.night_chances(calibrate.prepare(factors, 10.0), truth)
        y = (rng.random(p.size) < p).astype(float)
        result = calibrate.calibrate(y, nights, p, factors, 10.0, CURRENT, n_boot=40, seed=seed)
        assert result["method"] == "settings"
        for row in result["settings"]:
            inside[row["name"]] += row["low"] <= truth[row["name"]] <= row["high"]
    assert all(count >= sims - 1 for count in inside.values()), inside


def test_an_over_forecast_is_removed():
    # True probability = issued chance squared: the fit lowers the display rates and the
    # held-out Brier score improves.
    rng = np.random.default_rng(7)
    factors, nights = simulated_parts(rng)
    issued = calibrate.night_chances(calibrate.prepare(factors, 10.0), CURRENT)
    y = (rng.random(issued.size) < issued ** 2).astype(float)
    result = calibrate.calibrate(y, nights, issued, factors, 10.0, CURRENT, n_boot=20)
    fitted = {r["name"]: r["fitted"] for r in result["settings"]}
    assert fitted["display_active"] < CURRENT["display_active"]
    assert fitted["display_quiet"] < CURRENT["display_quiet"]
    assert result["cv"]["brier_fitted"] < result["cv"]["brier_current"]


def test_few_outcomes_or_no_parts_use_the_logistic_fallback():
    # Logistic recalibration (Cox 1958): chances twice too high come back near the truth.
    rng = np.random.default_rng(11)
    issued = rng.uniform(0.05, 0.9, 400)
    y = (rng.random(400) < issued / 2).astype(float)
    nights = [f"n{i // 4}" for i in range(400)]
    result = calibrate.calibrate(y, nights, issued, [None] * 400, 10.0, CURRENT, n_boot=30)
    assert result["method"] == "logistic"
    assert "logistic" in result["reason"]
    assert result["cv"]["brier_fitted"] < result["cv"]["brier_current"]
    text = calibrate.suggestion_toml(result, "Test Tours", "2027-03-01T12:00Z", "winter")
    assert "[chance]" in text and "display_quiet =" not in text
    too_few = calibrate.calibrate(y[:5], nights[:5], issued[:5], [None] * 5, 10.0, CURRENT)
    assert too_few["method"] is None


def test_the_suggestion_is_a_chance_block_operator_toml_accepts():
    import tomllib

    rng = np.random.default_rng(5)
    factors, nights = simulated_parts(rng, nights=30)
    issued = calibrate.night_chances(calibrate.prepare(factors, 10.0), CURRENT)
    y = (rng.random(issued.size) < issued).astype(float)
    result = calibrate.calibrate(y, nights, issued, factors, 10.0, CURRENT, n_boot=20)
    block = tomllib.loads(calibrate.suggestion_toml(result, "Test Tours", "now", "winter"))
    assert set(block["chance"]) == set(calibrate.FITTED)
    assert block["chance"]["display_quiet"] <= block["chance"]["display_active"]
