"""Kp from upstream solar wind: the Newell coupling, the flat delay and the blend."""

import dataclasses
from pathlib import Path

import numpy as np
import pytest

from auroraplan import solarwind as sw


def _minutes(start, count, step_min=1):
    return np.datetime64(start, "s") + np.arange(count) * np.timedelta64(step_min * 60, "s")


# --- Newell et al. (2007): dΦ/dt = v^(4/3) B_T^(2/3) sin^(8/3)(θc/2) -------------------------


def test_coupling_scales_as_v_to_four_thirds():
    # Newell et al. (2007), the published formula: doubling v multiplies by 2^(4/3).
    ratio = sw.newell_coupling(800.0, 0.0, -5.0) / sw.newell_coupling(400.0, 0.0, -5.0)
    assert ratio == pytest.approx(2 ** (4 / 3), rel=1e-12)


def test_coupling_scales_as_transverse_field_to_two_thirds():
    # Newell et al. (2007): B_T^(2/3) at a fixed clock angle (due south).
    ratio = sw.newell_coupling(500.0, 0.0, -27.0) / sw.newell_coupling(500.0, 0.0, -1.0)
    assert ratio == pytest.approx(27 ** (2 / 3), rel=1e-12)  # = 9


@pytest.mark.parametrize("by, bz, factor", [
    (0.0, 5.0, 0.0),                     # due north, θc = 0: sin(0) = 0
    (5.0, 0.0, np.sin(np.pi / 4) ** (8 / 3)),   # θc = 90°: 0.5^(4/3) = 0.397
    (-5.0, 0.0, np.sin(np.pi / 4) ** (8 / 3)),  # the sign of By does not matter
    (0.0, -5.0, 1.0),                    # due south, θc = 180°
])
def test_clock_angle_factor_at_0_90_180(by, bz, factor):
    # Newell et al. (2007): sin^(8/3)(θc/2) with θc the GSM clock angle.
    full = 400.0 ** (4 / 3) * 5.0 ** (2 / 3)
    assert sw.newell_coupling(400.0, by, bz) / full == pytest.approx(factor, abs=1e-12)
    assert sw.clock_angle_deg(by, bz) == pytest.approx({0.0: 0, 1.0: 180}.get(factor, 90))


def test_kp_relation_against_hand_computation():
    # Newell et al. (2008), Kp = 0.05 + 2.244e-4 dΦ/dt + 2.844e-6 n^(1/2) v^2, worked by hand:
    # v = 600 km/s, Bz = -10 nT, By = 0, n = 5 cm^-3:
    # dΦ/dt = 600^(4/3) * 10^(2/3) = 5059.7 * 4.6416 = 23485.6
    # Kp = 0.05 + 5.2702 + 2.844e-6 * 2.23607 * 360000 (= 2.2894) = 7.6096
    coupling = sw.newell_coupling(600.0, 0.0, -10.0)
    assert coupling == pytest.approx(23485.6, rel=2e-4)
    kp = sw.kp_from_coupling(coupling, sw.viscous_term(5.0, 600.0))
    assert kp == pytest.approx(7.6096, abs=2e-3)


def test_northward_field_gives_quiet_and_southward_storm():
    # Behaviour of the published relation (Newell et al. 2008): a northward field leaves
    # only the viscous term (near-quiet), a sustained 10 nT southward field at 600 km/s
    # gives storm levels (NOAA G1 starts at Kp 5).
    north = sw.kp_from_coupling(sw.newell_coupling(400.0, 0.0, 5.0), sw.viscous_term(5.0, 400.0))
    south = sw.kp_from_coupling(sw.newell_coupling(600.0, 0.0, -10.0), sw.viscous_term(5.0, 600.0))
    assert north < 2.0 and sw.activity_word(float(north)) == "quiet"
    assert south >= 5.0 and sw.activity_word(float(south)) == "storm"


