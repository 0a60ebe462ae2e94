"""The guide's run sheet: go / wait / swap, data age, the group's outing, narrow terminals."""

import copy
import datetime as dt
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from auroraplan import report, runsheet
from auroraplan.commands.tonight import print_tonight
from auroraplan.errors import InputError
from auroraplan.i18n import Words
from auroraplan.render.phone import run_sheet_html
from auroraplan.workspace import load_workspace

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_sites"
FIXTURES = Path(__file__).parent / "fixtures"
SETTINGS = runsheet.RunSheetSettings()


def _site(name, chance, limiting="cloud", cloud=30.0):
    return {"name": name, "chance": chance, "limiting": limiting, "cloud_pct": cloud}


# The rule's thresholds are our own (common practice, no source): wait below 10 %, swap
# when the backup is at least 10 points better.
@pytest.mark.parametrize("main, backup, call, site", [
    (_site("A", 0.50), _site("B", 0.45), "go", "A"),
    (_site("A", 0.30), _site("B", 0.39), "go", "A"),       # 9 points: within the noise
    (_site("A", 0.20, "cloud", 95.0), _site("B", 0.40), "swap", "B"),
    (_site("A", 0.05, "activity"), _site("B", 0.08), "wait", None),
    (_site("A", 0.05, "activity"), None, "wait", None),
    (None, _site("B", 0.30), "swap", "B"),                  # planned site closed since
    (_site("A", None), _site("B", 0.02), "swap", "B"),
])
def test_go_wait_swap(main, backup, call, site):
    d = runsheet.decide(main, backup, SETTINGS)
    assert d["call"] == call and d["site"] == site


def test_swap_reason_names_both_sites_and_the_cause():
    sheet = {"decision": runsheet.decide(_site("Ridge", 0.2), _site("Shore", 0.5), SETTINGS),
             "site": _site("Ridge", 0.2), "backup": _site("Shore", 0.5), "site_name": "Ridge",
             "window_start": None, "window_end": None}
    verdict, reason = runsheet.call_words(sheet, Words())
    assert verdict == "Swap to the backup: Shore"
    assert reason == "Shore has 50 % against 20 % at Ridge, held back by cloud."


def _tonight(**forecast):
    base = json.loads((FIXTURES / "tonight_report.json").read_text(encoding="utf-8"))
    base["forecast"] = dict(base["forecast"], **forecast)
    return base


def test_data_age_says_what_is_old_or_missing():
    site = {"name": "Gåsvika lay-by", "cloud_pct": None}
    # Fixture made 2027-01-14 15:42 +01:00 = 14:42 UTC; a forecast issued 00:00 UTC that
    # day is 14.7 h old, over the default 12 h.
    items = runsheet.data_age(_tonight(issued_utc="2027-01-14T00:00:00Z"), site, SETTINGS)
    keys = [i["key"] for i in items]
    assert keys == ["kp forecast old", "no cloud forecast"]
    assert items[0]["hours"] == 15
    fresh = runsheet.data_age(_tonight(issued_utc="2027-01-14T06:00:00Z"),
                              {"name": "x", "cloud_pct": 20}, SETTINGS)
    assert fresh == []
    loose = runsheet.RunSheetSettings(forecast_max_age_h=24)
    assert runsheet.data_age(_tonight(issued_utc="2027-01-14T00:00:00Z"),
                             {"name": "x", "cloud_pct": 20}, loose) == []
    outlook = runsheet.data_age(_tonight(kind="outlook"), {"name": "x", "cloud_pct": 20},
                                SETTINGS)
    assert [i["key"] for i in outlook] == ["no kp forecast"]
    # The last 3-hour block starts 14 Jan 03:00 UTC: it ends at 06:00, before the dark
    # hours end (15 Jan 09:20 local).
    short = runsheet.data_age(_tonight(issued_utc="2027-01-14T06:00:00Z",
                                       last_block_utc="2027-01-14T03:00:00+00:00"),
                              {"name": "x", "cloud_pct": 20}, SETTINGS)
    assert [i["key"] for i in short] == ["kp forecast ends"]


@pytest.fixture(scope="module")
def demo():
    ws = load_workspace(DEMO)
    night = dt.date(2027, 1, 13)  # a night T01 is planned to go out
    tonight = report.tonight_report(ws, night)
    return ws, tonight, report.bookings_report(ws)


