"""The chance model: each factor moves the chance the way the trade expects."""

import datetime as dt
from pathlib import Path

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from auroraplan import chance
from auroraplan.report import best_starts

DEMO = Path(__file__).resolve().parents[1] / "demo_sites"


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


def seen(display, clear, step=10.0, tau=60.0):
    return chance.p_display_seen(np.asarray(display, float), np.asarray(clear, float), step, tau)


def test_clear_night_counts_one_trial_per_decorrelation_time():
    # Worked by hand: six 10-minute steps at 0.3 with tau = 60 min are one
    # trial at 0.3; two hours at 0.5 are two trials, 1 - 0.5**2 = 0.75.
    assert abs(seen(np.full(6, 0.3), np.ones(6)) - 0.3) < 1e-12
    assert abs(seen(np.full(12, 0.5), np.ones(12)) - 0.75) < 1e-12


def test_cloud_is_one_weather_state_through_the_night():
    # Worked by hand: with P(clear) 0.5 in both of two one-hour trials at
    # 0.5, the night is clear with 0.5 and then seen with 0.75: 0.375 (not
    # the 0.4375 that independent hours would give).
    assert abs(seen([0.5, 0.5], [0.5, 0.5], 60.0, 60.0) - 0.375) < 1e-12
    # Constant cloud scales the clear-night chance.
    assert abs(seen(np.full(12, 0.5), np.full(12, 0.4)) - 0.4 * 0.75) < 1e-12


def test_no_display_or_no_clear_sky_gives_zero():
    assert seen(np.zeros(30), np.ones(30)) == 0.0
    assert seen(np.full(30, 0.5), np.zeros(30)) == 0.0


unit = st.floats(0.0, 1.0)


@settings(max_examples=80)
@given(st.lists(st.tuples(unit, unit, unit), min_size=1, max_size=24), st.integers(0, 23), unit)
def test_more_cloud_never_raises_the_night_chance(rows, at, less):
    d, c, _ = (np.array(v) for v in zip(*rows, strict=True))
    cloudier = c.copy()
    cloudier[at % len(c)] *= less
    assert seen(d, cloudier) <= seen(d, c) + 1e-12


@settings(max_examples=80)
@given(st.lists(st.tuples(unit, unit, unit), min_size=1, max_size=24), st.integers(0, 23))
def test_more_display_never_lowers_the_night_chance(rows, at):
    d, c, more = (np.array(v) for v in zip(*rows, strict=True))
    stronger = d.copy()
    i = at % len(d)
    stronger[i] = max(d[i], more[i])
    assert seen(stronger, c) >= seen(d, c) - 1e-12


@settings(max_examples=50)
@given(st.lists(st.floats(0.0, 1.0), min_size=1, max_size=40))
def test_clear_night_chance_is_at_least_the_best_hour(values):
    d = np.array(values)
    p = seen(d, np.ones_like(d), 60.0, 60.0)
    assert d.max() - 1e-9 <= p <= 1.0


def test_display_probability_rises_with_activity():
    quiet = chance.display_probability(1.0, 0.0)
    active = chance.display_probability(1.0, 1.0)
    assert quiet == chance.ChanceSettings().display_quiet == 0.3
    assert active == chance.ChanceSettings().display_active == 0.8
    assert chance.display_probability(0.0, 0.0) == 0.0


def test_best_starts_prefers_the_run_of_good_nights():
    dates = [dt.date(2027, 1, 1) + dt.timedelta(days=i) for i in range(20)]
    c = np.full(20, 0.05)
    c[10:15] = 0.4
    best = best_starts(dates, c, 5, count=3)
    assert best[0]["start"] == "2027-01-11"
    # 1 - 0.6**5 worked by hand
    assert abs(best[0]["chance_any"] - (1 - 0.6**5)) < 1e-3
    starts = [b["start"] for b in best]
    assert len(set(starts)) == 3




@settings(max_examples=100)
@given(st.floats(0.5, 79.5), st.floats(0.5, 79.5), st.floats(0.0, 179.0), st.floats(0.0, 179.0),
       st.floats(19.0, 22.0))
def test_a_brighter_or_higher_moon_never_raises_the_moon_factor(alt1, alt2, phase1, phase2, dark):
    # Aurora overhead; the moon's brightness from Krisciunas & Schaefer (1991).
    # The moon stays more than 10 degrees from the aurora: inside 10 degrees the
    # paper's scattering function switches to another form (their eq. 21) and
    # is not continuous, so "higher" is not "brighter" across that seam.
    from auroraplan.sky import moonlit_sky_mag

    low, high = sorted((alt1, alt2))
    fuller, thinner = sorted((phase1, phase2))  # smaller phase angle = fuller moon

    def factor(moon_alt, phase):
        sky = moonlit_sky_mag(dark, moon_alt, 180.0, 90.0, 0.0, phase)
        return chance.moon_factor(dark, sky)

    assert factor(high, thinner) <= factor(low, thinner) + 1e-12
    assert factor(low, fuller) <= factor(low, thinner) + 1e-12
    assert abs(factor(-5.0, fuller) - 1.0) < 1e-12  # a moon below the horizon adds nothing