def test_kp_is_kept_on_the_scale():
    assert sw.kp_from_coupling(1e6, 1e7) == 9.0
    assert sw.kp_from_coupling(0.0, 0.0) == pytest.approx(0.05)


# --- the flat delay (Case & Wild 2012; Cash et al. 2016) ----------------------------------


def test_flat_delay_is_distance_over_speed():
    # Ballistic delay: (1.5e6 km - 10 R_E) / v. At 400 km/s: (1,500,000 - 63,710) / 400 s.
    assert sw.flat_delay_s(400.0, 1.5e6) == pytest.approx((1.5e6 - 63710.0) / 400.0)
    # About an hour at 400 km/s and 35 minutes at 700 km/s (the 30-70 minute range of L1).
    assert 55 < sw.flat_delay_s(400.0, sw.L1_DISTANCE_KM) / 60 < 62
    assert 32 < sw.flat_delay_s(700.0, sw.L1_DISTANCE_KM) / 60 < 36


# --- the estimate ---------------------------------------------------------------------------


def _turning(minutes=180, turn_at=90, speed=650.0, north=5.0, south=-15.0, density=5.0):
    times = _minutes("2027-02-03T18:00", minutes)
    bz = np.where(np.arange(minutes) < turn_at, north, south)
    v = np.full(minutes, speed)
    return times, v, np.full(minutes, density), np.zeros(minutes), bz


def test_estimate_rises_after_a_southward_turning_within_the_delay():
    times, v, n, by, bz = _turning()
    cast = sw.estimate(times, v, n, by, bz)
    delay = np.timedelta64(int(sw.flat_delay_s(650.0, sw.L1_DISTANCE_KM)), "s")
    turn_at_earth = times[90] + delay
    before = cast.kp[cast.times_utc < turn_at_earth]
    after = cast.kp[cast.times_utc >= turn_at_earth + np.timedelta64(60, "m")]
    assert before.max() < 3.0          # quiet while the field is north
    assert after.min() >= 5.0           # storm an hour after the turning arrives
    # The first rise is seen within one estimate step of the turning's arrival.
    rising = cast.times_utc[np.flatnonzero(cast.kp > before.max() + 0.5)[0]]
    assert abs((rising - turn_at_earth) / np.timedelta64(1, "m")) <= cast.settings.step_min
    assert abs((cast.valid_until_utc - (times[-1] + delay)) / np.timedelta64(1, "s")) <= 1
    assert cast.measured_until_utc == times[-1]


def test_estimate_stays_quiet_when_the_field_stays_north():
    times, v, n, by, bz = _turning(south=5.0)
    cast = sw.estimate(times, v, n, by, bz)
    assert cast.kp.max() < 3.0
    assert cast.trend_word == "steady"


def test_trend_reads_rising_after_a_turning():
    times, v, n, by, bz = _turning(minutes=150, turn_at=120)
    cast = sw.estimate(times, v, n, by, bz)
    assert cast.trend_word == "rising" and cast.kp_change_per_h > 0.5


def test_estimate_spread_grows_while_activity_changes():
    times, v, n, by, bz = _turning()
    cast = sw.estimate(times, v, n, by, bz)
    steady = cast.kp_sd[0]
    assert steady == pytest.approx(cast.settings.model_kp_sd)
    assert cast.kp_sd.max() > steady + 0.3


def test_no_measurements_give_no_estimate():
    empty = np.array([], dtype="datetime64[s]")
    assert sw.estimate(empty, [], [], [], []) is None


# --- blending into the forecast -------------------------------------------------------------


