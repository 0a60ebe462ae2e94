"""The week worked out a few nights at a time (chance.compute_nights) says what one grid
over the whole week says: the same night summaries, look, warnings, cloud note, archive
rows and plan. The reference is the one-grid computation of the same code
(chance.compute_grid over every step at once), which the rest of the suite checks against
outside sources."""

from __future__ import annotations

import dataclasses
import datetime as dt
import shutil
from pathlib import Path

import numpy as np
import pytest

from auroraplan import archive, chance, report, weather
from auroraplan.workspace import load_workspace

DEMO = Path(__file__).resolve().parent.parent / "demo_sites"
START = dt.date(2027, 1, 11)
NOW = dt.datetime(2027, 1, 10, 12, 0, tzinfo=dt.UTC)


@pytest.fixture(scope="module")
def demo():
    return load_workspace(DEMO)


@pytest.fixture(scope="module")
def narrow_hours(tmp_path_factory):
    """The demo with the operator's own outing hours, early enough that the best time at
    some sites falls after them (the outside-the-hours warnings)."""
    ws = tmp_path_factory.mktemp("hours") / "ws"
    shutil.copytree(DEMO, ws, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
    text = (ws / "operator.toml").read_text(encoding="utf-8")
    (ws / "operator.toml").write_text(
        text + '\n[planner]\nouting_from = "17:00"\nouting_until = "21:00"\n', encoding="utf-8")
    return load_workspace(ws)


def _both(ws, nights, site_steps):
    """(whole grid, its summary) and (overview, summary, archive parts) night by night."""
    climatology = report.workspace_climatology(ws)
    grid, summary = report._grid_for_nights(ws, ws.sites, START, nights, 10, climatology)
    parts = []
    times, night_index = grid.times_utc, grid.night_index
    names = [s.name for s in ws.sites]

    def keep(g, s, first):
        parts.append(archive.issued_part(
            g, s, names, [START + dt.timedelta(days=first + d) for d in range(s.p_any.shape[1])],
            ws.settings.chance.decorrelation_min))

    over, by_nights = chance.compute_nights(
        ws.sites, times, night_index, 10, nights, tz=ws.operator.timezone,
        settings=ws.settings, activity=ws.activity, climatology=climatology,
        cloud=lambda at: report.cloud_for(ws, ws.sites, at), each=keep, site_steps=site_steps)
    return grid, summary, over, by_nights, parts


def _summaries_equal(got, want):
    for f in dataclasses.fields(chance.NightSummary):
        a, b = getattr(want, f.name), getattr(got, f.name)
        if a.dtype.kind == "f":
            np.testing.assert_allclose(b, a, rtol=0, atol=1e-12, err_msg=f.name)
        else:
            np.testing.assert_array_equal(b, a, err_msg=f.name)


@pytest.mark.parametrize("nights_per_run", [1, 3])
@pytest.mark.parametrize("which", ["demo", "narrow_hours"])
def test_night_by_night_equals_one_grid(which, nights_per_run, request):
    ws = request.getfixturevalue(which)
    nights = 7
    grid, summary, over, by_nights, parts = _both(ws, nights,
                                                  nights_per_run * 144 * len(ws.sites))
    assert len(parts) == -(-nights // nights_per_run)
    _summaries_equal(by_nights, summary)
    rows = np.arange(len(ws.sites))[:, None]
    step = np.where(summary.peak_step >= 0, summary.peak_step, 0)
    for key in ("look_azimuth_deg", "look_elevation_deg", "overhead"):
        got = getattr(over.look, key)
        want = getattr(grid, key)[rows, step]
        # the same formulas on arrays of another length: equal to rounding (1e-9 degree)
        np.testing.assert_allclose(got[summary.peak_step >= 0].astype(float),
                                   want[summary.peak_step >= 0].astype(float), rtol=0,
                                   atol=1e-9, err_msg=key)
    np.testing.assert_array_equal(over.kind, grid.kind)
    np.testing.assert_array_equal(over.outing, grid.outing)
    np.testing.assert_array_equal(over.darkness[0], grid.darkness.max(axis=0))
    np.testing.assert_array_equal(over.dark_sky[0], grid.dark_sky.any(axis=0))
    np.testing.assert_allclose(over.sun_alt[0], grid.sun_alt.min(axis=0), rtol=0, atol=1e-9)
    assert over.outing_hours == grid.outing_hours
    assert over.warnings == grid.warnings
    assert over.cloud_note == grid.cloud_note and over.cloud_models == grid.cloud_models
    if which == "narrow_hours":
        assert any("falls outside the outing hours" in w for w in over.warnings)
    whole = archive.issued_part(grid, summary, [s.name for s in ws.sites],
                                [START + dt.timedelta(days=d) for d in range(nights)],
                                ws.settings.chance.decorrelation_min)
    got = [row for part in parts for row in part.rows]
    assert [r[:4] for r in got] == [r[:4] for r in whole.rows]
    assert [r[4] for r in got] == pytest.approx([r[4] for r in whole.rows], abs=1e-12)
    for a, b in zip(got, whole.rows, strict=True):
        for key, value in archive.factors_of(a[5]).items():  # float32 as kept
            np.testing.assert_allclose(value, archive.factors_of(b[5])[key], rtol=1e-6,
                                       atol=1e-6, err_msg=key)
        assert a[7] == b[7]  # each model's cloud: the same bytes
        hours_a, hours_b = archive.hours_of(a[6]), archive.hours_of(b[6])
        assert [(h["hour_start"], h["kind"]) for h in hours_a] == \
            [(h["hour_start"], h["kind"]) for h in hours_b]
        assert [h["chance"] for h in hours_a] == pytest.approx(
            [h["chance"] for h in hours_b], abs=1e-12)


def test_the_week_plan_is_the_same_night_by_night_as_in_one_grid(demo, monkeypatch):
    one = report.week_report(demo, START, 7, now=NOW).to_json()
    monkeypatch.setattr(chance, "NIGHTS_SITE_STEPS", 1)
    by_night = report.week_report(demo, START, 7, now=NOW).to_json()
    for result in (one, by_night):
        result["solver"].pop("seconds")
    assert by_night == one


def test_cloud_at_sites_is_cloud_at_site_by_site():
    # The vectorised form against the one-site rule it stands for (weather.cloud_at), on
    # hourly, three-hourly and gapped forecasts, empty ones and times beyond the ends.
    rng = np.random.default_rng(4)
    times = np.arange(0, 40 * 3600, 600, dtype=np.int64) + 1_800_000_000
    forecasts = []
    for i in range(12):
        if i % 5 == 4:
            forecasts.append(None if i % 2 else (np.array([], np.int64), np.array([])))
            continue
        step = (3600, 10800, 3600 * 7)[i % 3]
        start = times[0] + int(rng.integers(-5, 20)) * 3600
        steps = start + step * np.arange(int(rng.integers(1, 12)), dtype=np.int64)
        forecasts.append((steps, rng.uniform(0, 100, steps.size)))
    got = weather.cloud_at_sites(times, forecasts, max_gap_h=6.0)
    for i, f in enumerate(forecasts):
        want = (np.full(times.size, np.nan) if f is None
                else weather.cloud_at(times, f[0], f[1], max_gap_h=6.0))
        np.testing.assert_array_equal(got[i], want)
    # every site on one time axis (the usual hourly file) takes the shared path
    steps = times[0] - 7200 + 3600 * np.arange(30, dtype=np.int64)
    shared = [(steps, rng.uniform(0, 100, steps.size)) for _ in range(5)]
    got = weather.cloud_at_sites(times, shared, max_gap_h=6.0)
    for i, f in enumerate(shared):
        np.testing.assert_array_equal(got[i], weather.cloud_at(times, *f, max_gap_h=6.0))


def test_cloud_tallies_of_two_halves_join_into_the_whole(demo):
    from auroraplan import nights

    times, _ = nights.night_times(START, 4, demo.operator.timezone, 10)
    whole = report.cloud_for(demo, demo.sites, times)
    half = len(times) // 2
    first = report.cloud_for(demo, demo.sites, times[:half])
    second = report.cloud_for(demo, demo.sites, times[half:])
    joined = first.tally.join(second.tally)
    assert joined.warnings(demo.sites) == whole.warnings
    assert joined.note() == whole.note
    assert weather.sources_used(whole.source_code) == set(np.unique(
        whole.source[whole.source_code != weather.NO_SOURCE]).tolist())


def test_night_runs_hold_whole_nights_within_the_site_steps():
    night_index = np.repeat(np.arange(5), [144, 138, 150, 144, 144])
    # 144 + 138 and 150 + 144 fit in 300 steps, the last night stands alone
    assert chance.night_runs(night_index, 10, 300 * 10) == [(0, 2), (2, 4), (4, 5)]
    # a night larger than the limit is one run by itself
    assert chance.night_runs(night_index, 10_000, 10) == [(d, d + 1) for d in range(5)]


@pytest.mark.parametrize("which", ["demo", "narrow_hours"])
def test_night_summaries_over_the_steps_a_window_reaches_equal_the_whole_night(
        which, request, monkeypatch):
    # The reference: every step of every night (window_steps giving the whole night).
    ws = request.getfixturevalue(which)
    grid, fast = report._grid_for_nights(ws, ws.sites, START, 7, 10,
                                         report.workspace_climatology(ws))
    reached = [chance.window_steps((grid.darkness[:, grid.night_index == d] > 0).any(axis=0),
                                   grid.chance[:, grid.night_index == d], 10, ws.settings.chance)
               for d in range(7)]
    assert any(r.stop - r.start < (grid.night_index == d).sum()
               for d, r in enumerate(reached))  # the fast path is taken
    # faint chances at two sites, where an all-light block ties with the best one
    faint = dataclasses.replace(grid, chance=grid.chance.copy())
    faint.chance[:2] *= 1e-13
    fast_faint = chance.summarise_nights(faint, 7, ws.settings.chance)
    # a few dark steps a night, fewer than a window: windows reach past the dark ones
    darkness = np.zeros_like(grid.darkness)
    for d in range(7):
        first = np.flatnonzero(grid.night_index == d)[0] + 60 + 5 * d
        darkness[:, first:first + 2 + d % 3] = 1.0
    rng = np.random.default_rng(7)
    short = dataclasses.replace(grid, darkness=darkness, chance=darkness * rng.uniform(
        0, 0.2, darkness.shape))
    fast_short = chance.summarise_nights(short, 7, ws.settings.chance)
    monkeypatch.setattr(chance, "window_steps", lambda dark, *_: slice(0, dark.size))
    _summaries_equal(fast, chance.summarise_nights(grid, 7, ws.settings.chance))
    _summaries_equal(fast_faint, chance.summarise_nights(faint, 7, ws.settings.chance))
    _summaries_equal(fast_short, chance.summarise_nights(short, 7, ws.settings.chance))