# --- activity never falls as Kp rises -------------------------------------------------------


def _site_grid(when):
    """Sites every degree of magnetic latitude 55-80, both hemispheres, three meridians."""
    from auroraplan import magnetic

    mlat = np.arange(55.0, 80.01, 1.0)
    mlon = np.array([-100.0, 0.0, 105.0])
    grid_mlat, grid_mlon = np.meshgrid(mlat, mlon, indexing="ij")
    lat, lon = [], []
    for sign in (1.0, -1.0):
        la, lo = magnetic.aacgm_to_geo(sign * grid_mlat.ravel(), grid_mlon.ravel(), 0.0, when,
                                       refine=1)
        lat.append(la)
        lon.append(lo)
    return np.concatenate(lat), np.concatenate(lon)


def test_activity_factor_never_falls_as_kp_rises_below_the_polar_cap():
    # Invariant (Feldstein & Starkov 1967: the oval expands equatorward with activity):
    # for a sub-auroral or auroral-zone site (|MLAT| 55-72) a stronger forecast never
    # lowers the display chance, at every MLT column, in both hemispheres. Before the
    # Kp-AL dip was held (Starkov 1994b cubic falls from 18 to 16.6 nT up to Kp 0.23),
    # about one site in four near 63 degrees lost the band at Kp 0.1-0.2.
    from auroraplan import view

    when = dt.datetime(2027, 1, 12)
    lat, lon = _site_grid(when)
    table = view.kp_needed_table(lat, lon, 0.0, None, when=when)
    zone = (np.abs(table.mlat) >= 55.0) & (np.abs(table.mlat) <= 72.0)
    assert zone.sum() >= 100
    assert np.isinf(table.kp_lost[zone]).all()
    need, lost = table.kp_horizon[zone], table.kp_lost[zone]
    factors = []
    for kp_mean in np.arange(0.0, 9.01, 0.25):
        def p_at_least(k, kp_mean=kp_mean):
            return chance.p_aurora_from_forecast(k, np.full(k.shape[1], kp_mean),
                                                 np.full(k.shape[1], 0.5), 0.5)
        factors.append(chance.activity_factor(p_at_least, need, lost))
    factors = np.stack(factors)
    assert np.all(np.diff(factors, axis=0) >= -1e-12)
    # and it rises where the need lies inside the ladder
    assert (factors[-1] > factors[0] + 0.3).mean() > 0.5


def test_a_band_is_lost_only_when_it_has_passed_out_of_sight():
    # Wherever the table says the band is lost (polar-cap sites only), just below that Kp it
    # is visible and just above it the band is out of view with its poleward edge below
    # everything the site can see; sites equatorward of 72 degrees never lose it.
    from auroraplan import oval, view

    when = dt.datetime(2027, 1, 12)
    lat, lon = _site_grid(when)
    table = view.kp_needed_table(lat, lon, 0.0, None, when=when)
    rows, cols = np.nonzero(np.isfinite(table.kp_lost))
    assert rows.size and np.all(np.abs(table.mlat[rows]) > 72.0)
    pick = np.linspace(0, rows.size - 1, min(40, rows.size)).astype(int)
    for r, c in zip(rows[pick], cols[pick], strict=True):
        sub = view.kp_needed_table([lat[r]], [lon[r]], 0.0, None, when=when)
        lost, mlt = table.kp_lost[r, c], table.mlt_h[c]
        before = view.sightline(sub, max(lost - 0.02, 0.0), [[mlt]])
        after = view.sightline(sub, min(lost + 0.02, 9.0), [[mlt]])
        assert before["visible"][0, 0] and not after["visible"][0, 0]
        poleward = oval.boundaries(min(lost + 0.02, 9.0), mlt, table.model)["poleward"]
        assert poleward < sub.clearance.lowest_visible_deg[0]


def test_no_start_is_offered_for_a_stay_without_a_dark_night():
    # Bright summer nights (no darkness in the outing hours) then the first dark nights:
    # only starts whose stay reaches a dark night with some chance are offered.
    dates = [dt.date(2027, 7, 1) + dt.timedelta(days=i) for i in range(20)]
    c = np.zeros(20)
    c[15:] = 0.2
    dark = np.arange(20) >= 15
    best = best_starts(dates, -0.0 * c, 5, count=10, dark_night=dark)
    assert best == []  # dark nights but no chance at all: nothing to recommend
    best = best_starts(dates, c, 5, count=10, dark_night=dark)
    assert best and all(dt.date.fromisoformat(b["start"]) >= dates[11] for b in best)
    assert all(b["expected_nights"] > 0 for b in best)