def test_blend_uses_the_estimate_while_valid_then_hands_back():
    times, v, n, by, bz = _turning(south=-15.0, turn_at=0)
    cast = sw.estimate(times, v, n, by, bz)
    grid = cast.times_utc[0] + np.arange(0, 8 * 60, 10) * np.timedelta64(60, "s")
    forecast = np.full(grid.shape, 2.0)
    sd = np.full(grid.shape, 1.0)
    kp, kp_sd, covered, weight = sw.blend(grid, forecast, sd, np.ones(grid.shape, bool), cast)
    inside = grid <= cast.valid_until_utc
    assert np.all(weight[inside] == 1.0)
    np.testing.assert_allclose(kp[inside], np.interp(grid[inside].astype("int64"),
                               cast.times_utc.astype("int64"), cast.kp))
    one_hour = cast.valid_until_utc + np.timedelta64(60, "m")
    at = np.flatnonzero(grid >= one_hour)[0]
    age = (grid[at] - cast.valid_until_utc) / np.timedelta64(1, "m")
    assert weight[at] == pytest.approx(np.exp(-age / 60.0))
    # Mixture mean and variance of the two (a two-component mixture, by hand).
    w, now = weight[at], cast.kp[-1]
    assert kp[at] == pytest.approx(w * now + (1 - w) * 2.0, abs=1e-9)
    var = w * cast.kp_sd[-1] ** 2 + (1 - w) * 1.0 + w * (1 - w) * (now - 2.0) ** 2
    assert kp_sd[at] == pytest.approx(np.sqrt(var), abs=1e-9)
    assert weight[-1] == 0.0 and kp[-1] == 2.0   # handed back after a few hours


def test_blend_fills_a_forecast_gap_only_while_the_estimate_speaks():
    times, v, n, by, bz = _turning()
    cast = sw.estimate(times, v, n, by, bz)
    grid = cast.times_utc[0] + np.arange(0, 8 * 60, 10) * np.timedelta64(60, "s")
    nan = np.full(grid.shape, np.nan)
    kp, _, covered, weight = sw.blend(grid, nan, nan, np.zeros(grid.shape, bool), cast)
    assert covered[0] and weight[0] == 1.0
    assert not covered[-1] and np.isnan(kp[-1])


def test_blend_without_an_estimate_changes_nothing():
    grid = _minutes("2027-02-03T18:00", 5, 10)
    kp, sd, covered, weight = sw.blend(grid, np.ones(5), np.ones(5), np.ones(5, bool), None)
    assert np.all(kp == 1) and np.all(weight == 0)


# --- screening gaps and spikes ---------------------------------------------------------------


def test_screen_marks_fill_values_and_impossible_speeds():
    v = [450.0, -9999.9, 5000.0, 420.0, 430.0]
    n = [4.0, 4.0, 4.0, 0.0, np.nan]
    by = [1.0, 1.0, 1.0, 1.0, 1.0]
    bz = [-3.0, -3.0, -3.0, -3.0, -3.0]
    good, reason = sw.screen(v, n, by, bz)
    assert good.tolist() == [True, False, False, False, False]
    assert reason == ["", "gap in speed_km_s", "spike in speed_km_s", "spike in density_cm3",
                      "gap in density_cm3"]


def test_every_setting_is_checked_and_its_default_allowed():
    from auroraplan.checks import setting_fields

    fields = setting_fields(sw.NowcastSettings)
    assert set(fields) == {f.name for f in dataclasses.fields(sw.NowcastSettings)}
    for name, f in fields.items():
        assert f.metadata["check"](f.default) == f.default, name


