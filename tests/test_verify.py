"""Scores for the chances against outside references: scikit-learn's metrics, the Murphy
(1973) / Stephenson et al. (2008) decomposition identity, and Wilson's interval."""

import numpy as np
import pytest

from auroraplan import verify

sklearn_metrics = pytest.importorskip("sklearn.metrics")
sklearn_calibration = pytest.importorskip("sklearn.calibration")


def _random_pairs(seed, n=500, discrete=False):
    rng = np.random.default_rng(seed)
    p = rng.integers(0, 11, n) / 10 if discrete else rng.random(n)
    o = (rng.random(n) < p**2).astype(int)
    return p, o


@pytest.mark.parametrize("seed", range(5))
def test_brier_score_matches_scikit_learn(seed):
    # scikit-learn brier_score_loss: mean squared difference (Brier 1950).
    p, o = _random_pairs(seed)
    assert verify.brier_score(p, o) == pytest.approx(sklearn_metrics.brier_score_loss(o, p), abs=1e-12)


@pytest.mark.parametrize("seed", range(5))
def test_roc_auc_matches_scikit_learn_with_ties(seed):
    # scikit-learn roc_auc_score; chances rounded to 0.1 so that ties are common.
    p, o = _random_pairs(seed, discrete=True)
    assert verify.roc_auc(p, o) == pytest.approx(sklearn_metrics.roc_auc_score(o, p), abs=1e-12)


@pytest.mark.parametrize("seed", range(5))
def test_reliability_curve_matches_scikit_learn(seed):
    # scikit-learn calibration_curve(strategy="uniform", n_bins=10) drops empty bins;
    # chances on bin edges (0.1, 0.2 ...) test the edge convention too.
    p, o = _random_pairs(seed, discrete=seed % 2 == 0)
    prob_true, prob_pred = sklearn_calibration.calibration_curve(o, p, n_bins=10, strategy="uniform")
    rows = [b for b in verify.reliability_table(p, o) if b.count]
    assert [b.observed for b in rows] == pytest.approx(prob_true, abs=1e-12)
    assert [b.mean_chance for b in rows] == pytest.approx(prob_pred, abs=1e-12)


@pytest.mark.parametrize("seed", range(10))
@pytest.mark.parametrize("discrete", [False, True])
def test_brier_decomposition_identity_on_random_data(seed, discrete):
    # Murphy (1973): BS = REL - RES + UNC when every chance in a bin is the same;
    # Stephenson, Coelho & Jolliffe (2008) eq. 6 adds WBV - WBC for any chances.
    p, o = _random_pairs(seed, n=300)
    if discrete:  # one chance per bin, at its centre
        p = (np.floor(p * 10) + 0.5) / 10
    parts = verify.brier_decomposition(p, o)
    total = (parts.reliability - parts.resolution + parts.uncertainty
             + parts.within_bin_variance - parts.within_bin_covariance)
    assert total == pytest.approx(verify.brier_score(p, o), abs=1e-12)
    assert parts.uncertainty == pytest.approx(o.mean() * (1 - o.mean()), abs=1e-12)
    if discrete:  # one chance per bin: Murphy's three terms alone
        assert parts.within_bin_variance == pytest.approx(0, abs=1e-12)
        assert parts.reliability - parts.resolution + parts.uncertainty == pytest.approx(
            parts.brier, abs=1e-12)


def test_wilson_interval_worked_values():
    # Wilson (1927) score interval; 95 % for 8 of 10 is 0.490-0.943 (Newcombe 1998,
    # Statistics in Medicine 17, 857, table I, method 3: 0.4902-0.9433).
    low, high = verify.wilson_interval(8, 10)
    assert float(low) == pytest.approx(0.4902, abs=1e-4)
    assert float(high) == pytest.approx(0.9433, abs=1e-4)
    # 0 of 10: 0-0.2775 (same table)
    low, high = verify.wilson_interval(0, 10)
    assert float(low) == 0.0
    assert float(high) == pytest.approx(0.2775, abs=1e-4)


def test_over_forecast_shows_in_the_upper_bins():
    # Outcomes drawn with probability chance squared: observed well below issued at
    # high chances, and the Wilson interval excludes the diagonal there.
    rng = np.random.default_rng(7)
    p = rng.random(20000)
    o = (rng.random(p.size) < p**2).astype(int)
    rows = verify.reliability_table(p, o)
    for b in rows[6:]:
        assert b.observed_high < b.mean_chance
        assert b.observed == pytest.approx(np.mean(p[(p > b.low) & (p <= b.high)] ** 2), abs=0.03)


def test_skill_against_a_reference():
    # A perfect forecast has skill 1; the reference itself has skill 0 (Wilks 2011, eq. 8.37).
    p, o = _random_pairs(3)
    ref = np.full(p.size, o.mean())
    assert verify.brier_skill_score(p, o, p) == 0.0
    assert verify.brier_skill_score(o.astype(float), o, ref) == 1.0
    assert verify.brier_skill_score(p, o, ref) == pytest.approx(
        1 - verify.brier_score(p, o) / (o.mean() * (1 - o.mean())), abs=1e-12)


def test_few_outcomes_ask_for_more():
    p = np.array([0.2, 0.7, 0.5])
    o = np.array([0, 1, 0])
    assert verify.outcomes_needed(p, o) >= verify.MIN_OUTCOMES - 3
    big_p, big_o = _random_pairs(1, n=5000)
    assert verify.outcomes_needed(big_p, big_o, np.full(5000, big_o.mean())) == 0


def test_scores_are_json_ready():
    import json

    p, o = _random_pairs(2, n=50)
    out = verify.scores(p, o, np.full(50, 0.2))
    assert json.loads(json.dumps(out))["count"] == 50
    assert out["brier"] == pytest.approx(np.mean((p - o) ** 2), abs=1e-12)


def test_bad_pairs_are_refused():
    with pytest.raises(ValueError):
        verify.brier_score([0.2, 1.2], [0, 1])
    with pytest.raises(ValueError):
        verify.brier_score([0.2], [0, 1])


def test_cloud_scores_by_hand():
    # Worked by hand: model a misses by +10, -20, 0 (MAE 10, bias -10/3) and is nearest on
    # nights 1 and 3 and tied on night 2 (2.5 of 3); model b misses by -20, +20 (MAE 20,
    # bias 0), tied on night 2 (0.5 of 2) and has no forecast on night 3.
    got = verify.cloud_scores([20, 80, 50], [{"a": 30, "b": 0}, {"a": 60, "b": 100}, {"a": 50}])
    assert got["a"] == {"count": 3, "mae_pct": pytest.approx(10.0),
                        "bias_pct": pytest.approx(-10 / 3), "closest_share": pytest.approx(2.5 / 3)}
    assert got["b"] == {"count": 2, "mae_pct": pytest.approx(20.0), "bias_pct": pytest.approx(0.0),
                        "closest_share": pytest.approx(0.25)}
    assert verify.cloud_scores([], []) == {}