def test_run_sheet_is_the_planned_outing_of_the_group(demo):
    ws, tonight, plan = demo
    sheet = runsheet.run_sheet(tonight, plan, "T01", ws.settings)
    outing = next(p for p in plan["plan"] if p["trip"] == "T01" and p["date"] == tonight["date"])
    assert sheet["site_name"] == outing["site"] and sheet["pickup"] == outing["pickup"]
    assert sheet["backup_name"] == outing["backup"]
    assert sheet["guests"] == 12 and sheet["group"] == "Riverbend camera club"
    # The meeting point from the demo operator.toml's [contact].
    assert sheet["pickup_place"]["name"] == "Harbour office, front steps"
    # The sheet's site figures are tonight's, not copies that could drift.
    row = next(s for s in tonight["sites"] if s["name"] == outing["site"])
    assert sheet["site"] is row


def test_group_without_outing_says_why(demo):
    ws, tonight, plan = demo
    # T01 has 2027-01-10 blocked in trips.csv; T04 arrives 2027-01-12 but is not staying
    # on 2027-01-15.
    blocked = dict(tonight, date="2027-01-10")
    sheet = runsheet.run_sheet(blocked, plan, "T01", ws.settings)
    assert sheet["decision"] is None and sheet["no_outing"] == "blocked"
    gone = dict(tonight, date="2027-01-16")
    assert runsheet.run_sheet(gone, plan, "T04", None)["no_outing"] == "not staying"
    page = run_sheet_html(sheet, blocked)
    assert "No outing tonight" in page and "not available" in page


def test_unknown_trip_names_the_known_ones(demo):
    ws, tonight, plan = demo
    with pytest.raises(InputError, match="'T99' is not in this plan; known trips: T01, T02, T03, T04"):
        runsheet.run_sheet(tonight, plan, "T99", None)


def test_run_sheet_escapes_group_names(demo):
    ws, tonight, plan = demo
    nasty = copy.deepcopy(plan.to_json())
    nasty["trips"][0]["group"] = "<b>Club</b> & co"
    page = run_sheet_html(runsheet.run_sheet(tonight, nasty, "T01", None), tonight)
    assert "<b>Club" not in page and "&lt;b&gt;Club&lt;/b&gt; &amp; co" in page


# ---------------------------------------------------------------------------------------
# Narrow terminals: the site name and its chance are always there.

@pytest.fixture(scope="module")
def fixture_tonight():
    return json.loads((FIXTURES / "tonight_report.json").read_text(encoding="utf-8"))


@pytest.mark.parametrize("width", [40, 60, 80, 120])
def test_tonight_table_keeps_every_site_and_chance(fixture_tonight, width, monkeypatch, capsys):
    monkeypatch.setenv("COLUMNS", str(width))
    print_tonight(fixture_tonight)
    out = capsys.readouterr().out
    lines = out.splitlines()
    assert max(len(line) for line in lines) <= width
    for site in fixture_tonight["sites"]:
        row = next((line for line in lines if site["name"] in line), None)
        assert row is not None, (width, site["name"])
        chance = f"{100 * site['chance']:.0f}%"
        # Side by side in a table row, or on the line under the name in a stacked block.
        following = lines[lines.index(row):lines.index(row) + 2]
        assert any(re.search(rf"\b{chance}", line) for line in following), (width, chance)
    stacked = width < 60
    assert (" site " in out) is not stacked
    if width >= 120:
        assert " Kp" in out and " # " in out


def test_tonight_at_60_columns_from_the_command_line():
    env = dict(os.environ, COLUMNS="60")
    done = subprocess.run([sys.executable, "-m", "auroraplan.cli", "tonight", str(DEMO),
                           "--date", "2027-01-12", "--top", "20"],
                          capture_output=True, text=True, env=env, timeout=120)
    assert done.returncode == 0, done.stderr
    ws = load_workspace(DEMO)
    for site in (s for s in ws.sites if not s.closed):
        assert re.search(rf"{re.escape(site.name)}\s+\d+%", done.stdout), site.name


def test_the_print_languages_are_the_ones_with_a_catalogue():
    from auroraplan import i18n

    assert runsheet.PRINT_LANGUAGES == tuple(i18n.LANGUAGES)