def test_operator_toml_nowcast_table_reaches_the_estimate(tmp_path):
    # A 180-minute window (the 3-hour Kp interval) from [nowcast] is the one used.
    import shutil

    from auroraplan import report
    from auroraplan.workspace import load_workspace, solar_wind_for

    demo = Path(__file__).resolve().parents[1] / "demo_sites"
    ws_dir = tmp_path / "ws"
    shutil.copytree(demo, ws_dir, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
    with (ws_dir / "operator.toml").open("a", encoding="utf-8") as handle:
        handle.write("\n[nowcast]\naverage_min = 180\nhand_back_min = 30\n")
    ws = load_workspace(ws_dir)
    assert ws.settings.nowcast.average_min == 180 and ws.settings.nowcast.hand_back_min == 30
    cast = report.solar_wind_estimate(solar_wind_for(ws), ws.settings.nowcast)
    default = report.solar_wind_estimate(solar_wind_for(ws))
    assert cast.settings.average_min == 180
    assert cast.latest_kp < default.latest_kp  # the longer window still holds quiet hours



# --- the file -------------------------------------------------------------------------------


def _write(tmp_path, text):
    path = tmp_path / "solarwind.csv"
    path.write_text(text, encoding="utf-8")
    return path


HEADER = "time_utc,by_gsm_nt,bz_gsm_nt,speed_km_s,density_cm3\n"


def test_file_rows_are_sorted_and_gaps_and_spikes_reported(tmp_path):
    from auroraplan.workspace import load_solarwind

    path = _write(tmp_path, HEADER + "2027-02-03T18:02Z,1,-2,450,5\n"
                  "2027-02-03T18:00Z,1,-2,450,5\n"
                  "2027-02-03T18:01Z,1,-9999.9,450,5\n"
                  "2027-02-03T18:03Z,1,-2,,5\n"
                  "2027-02-03T18:04Z,1,-2,99,5\n")
    got = load_solarwind(path)
    assert got.rows == 5
    assert got.times_utc.astype(str).tolist() == ["2027-02-03T18:00:00", "2027-02-03T18:02:00"]
    assert [line.split(": not used ")[1] for line in got.left_out] == [
        "(gap in bz_gsm_nt)", "(gap in speed_km_s)", "(spike in speed_km_s)"]
    assert "line 4" in got.left_out[0]


@pytest.mark.parametrize("row, fragment", [
    ("2027-02-03 six pm,1,-2,450,5", "line 2, time_utc"),
    ("2027-02-03T18:00Z,one,-2,450,5", "line 2, by_gsm_nt: 'one' is not a number"),
    ("2027-02-03T18:00Z,1,-2,inf,5", "line 2, speed_km_s"),
])
def test_a_bad_row_is_one_line_naming_the_row_and_column(tmp_path, row, fragment):
    from auroraplan.errors import InputError
    from auroraplan.workspace import load_solarwind

    with pytest.raises(InputError) as caught:
        load_solarwind(_write(tmp_path, HEADER + row + "\n"))
    assert len(caught.value.problems) == 1
    assert fragment in caught.value.problems[0]


def test_a_repeated_time_is_named_with_both_lines(tmp_path):
    from auroraplan.errors import InputError
    from auroraplan.workspace import load_solarwind

    text = HEADER + "2027-02-03T18:00Z,1,-2,450,5\n2027-02-03T18:00Z,1,-2,450,5\n"
    with pytest.raises(InputError, match="line 3, time_utc: .* also on line 2"):
        load_solarwind(_write(tmp_path, text))


def test_a_pause_in_the_measurements_is_reported(tmp_path):
    from auroraplan.workspace import load_solarwind

    rows = [f"2027-02-03T18:{m:02d}Z,1,-2,450,5" for m in (0, 1, 2, 3, 40, 41)]
    got = load_solarwind(_write(tmp_path, HEADER + "\n".join(rows) + "\n"))
    assert any("no usable measurement from 2027-02-03T18:03:00Z to 2027-02-03T18:40:00Z" in line
               for line in got.left_out)


def test_distance_column_moves_the_arrival(tmp_path):
    from auroraplan.workspace import load_solarwind

    text = ("time_utc,by_gsm_nt,bz_gsm_nt,speed_km_s,density_cm3,distance_km\n"
            "2027-02-03T18:00Z,0,-5,500,5,1200000\n2027-02-03T18:01Z,0,-5,500,5,\n")
    got = load_solarwind(_write(tmp_path, text))
    assert got.distance_km.tolist() == [1.2e6, sw.L1_DISTANCE_KM]
    cast = sw.estimate(got.times_utc, got.speed_km_s, got.density_cm3, got.by_nt, got.bz_nt,
                       got.distance_km)
    assert cast.delay_min == pytest.approx(sw.flat_delay_s(500.0, sw.L1_DISTANCE_KM) / 60)
