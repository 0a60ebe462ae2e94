"""The forecast archive: what `tonight` and `week` keep, and which chance an outcome meets."""

import datetime as dt
import json
import shutil
import sqlite3
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from auroraplan import archive, store

DEMO = Path(__file__).resolve().parent.parent / "demo_sites"


@pytest.fixture(scope="module")
def recorded(tmp_path_factory):
    ws = tmp_path_factory.mktemp("archive") / "ws"
    shutil.copytree(DEMO, ws, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
    store.open_store(store.database_path(ws)).close()  # as `week` or `logbook` would
    out = subprocess.run([sys.executable, "-m", "auroraplan.cli", "tonight", str(ws), "--date",
                          "2027-01-12", "--json", "--top", "100"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    return ws, json.loads(out.stdout)


def _rows(ws, sql):
    con = sqlite3.connect(ws / store.DATABASE_NAME)
    con.row_factory = sqlite3.Row
    rows = con.execute(sql).fetchall()
    con.close()
    return rows


def test_tonight_keeps_the_night_chance_it_printed(recorded):
    ws, result = recorded
    rows = {r["site"]: r for r in _rows(ws, "SELECT * FROM issued_nights")}
    assert {s["name"] for s in result["sites"]} == set(rows)
    for s in result["sites"]:
        assert rows[s["name"]]["chance"] == pytest.approx(s["chance"], abs=5e-4)
        assert rows[s["name"]]["night"] == "2027-01-12"
        assert rows[s["name"]]["kind"] in ("forecast", "nowcast")


def test_tonight_keeps_the_chance_in_each_hour_it_printed(recorded):
    ws, result = recorded
    run = _rows(ws, "SELECT * FROM issue_runs")[0]
    rows = [{"site": n["site"], **h} for n in _rows(ws, "SELECT * FROM issued_nights")
            for h in archive.hours_of(n["hours"], run["made_at"])]
    for r in rows:
        start = dt.datetime.fromisoformat(r["hour_start"].replace("Z", "+00:00"))
        made = dt.datetime.fromisoformat(run["made_at"])
        assert r["lead_hours"] == pytest.approx((start - made).total_seconds() / 3600, abs=1e-9)
        assert r["kind"] in ("forecast", "nowcast")
    for s in result["sites"]:
        kept = {r["hour_start"]: r["chance"] for r in rows if r["site"] == s["name"]}
        shown = [h for h in s["hourly"]]
        assert len(kept) == len(shown)
        for h in shown:
            utc = dt.datetime.fromisoformat(h["time"]).astimezone(dt.UTC)
            assert kept[utc.strftime("%Y-%m-%dT%H:%M:%SZ")] == pytest.approx(h["chance_in_hour"], abs=5e-4)


def test_tonight_keeps_each_models_cloud_in_each_hour_it_printed(recorded):
    ws, result = recorded
    rows = _kept_cloud(ws)
    assert rows
    checked = 0
    for s in result["sites"]:
        kept = {(r["hour_start"], r["model"]): r["cloud_pct"] for r in rows
                if r["site"] == s["name"]}
        for h in s["hourly"]:
            utc = dt.datetime.fromisoformat(h["time"]).astimezone(dt.UTC)
            stamp = utc.strftime("%Y-%m-%dT%H:%M:%SZ")
            for model, pct in (h.get("cloud_models") or {}).items():
                if pct is not None:
                    assert kept[(stamp, model)] == pytest.approx(pct, abs=0.51)
                    checked += 1
        assert {k[0] for k in kept} <= {
            dt.datetime.fromisoformat(h["time"]).astimezone(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
            for h in s["hourly"]}
    assert checked == len(rows)


def _kept_cloud(ws):
    """Each model's cloud per site and dark hour, as kept packed in the night rows."""
    models = json.loads(_rows(ws, "SELECT models FROM issue_runs")[0]["models"])
    return [{"site": n["site"], **c} for n in _rows(ws, "SELECT * FROM issued_nights")
            for c in archive.cloud_of(n["cloud"], models)]


def test_the_run_keeps_its_inputs_settings_and_lead_time(recorded):
    ws, _ = recorded
    run = _rows(ws, "SELECT * FROM issue_runs")[0]
    inputs = json.loads(run["inputs"])
    # SHA-256 of the activity file's bytes, as hashlib computes it (FIPS 180-4)
    import hashlib

    assert inputs["activity"] == hashlib.sha256((ws / "activity.csv").read_bytes()).hexdigest()
    assert json.loads(run["settings"])["display_quiet"] == pytest.approx(0.3)
    night = _rows(ws, "SELECT * FROM issued_nights")[0]
    made = dt.datetime.fromisoformat(run["made_at"])
    start = dt.datetime.fromisoformat(night["outing_start"].replace("Z", "+00:00"))
    assert night["lead_hours"] == pytest.approx((start - made).total_seconds() / 3600, abs=1e-6)
    # The demo sets no outing hours: they start six hours before the sites' mean magnetic
    # midnight (nights.DEFAULT_OUTING_H), 16:40 UTC on this night near Tromsø
    # (tests/test_outing_hours.py checks such instants against aacgmv2).
    assert night["outing_start"] == "2027-01-12T16:40:00Z"


def test_factors_rebuild_the_night_chance(recorded):
    # The kept parts give back the issued chance through the same formula (chance.py).
    from auroraplan.calibrate import night_chances, prepare

    ws, _ = recorded
    rows = _rows(ws, "SELECT n.chance, n.factors, r.step_min FROM issued_nights n "
                     "JOIN issue_runs r ON r.id = n.run_id")
    data = prepare([archive.factors_of(r["factors"]) for r in rows], rows[0]["step_min"])
    again = night_chances(data, {"display_quiet": 0.3, "display_active": 0.8, "moon_beta": 0.5,
                                 "decorrelation_min": 120.0})
    assert again == pytest.approx([r["chance"] for r in rows], abs=1e-5)


def test_tonight_without_a_database_says_the_chances_were_not_kept(tmp_path):
    ws = tmp_path / "ws"
    shutil.copytree(DEMO, ws, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
    out = subprocess.run([sys.executable, "-m", "auroraplan.cli", "tonight", str(ws), "--date",
                          "2027-01-12"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert "not kept" in out.stderr
    assert not (ws / store.DATABASE_NAME).exists()


def test_no_record_keeps_nothing(recorded):
    ws, _ = recorded
    count = len(_rows(ws, "SELECT * FROM issue_runs"))
    out = subprocess.run([sys.executable, "-m", "auroraplan.cli", "tonight", str(ws), "--date",
                          "2027-01-12", "--no-record"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert len(_rows(ws, "SELECT * FROM issue_runs")) == count


def test_pairing_takes_the_last_chance_before_going_out(tmp_path):
    with store.open_store(tmp_path / store.DATABASE_NAME) as db:
        with db.transaction() as con:
            for run, made in enumerate(("2027-01-10T12:00:00+00:00", "2027-01-12T15:00:00+00:00",
                                        "2027-01-12T21:00:00+00:00"), start=1):
                con.execute("INSERT INTO issue_runs (id, made_at, command, inputs, "
                            "inputs_digest, settings, settings_digest, step_min) "
                            "VALUES (?,?,?,?,?,?,?,?)",
                            (run, made, "week", "{}", "x", "{}", "x", 10.0))
                con.execute("INSERT INTO issued_nights (run_id, site, night, kind, "
                            "outing_start, lead_hours, chance, factors) "
                            "VALUES (?,?,?,?,?,?,?,?)",
                            (run, "Island Lake", "2027-01-12", "forecast",
                             "2027-01-12T17:00:00Z", 0.0, 0.1 * run, None))
        # out from 18:00 local (17:00 UTC): the 15:00 UTC run is the last before
        assert archive.issued_for(db, "Island Lake", "2027-01-12", None, "Europe/Oslo").chance \
            == pytest.approx(0.2)
        # out from 23:30 local (22:30 UTC): the 21:00 UTC run counts
        got = archive.issued_for(db, "Island Lake", "2027-01-12", "23:30", "Europe/Oslo")
        assert got.chance == pytest.approx(0.3) and not got.after_start
        # out from 00:30 local is the next calendar day
        assert archive.went_out_utc("2027-01-12", "00:30", "", "Europe/Oslo") == dt.datetime(
            2027, 1, 12, 23, 30, tzinfo=dt.UTC)
        assert archive.issued_for(db, "Sound Bay", "2027-01-12", None, "Europe/Oslo") is None


def test_hourly_chances_are_vectorised_over_sites(recorded):
    from auroraplan import chance

    rng = np.random.default_rng(1)

    class Grid:
        step_min = 10.0
        darkness = (rng.random((3, 36)) > 0.3).astype(float)
        moon = rng.random((3, 36))
        activity = rng.random((3, 36))
        p_clear = rng.random((3, 36))
        chance = darkness

    first, p, dark = archive.hourly_chances(Grid, 120.0)
    assert list(first) == [0, 6, 12, 18, 24, 30]
    shown = Grid.darkness * Grid.moon * Grid.activity
    for i in range(3):
        for h in range(6):
            sl = slice(6 * h, 6 * h + 6)
            assert p[i, h] == pytest.approx(chance.p_display_seen(shown[i, sl], Grid.p_clear[i, sl],
                                                                  10.0, 120.0), abs=1e-12)


def test_verify_json_brier_is_the_mean_over_the_pairs_it_lists(recorded, tmp_path):
    ws, result = recorded
    rows = ["site,night,aurora"] + [f"{s['name']},2027-01-12,{'clear' if i % 2 else 'none'}"
                                    for i, s in enumerate(result["sites"])]
    path = tmp_path / "logbook.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    run = [sys.executable, "-m", "auroraplan.cli"]
    assert subprocess.run([*run, "logbook", "import", str(ws), str(path)]).returncode == 0
    png = tmp_path / "reliability.png"
    out = subprocess.run([*run, "verify", str(ws), "--json", "--png", str(png)],
                         capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    got = json.loads(out.stdout)
    pairs = got["pairs"]
    assert len(pairs) == len(result["sites"])
    mean = np.mean([(p["chance"] - p["outcome"]) ** 2 for p in pairs])
    assert abs(got["overall"]["brier"] - mean) < 1e-9
    assert got["overall"]["more_needed"] > 0
    # the skill score's reference is the climatology outlook of the same sites and night
    ref = [(p["outlook"] - p["outcome"]) ** 2 for p in pairs]
    assert got["overall"]["brier_reference"] == pytest.approx(np.mean(ref), abs=1e-9)


def test_calibrate_never_writes_operator_toml(recorded, tmp_path):
    ws, _ = recorded
    run = [sys.executable, "-m", "auroraplan.cli", "calibrate", str(ws), "--resamples", "20"]
    before = (ws / "operator.toml").read_bytes()
    refused = subprocess.run([*run, "--out", str(ws / "operator.toml")], capture_output=True,
                             text=True)
    assert refused.returncode == 2 and "input" in refused.stderr
    done = subprocess.run([*run, "--out", str(tmp_path / "s.toml"), "--json"],
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["outcomes"] >= 0
    assert (ws / "operator.toml").read_bytes() == before


def test_verify_scores_each_weather_model_against_the_cloud_seen(recorded, tmp_path):
    ws, result = recorded
    seen = {s["name"]: 10 * (i % 9) for i, s in enumerate(result["sites"])}
    rows = ["site,night,aurora,cloud_seen"] + [f"{name},2027-01-12,none,{pct}"
                                               for name, pct in seen.items()]
    path = tmp_path / "cloud-logbook.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    run = [sys.executable, "-m", "auroraplan.cli"]
    assert subprocess.run([*run, "logbook", "import", str(ws), str(path)]).returncode == 0
    out = subprocess.run([*run, "verify", str(ws), "--json"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    cloud = json.loads(out.stdout)["cloud"]
    # By hand from the archive: without hours out, each model's cloud is its mean over the
    # night's kept hours; the error is that minus the cloud seen.
    by_pair = {}
    for r in _kept_cloud(ws):
        by_pair.setdefault((r["site"], r["model"]), []).append(r["cloud_pct"])
    errors = {}
    for (site, model), pct in by_pair.items():
        errors.setdefault(model, []).append(np.mean(pct) - seen[site])
    assert errors and set(cloud["by_model"]) == set(errors)
    for model, e in errors.items():
        got = cloud["by_model"][model]
        assert got["count"] == len(e)
        assert got["mae_pct"] == pytest.approx(np.mean(np.abs(e)), abs=1e-9)
        assert got["bias_pct"] == pytest.approx(np.mean(e), abs=1e-9)
    assert sum(s["closest_share"] * s["count"] for s in cloud["by_model"].values()) \
        == pytest.approx(len(cloud["pairs"]))
    text = subprocess.run([*run, "verify", str(ws)], capture_output=True, text=True)
    assert text.returncode == 0, text.stderr
    assert "each weather model against the cloud seen" in text.stdout


def test_cloud_kept_before_the_rows_were_packed_is_still_read(tmp_path):
    # A database written before the hours and cloud went into the night rows keeps each
    # model's cloud in issued_cloud; the pairing for verify still finds it (mean by hand).
    with store.open_store(tmp_path / store.DATABASE_NAME) as db:
        with db.transaction() as con:
            con.execute("INSERT INTO issue_runs (id, made_at, command, inputs, inputs_digest, "
                        "settings, settings_digest, step_min) VALUES "
                        "(1, '2027-01-12T12:00:00+00:00', 'week', '{}', 'x', '{}', 'x', 10.0)")
            con.execute("INSERT INTO issued_nights (run_id, site, night, kind, outing_start, "
                        "lead_hours, chance) VALUES (1, 'Island Lake', '2027-01-12', "
                        "'forecast', '2027-01-12T17:00:00Z', 5.0, 0.4)")
            con.executemany("INSERT INTO issued_cloud VALUES (1, 'Island Lake', '2027-01-12', "
                            "?, ?, ?)", [("2027-01-12T18:00:00Z", "m1", 20.0),
                                         ("2027-01-12T19:00:00Z", "m1", 40.0)])
        issued = archive.issued_for(db, "Island Lake", "2027-01-12", None, "Europe/Oslo")
        assert archive.model_cloud_for(db, issued, None, None, "Europe/Oslo") == {"m1": 30.0}
