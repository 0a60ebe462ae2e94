"""The plan records are the contract between the report layer and the views.

Every hand-made fixture the renderer tests draw from must have exactly the keys and value
types of the record the report layer builds for the demo workspace; the records built from
the demo must hold to their own declared types and round-trip through their JSON form.
"""

import datetime as dt
import json
from pathlib import Path

import pytest

from auroraplan import plans, report
from auroraplan.workspace import load_workspace

FIXTURES = Path(__file__).parent / "fixtures"
DEMO_SITES = Path(__file__).parents[1] / "demo_sites"
NIGHT = dt.date(2027, 1, 12)


@pytest.fixture(scope="module")
def built():
    """The records built from the demo workspace (one of each kind)."""
    ws = load_workspace(DEMO_SITES)
    week = report.week_report(ws, dt.date(2027, 1, 11), 3)
    season = report.season_report(ws, dt.date(2027, 1, 1), dt.date(2027, 1, 20), 5)
    return {
        "tonight_report": report.tonight_report(ws, NIGHT),
        "week_report": week,
        "heatmap": week.heatmap,
        "timeline": report.site_timeline(ws, NIGHT, ws.sites[0].name),
        "season": report.season_chart(season),
        "season_outlook": season,
        "site_table": report.site_table(ws, NIGHT),
    }


def _shape(value):
    """Keys (recursively, lists by their first item) of a JSON value, types at the leaves."""
    if isinstance(value, dict):
        return {k: _shape(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_shape(value[0])] if value else []
    return type(value).__name__


@pytest.mark.parametrize("name", ["tonight_report", "week_report", "heatmap", "timeline",
                                  "season", "season_outlook", "site_table"])
def test_built_records_keep_their_declared_types(built, name):
    record = built[name]
    data = json.loads(json.dumps(record.to_json()))
    again = type(record).from_json(data)
    assert again.to_json() == data
    assert list(data) == [k for k in type(record).public_names() if k in data]


@pytest.mark.parametrize("name", ["tonight_report", "week_report", "heatmap", "timeline",
                                  "season"])
def test_every_fixture_matches_the_real_record(built, name):
    real = built[name]
    fixture = json.loads((FIXTURES / f"{name}.json").read_text(encoding="utf-8"))
    type(real).from_json(fixture)  # every key present, none unknown, each value its type
    mine, theirs = _shape(fixture), _shape(json.loads(json.dumps(real.to_json())))

    def same_keys(a, b, where):
        if isinstance(a, dict) and isinstance(b, dict):
            open_ended = {"cloud_models", "nowcast", "chance_terms"}
            if where.rsplit(".", 1)[-1] not in open_ended:
                assert set(a) == set(b), f"{name}{where}: {sorted(set(a) ^ set(b))}"
            for k in set(a) & set(b):
                same_keys(a[k], b[k], f"{where}.{k}")
        elif isinstance(a, list) and isinstance(b, list) and a and b:
            same_keys(a[0], b[0], f"{where}[0]")

    same_keys(mine, theirs, "")


def test_a_missing_key_is_named():
    fixture = json.loads((FIXTURES / "tonight_report.json").read_text(encoding="utf-8"))
    del fixture["sites"][0]["hourly"][0]["p_clear"]
    with pytest.raises(ValueError, match=r"TonightSheet\.sites\[0\]\.hourly\[0\]: missing key "
                                         r"'p_clear'"):
        plans.TonightSheet.from_json(fixture)


def test_a_wrong_type_is_named():
    fixture = json.loads((FIXTURES / "week_report.json").read_text(encoding="utf-8"))
    fixture["plan"][0]["chance"] = "high"
    with pytest.raises(ValueError, match=r"WeekPlan\.plan\[0\]\.chance: expected a number"):
        plans.WeekPlan.from_json(fixture)


def test_records_read_by_public_name(built):
    outing = built["week_report"].plan[0]
    assert outing["return"] == outing.return_
    assert "return" in outing.keys() and "return_" not in outing.keys()
    sheet = built["tonight_report"]
    assert sheet.get("what_if") is None and "what_if" not in sheet.to_json()
    assert sheet.replace(what_if=("Kp 6",)).to_json()["what_if"] == ["Kp 6"]