def test_json_numbers_never_carry_a_minus_zero():
    import math

    from auroraplan.report import _num

    for value in (-0.0, -1e-17, -0.0004):
        assert math.copysign(1.0, _num(value, 3)) == 1.0


def test_working_only_the_dark_outing_steps_gives_the_same_nights_as_every_step():
    # Reference: the same grid with the oval, look, moonlit sky and activity worked out
    # at every step. Outside the dark outing hours the chance is 0 whatever they are, so
    # the night summaries are equal and every step that is worked out is equal.
    from auroraplan import nights, report
    from auroraplan.workspace import load_workspace

    ws = load_workspace(DEMO)
    tz = ws.operator.timezone
    times, night = nights.night_times(dt.date(2027, 1, 11), 4, tz, 10)
    clim = report.workspace_climatology(ws)

    def grid(all_steps):
        return chance.compute_grid(ws.sites, times, night, 10, tz=tz, settings=ws.settings,
                                   activity=ws.activity, clouds=ws.clouds, climatology=clim,
                                   all_steps=all_steps)

    fast, full = grid(False), grid(True)
    work = chance.working_steps(full.darkness, 10)
    assert 0.2 < work.mean() < 0.9, "some steps are left out, every dark outing step kept"
    assert np.all(work[full.darkness.any(axis=0)])
    for name in ("chance", "moon", "activity", "kp_needed", "look_azimuth_deg",
                 "look_elevation_deg", "p_reach", "p_strong"):
        np.testing.assert_allclose(getattr(fast, name)[:, work], getattr(full, name)[:, work],
                                   rtol=0, atol=1e-12, err_msg=name)
    np.testing.assert_array_equal(fast.chance, full.chance)
    a, b = (chance.summarise_nights(g, 4, ws.settings.chance) for g in (fast, full))
    for name in ("p_any", "expected_min", "peak"):  # sums in another order: 1e-12
        np.testing.assert_allclose(getattr(a, name), getattr(b, name), rtol=0, atol=1e-12,
                                   err_msg=name)
    for name in ("window_start", "window_end", "limiting"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
    assert np.isnan(fast.kp_needed[:, ~work]).all()


def test_working_steps_reach_an_hour_around_the_dark_outing_steps():
    darkness = np.zeros((2, 40))
    darkness[1, 20:23] = 1.0
    work = chance.working_steps(darkness, 10)
    assert np.flatnonzero(work).tolist() == list(range(14, 29))
    assert not chance.working_steps(np.zeros((2, 5)), 10).any()


def test_a_large_kp_needed_table_is_kept_in_the_user_cache_and_equal_to_a_fresh_one(
        tmp_path, monkeypatch):
    # Reference: view.kp_needed_table computed afresh for the same sites and settings.
    import dataclasses

    from auroraplan import view
    from auroraplan.settings import Settings
    from auroraplan.workspace import Site

    monkeypatch.setenv("AURORAPLAN_CACHE", str(tmp_path / "cache"))
    monkeypatch.setattr(chance, "KEEP_TABLES_FROM_SITES", 20)
    rng = np.random.default_rng(4)
    ridge = np.array([[0.0, 8.0], [90.0, 1.0], [270.0, 1.0], [360.0, 8.0]])
    sites = [Site(name=f"s{i}", lat=float(rng.uniform(66, 71)), lon=float(rng.uniform(14, 24)),
                  height_m=float(rng.uniform(0, 400)), horizon=ridge if i % 3 == 0 else None)
             for i in range(30)]
    viewing = Settings().viewing
    when = np.datetime64("2027-01-12T23:00", "s")
    built = []
    real = view.kp_needed_table
    monkeypatch.setattr(view, "kp_needed_table", lambda *a, **k: built.append(1) or real(*a, **k))
    first = chance.kp_table(sites, when, viewing)
    kept = chance.kp_table(sites, when, viewing)
    assert len(built) == 1
    for name in ("kp_horizon", "kp_overhead", "kp_lost", "look_azimuth_deg", "mlat", "mlon"):
        np.testing.assert_array_equal(getattr(kept, name), getattr(first, name), err_msg=name)
    chance.kp_table(sites, when + np.timedelta64(86400, "s"), viewing)  # another night
    chance.kp_table(sites[:-1] + [dataclasses.replace(sites[-1], lat=70.5)], when, viewing)
    higher = dataclasses.replace(viewing, min_elevation_deg=10.0)
    chance.kp_table(sites, when, higher)
    assert len(built) == 4
    assert len(list((tmp_path / "cache" / "kptables").glob("*.pickle"))) == 4
