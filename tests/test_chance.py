"""The chance model: each factor moves the chance the way the trade expects."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from auroraplan import chance
from auroraplan.report import best_starts


def test_moon_factor_is_one_without_moonlight():
    assert chance.moon_factor(21.5, 21.5) == 1.0


def test_full_moonlit_sky_keeps_a_fifth_of_displays():
    # A full moon well up brightens a 21.5 mag/arcsec^2 sky to about 18
    # (Krisciunas & Schaefer 1991 model values, see test_moonlight); with the
    # default beta of 0.5 that leaves 10**(-0.4*0.5*3.5) = 0.20 of displays.
    assert abs(chance.moon_factor(21.5, 18.0) - 10 ** (-0.7)) < 1e-12


@given(st.floats(17.0, 22.0), st.floats(0.0, 4.0), st.floats(0.0, 4.0))
def test_brighter_sky_never_raises_the_moon_factor(dark, dm1, dm2):
    lo, hi = sorted((dm1, dm2))
    assert chance.moon_factor(dark, dark - hi) <= chance.moon_factor(dark, dark - lo)


@given(st.floats(0.0, 9.0), st.floats(0.0, 9.0), st.floats(0.05, 2.0), st.floats(0.0, 9.0))
def test_higher_forecast_kp_never_lowers_p_aurora(k1, k2, sd, needed):
    lo, hi = sorted((k1, k2))
    p = chance.p_aurora_from_forecast(np.array([[needed, needed]]), np.array([lo, hi]), np.array([sd, sd]), 0.5)
    assert p[0, 1] >= p[0, 0] - 1e-12


def test_p_at_least_one_counts_an_hour_as_one_trial():
    # Six 10-minute steps at 0.3 with a 60-minute decorrelation time are one
    # trial at 0.3: 1 - 0.7**(6*10/60) = 0.3 (worked by hand).
    assert abs(chance.p_at_least_one(np.full(6, 0.3), 10.0, 60.0) - 0.3) < 1e-12
    # Two independent hours at 0.5 each: 1 - 0.25 = 0.75.
    assert abs(chance.p_at_least_one(np.full(12, 0.5), 10.0, 60.0) - 0.75) < 1e-12


def test_p_at_least_one_is_zero_without_chance():
    assert chance.p_at_least_one(np.zeros(30), 10.0, 60.0) == 0.0


def test_best_starts_prefers_the_run_of_good_nights():
    dates = [f"d{i}" for i in range(20)]
    import datetime as dt

    dates = [dt.date(2027, 1, 1) + dt.timedelta(days=i) for i in range(20)]
    c = np.full(20, 0.05)
    c[10:15] = 0.4
    best = best_starts(dates, c, 5, count=3)
    assert best[0]["start"] == "2027-01-11"
    # 1 - 0.6**5 worked by hand
    assert abs(best[0]["chance_any"] - (1 - 0.6**5)) < 1e-3
    starts = [b["start"] for b in best]
    assert len(set(starts)) == 3


@settings(max_examples=50)
@given(st.lists(st.floats(0.0, 1.0), min_size=1, max_size=40))
def test_p_at_least_one_is_at_least_the_best_hour(values):
    c = np.array(values)
    per_hour = chance.p_at_least_one(c, 60.0, 60.0)
    assert per_hour >= c.max() - 1e-9
    assert per_hour <= 1.0
