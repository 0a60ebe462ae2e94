"""What-if runs: one run under assumptions, named in the output, nothing saved or changed."""

import datetime as dt
import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from auroraplan import record, store, whatif
from auroraplan.cli import main
from auroraplan.errors import InputError
from auroraplan.workspace import load_workspace

DEMO = Path(__file__).resolve().parents[1] / "demo_sites"


@pytest.fixture
def demo(tmp_path):
    folder = tmp_path / "ws"
    shutil.copytree(DEMO, folder)
    return folder


def _snapshot(folder):
    return {p.name: p.read_bytes() for p in folder.iterdir() if p.is_file()}


def _week(folder, capsys, *extra):
    code = main(["week", str(folder), "--start", "2027-01-11", "--nights", "4", "--json",
                 *extra])
    out = capsys.readouterr()
    assert code == 0, out.err
    return json.loads(out.out)


def test_a_what_if_week_names_its_assumptions_and_saves_nothing(demo, capsys):
    before = _snapshot(demo)
    week = _week(demo, capsys, "--assume-vehicles", "1", "--assume-closed", "Delta Flats",
                 "--assume-without", "T03")
    assert week["what_if"] == ["1 vehicle instead of 2", "site closed: Delta Flats",
                               "trip left out: T03"]
    assert week["record"]["saved"] is False
    assert _snapshot(demo) == before, "no database was created and no file changed"
    per_night = {}
    for p in week["plan"]:
        per_night[p["date"]] = per_night.get(p["date"], 0) + 1
        assert p["site"] != "Delta Flats" and p["trip"] != "T03"
    assert week["plan"] and max(per_night.values()) == 1


def test_a_what_if_week_leaves_the_record_as_it_was(demo, capsys):
    first = _week(demo, capsys)
    path = store.database_path(demo)
    with store.open_store(path) as db:
        before = record.live_outings(db)
    what_if = _week(demo, capsys, "--assume-vehicles", "0")
    assert what_if["plan"] == [] and first["plan"]
    with store.open_store(path) as db:
        assert record.live_outings(db) == before
        assert db.query("SELECT count(*) FROM plans")[0][0] == 1
    # The would-be change list still says what the assumption would drop, and why.
    assert {c["change"] for c in what_if["changes"]} == {"dropped"}
    assert all("fleet changed: 2 → 0 vehicles" in c["reasons"] for c in what_if["changes"])


def test_a_shifted_kp_forecast_stays_on_the_kp_scale(demo):
    ws = load_workspace(demo)
    shifted, labels = whatif.apply(ws, whatif.Assumptions(kp_shift=3.0), dt.date(2027, 1, 11),
                                   dt.date(2027, 1, 14))
    expected = np.clip(np.asarray(ws.activity["kp"]) + 3.0, 0, 9)
    np.testing.assert_allclose(np.asarray(shifted.activity["kp"]), expected)
    assert shifted.activity["kp"].max() == 9.0  # the demo's storm reaches Kp 7-
    assert labels == ["Kp forecast shifted by +3 (within 0 to 9)"]
    assert ws.activity["kp"].max() < 9.0, "the workspace read from the files is unchanged"


def test_a_replaced_kp_forecast_covers_every_block_of_the_nights(demo):
    ws = load_workspace(demo)
    got, _ = whatif.apply(ws, whatif.Assumptions(kp=5.0), dt.date(2027, 1, 11),
                          dt.date(2027, 1, 20))
    starts = got.activity.to_frame()["start_utc"]
    assert (got.activity["kp"] == 5.0).all()
    assert starts.iloc[0] <= pd.Timestamp("2027-01-10T00:00Z")
    assert starts.iloc[-1] >= pd.Timestamp("2027-01-21T21:00Z")
    assert (starts.diff().iloc[1:] == pd.Timedelta(hours=3)).all()


def test_a_higher_kp_raises_tonights_chance_at_a_site_that_needs_activity(demo, capsys):
    """More activity never lowers the chance of a display (monotone in Kp)."""
    def chances(*extra):
        assert main(["tonight", str(demo), "--date", "2027-01-12", "--json", "--top", "30",
                     *extra]) == 0
        return {s["name"]: s["chance"] for s in json.loads(capsys.readouterr().out)["sites"]}

    low, high = chances("--assume-kp", "1"), chances("--assume-kp", "5")
    assert all(high[name] >= low[name] - 1e-9 for name in low)
    assert sum(high.values()) > sum(low.values())


def test_tonight_with_a_site_closed_leaves_it_out_and_says_so(demo, capsys):
    assert main(["tonight", str(demo), "--date", "2027-01-12", "--json", "--top", "30",
                 "--assume-closed", "Delta Flats"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert "Delta Flats" not in {s["name"] for s in result["sites"]}
    assert result["what_if"] == ["site closed: Delta Flats"]


@pytest.mark.parametrize("argv, says", [
    (["--assume-closed", "Nowhere Point"], "--assume-closed 'Nowhere Point': no such site"),
    (["--assume-without", "T99"], "--assume-without 'T99': no such trip"),
    (["--assume-kp", "4", "--assume-kp-shift", "1"], "give one of them"),
    (["--assume-vehicles", "-1"], "--assume-vehicles"),
])
def test_bad_what_ifs_are_one_line(demo, capsys, argv, says):
    before = _snapshot(demo)
    try:
        code = main(["week", str(demo), "--start", "2027-01-11", *argv])
    except SystemExit as exc:  # option types are checked by the parser
        code = exc.code
    assert code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and says in err[0]
    assert _snapshot(demo) == before


def test_apply_without_assumptions_is_the_workspace_itself(demo):
    ws = load_workspace(demo)
    assert whatif.apply(ws, whatif.Assumptions(), dt.date(2027, 1, 11), dt.date(2027, 1, 11)) \
        == (ws, [])
    with pytest.raises(InputError):
        whatif.apply(ws, whatif.Assumptions(without=("nobody",)), dt.date(2027, 1, 11),
                     dt.date(2027, 1, 11))
