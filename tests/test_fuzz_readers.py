"""Fuzzing every reader: odd bytes, odd text and odd values give our own error or a valid result.

The property is the one the command line relies on: a reader either returns a valid result or
raises InputError (workspace files), ValueError (the value checkers that document it) or
argparse.ArgumentTypeError (option types); never any other exception, which would reach the
operator as an internal error. The examples are derandomized so that CI is reproducible.
"""

import argparse
import csv
import dataclasses
import datetime as dt
import io
import json
import math
import shutil
from contextlib import contextmanager
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from auroraplan import chance
from auroraplan.activity import parse_kp
from auroraplan.checks import date as _date
from auroraplan.checks import parse_utc
from auroraplan.commands import _common
from auroraplan.errors import InputError
from auroraplan.nights import OutingHours
from auroraplan.planner import PlannerSettings
from auroraplan.workspace import _TRIP_DATE as _trip_date
from auroraplan.workspace import load_workspace

BASE = Path(__file__).resolve().parent / "bad_inputs" / "base"


def fuzz(examples):
    """Hypothesis settings: fixed examples (derandomized), no deadline, no example database."""
    return settings(max_examples=examples, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                           HealthCheck.function_scoped_fixture])


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    """A copy of the corpus' small valid workspace; each example rewrites one file and restores it."""
    target = tmp_path_factory.mktemp("fuzz") / "workspace"
    shutil.copytree(BASE, target)
    return target


@contextmanager
def file_holding(folder: Path, name: str, data: bytes):
    path = folder / name
    original = path.read_bytes()
    path.write_bytes(data)
    try:
        yield
    finally:
        path.write_bytes(original)


def load_or_problems(folder: Path):
    """The loaded workspace, or None after checking that the error is our own one-line kind."""
    try:
        ws = load_workspace(folder)
    except InputError as exc:
        assert exc.problems, "an InputError must say what is wrong"
        assert all(p and "\n" not in p for p in exc.problems), exc.problems
        for p in exc.problems:
            p.encode("utf-8", "backslashreplace")  # printable on any terminal
        return None
    check_loaded(ws)
    return ws


def check_loaded(ws):
    """What a loaded workspace promises the later stages."""
    texts = [ws.operator.name, ws.operator.base_name]
    texts += [s.name for s in ws.sites] + [s.notes for s in ws.sites]
    texts += [t.trip for t in ws.trips] + [t.group for t in ws.trips]
    json.dumps(texts, ensure_ascii=False).encode("utf-8")  # no lone surrogates reach the outputs
    for site in ws.sites:
        assert -90 <= site.lat <= 90 and -180 <= site.lon <= 180
        assert 1 <= site.capacity <= 1000
    for trip in ws.trips:
        assert trip.arrive < trip.depart and 1 <= trip.guests <= 1000
    assert ((ws.activity["kp"] >= 0) & (ws.activity["kp"] <= 9)).all()
    assert ((ws.clouds["cloud_pct"] >= 0) & (ws.clouds["cloud_pct"] <= 100)).all()
    cfg = ws.settings.chance  # validated at load time, so it never fails afterwards
    for key in ("display_quiet", "display_active"):
        assert 0 <= getattr(cfg, key) <= 1
    assert cfg.decorrelation_min > 0 and cfg.min_window_min <= cfg.max_window_min
    assert all(math.isfinite(v) for v in dataclasses.astuple(cfg) if isinstance(v, float))


# --- odd values -----------------------------------------------------------------------------

ODD_TEXT = [
    "", " ", "nan", "NaN", "inf", "-inf", "Infinity", "1e400", "-1e400", "-0", "0x1F", "1_000",
    "10" + "0" * 30, "9" * 5000, "\x00", "a\x00b", "\ufeff", "\u2212" + "1", "٤", "G6", "g0", "9+",
    "0-", "-1", "4 +", "2027-02-30", "2027-02-29", "2027-13-01", "0000-01-01", "9999-12-31",
    "9999-12-31T23:59-01:00", "0001-01-01T00:00+01:00", "2027-01-11T00:00+25:00",
    "2027-01-11T24:00Z", "2027-W02-1", "20270111", "Europe", "Europe/Oslo" * 40, "../../etc",
    "\"", "'", ",", ";", "\r", "\n", "\\u0000", "é" * 300, "😀", "true", "[]", "{}",
    "2999-01-11T00:00Z", "2300-01-11", "1677-09-21T00:00Z", "1000-01-01T00:00Z", "2099-01-11",
]

ODD_NUMBERS = st.sampled_from([
    math.nan, math.inf, -math.inf, -0.0, 0.0, 1e-320, 1e308, 10**30, -(10**30), 2**63, 10**400,
])

odd_text = st.one_of(st.sampled_from(ODD_TEXT), st.text(max_size=40),
                     st.text(alphabet="0123456789.-+eE:TZ/ ", max_size=30))

ODD_STRINGS = st.sampled_from(["\udcff", "Lone \ud800 half", "tab\there", "nul\x00", "line\r\nbreak",
                               "", " ", "x" * 10000])
json_scalars = st.one_of(
    st.none(), st.booleans(), st.integers(min_value=-(10**40), max_value=10**40),
    st.floats(allow_nan=True, allow_infinity=True), ODD_NUMBERS,
    st.text(max_size=20), ODD_STRINGS,
)
json_values = st.recursive(json_scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=8), inner, max_size=4)),
    max_leaves=12)


def deep(opening: str, closing: str, depth: int) -> str:
    return opening * depth + closing * depth


# --- operator.toml --------------------------------------------------------------------------

TOML_VALUES = st.one_of(
    st.sampled_from([
        "nan", "inf", "-inf", "+inf", "-0", "1e400", "1000000000000000000000000000000",
        "true", "false", '""', '" "', '"\\u0000"', '"a\\tb"', "1979-05-27", "07:32:00",
        "18:30:00", "1979-05-27T07:32:00Z", "1979-05-27T07:32:00", "0001-01-01T00:00:00+01:00",
        "[0.5, 0.6]", "[]", "{}", "{ a = 1 }", '"18:00"', '"24:00"', '"24:01"', '"7:5"',
        '"25:00"', '"-01:00"', '"Europe"', '"Europe/Oslo"', "0.5", "0", "1", "-1", "2", "1440",
        '"' + "x" * 300 + '"', deep("[", "]", 3000), "[" * 50 + "1" + "]" * 50,
    ]),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.integers(min_value=-(10**25), max_value=10**25).map(str),
    st.text(max_size=20).map(json.dumps),  # a TOML basic string is close enough to JSON's
)
CHANCE_AND_PLANNER_KEYS = sorted(
    {f.name for record in (chance.ChanceSettings, OutingHours, PlannerSettings)
     for f in dataclasses.fields(record)})
TOML_KEYS = st.sampled_from(CHANCE_AND_PLANNER_KEYS + [
    "drive_cost_per_min", "name", "lat", "lon", "timezone", "vehicles", "darkness",
    "min_elevation_deg", "emission_height_km", "oval_model", "issued_utc", "sd0",
    "rate_per_day", "sd_max", "history_file", "moon_rule", "",
])
TOML_TABLES = st.sampled_from(["base", "operator", "fleet", "viewing", "activity", "chance",
                               "planner", "vans"])


def toml_with_value(data) -> str:
    """The base operator.toml with one key of one table set (or added) to an odd value."""
    text = (BASE / "operator.toml").read_text(encoding="utf-8")
    lines = text.splitlines()
    table, key, value = data.draw(TOML_TABLES), data.draw(TOML_KEYS), data.draw(TOML_VALUES)
    if f"[{table}]" not in lines:
        lines.append(f"[{table}]")
    at = lines.index(f"[{table}]") + 1
    lines = [ln for ln in lines if not ln.startswith(f"{key} =") or not key]
    at = min(at, len(lines))
    lines.insert(at, f"{key or 'x'} = {value}")
    return "\n".join(lines) + "\n"


@fuzz(60)
@given(data=st.data())
def test_operator_toml_with_one_odd_value(folder, data):
    text = toml_with_value(data)
    with file_holding(folder, "operator.toml", text.encode("utf-8", "surrogatepass")):
        load_or_problems(folder)


@fuzz(40)
@given(data=st.data())
def test_chance_and_planner_settings_are_checked_at_load_time(folder, data):
    lines = (BASE / "operator.toml").read_text(encoding="utf-8").splitlines()
    for _ in range(data.draw(st.integers(1, 3))):
        table = data.draw(st.sampled_from(["chance", "planner"]))
        key = data.draw(st.sampled_from(CHANCE_AND_PLANNER_KEYS))
        value = data.draw(st.one_of(TOML_VALUES, st.floats(0, 2).map(repr),
                                    st.sampled_from(['"00:00"', '"23:59"', '"19:30"'])))
        lines = [ln for ln in lines if not ln.startswith(f"{key} =")]
        lines.insert(lines.index(f"[{table}]") + 1, f"{key} = {value}")
    with file_holding(folder, "operator.toml", ("\n".join(lines) + "\n").encode("utf-8")):
        load_or_problems(folder)


# --- sites.geojson --------------------------------------------------------------------------

SITE_FIELDS = ["name", "drive_min", "capacity", "sky_mag", "horizon", "clear_by_month", "closed",
               "notes", "geometry", "coordinates", "properties", "feature"]


@fuzz(80)
@given(data=st.data())
def test_sites_geojson_with_one_odd_value(folder, data):
    doc = json.loads((BASE / "sites.geojson").read_text(encoding="utf-8"))
    features = doc["features"]
    i = data.draw(st.integers(0, len(features) - 1))
    where = data.draw(st.sampled_from(SITE_FIELDS))
    value = data.draw(st.one_of(ODD_NUMBERS, ODD_STRINGS, json_values, st.sampled_from([
        {"type": "LineString", "coordinates": [[23.1, 69.9], [23.2, 69.9]]},
        {"type": "Point", "coordinates": [23.1]}, {"type": "Point"}, [[0, 2], [360]],
        [[0, 1e400], [360, 2]], [[0, 2]] * 3, [0.3] * 11, [0.3] * 12 + [math.nan],
    ])))
    if where == "feature":
        features[i] = value
    elif where == "properties":
        features[i]["properties"] = value
    elif where == "geometry":
        features[i]["geometry"] = value
    elif where == "coordinates":
        coords = features[i]["geometry"]["coordinates"]
        coords[data.draw(st.integers(0, len(coords) - 1))] = value
    else:
        features[i]["properties"][where] = value
    text = json.dumps(doc, ensure_ascii=data.draw(st.booleans()))
    with file_holding(folder, "sites.geojson", text.encode("utf-8", "surrogatepass")):
        load_or_problems(folder)


@fuzz(15)
@given(depth=st.integers(100, 20000), opening=st.sampled_from(["[", "{\"a\":"]))
def test_sites_geojson_nested_deeply(folder, depth, opening):
    closing = "]" if opening == "[" else "}"
    text = ('{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": '
            '{"name": "x", "notes": ' + deep(opening, closing, depth) + "}}]}")
    with file_holding(folder, "sites.geojson", text.encode("utf-8")):
        load_or_problems(folder)


# --- the CSV files --------------------------------------------------------------------------

CSV_FILES = ["trips.csv", "activity.csv", "clouds.csv"]


def csv_rows(name: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO((BASE / name).read_text(encoding="utf-8"))))


def write_rows(rows, quote: bool, ending: str) -> str:
    if quote:
        out = io.StringIO()
        csv.writer(out, lineterminator=ending).writerows(rows)
        return out.getvalue()
    return ending.join(",".join(r) for r in rows) + ending


@fuzz(120)
@given(data=st.data(), name=st.sampled_from(CSV_FILES))
def test_csv_with_odd_cells(folder, data, name):
    rows = csv_rows(name)
    for _ in range(data.draw(st.integers(1, 3))):
        r = data.draw(st.integers(0, len(rows) - 1))
        c = data.draw(st.integers(0, len(rows[r]) - 1))
        rows[r][c] = data.draw(odd_text)
    if data.draw(st.booleans()):  # a row twice, or a row lost
        r = data.draw(st.integers(1, len(rows) - 1))
        rows.insert(r, list(rows[r])) if data.draw(st.booleans()) else rows.pop(r)
    text = write_rows(rows, data.draw(st.booleans()), data.draw(st.sampled_from(["\n", "\r\n", "\r"])))
    raw = text.encode("utf-8", "surrogatepass")
    if data.draw(st.booleans()):
        raw = b"\xef\xbb\xbf" + raw
    with file_holding(folder, name, raw):
        load_or_problems(folder)


@fuzz(60)
@given(name=st.sampled_from(["operator.toml", "sites.geojson", *CSV_FILES]),
       data=st.one_of(st.binary(max_size=300),
                      st.text(max_size=300).map(lambda t: t.encode("utf-8")),
                      st.text(max_size=100).map(lambda t: t.encode("utf-16")),
                      st.text(max_size=100).map(lambda t: t.encode("latin-1", "replace"))))
def test_any_bytes_in_any_file(folder, name, data):
    with file_holding(folder, name, data):
        load_or_problems(folder)


# --- value readers --------------------------------------------------------------------------


@fuzz(300)
@given(st.one_of(odd_text, st.floats(allow_nan=True).map(str),
                 st.from_regex(r"\A\s*[0-9G\u2212][0-9.+\-oO]{0,3}\s*\Z", fullmatch=True)))
def test_parse_kp_gives_a_kp_or_value_error(text):
    try:
        kp = parse_kp(text)
    except ValueError as exc:
        assert "\n" not in str(exc) and len(str(exc)) < 300
        return
    assert 0.0 <= kp <= 9.0


aware_times = st.datetimes(min_value=dt.datetime(1, 1, 1), max_value=dt.datetime(9999, 12, 31),
                           timezones=st.one_of(st.none(), st.timedeltas(
                               min_value=dt.timedelta(hours=-23, minutes=-59),
                               max_value=dt.timedelta(hours=23, minutes=59)).map(dt.timezone)))
time_texts = st.one_of(
    odd_text,
    aware_times.map(lambda t: t.isoformat()),
    aware_times.map(lambda t: t.isoformat(timespec="minutes").replace("+00:00", "Z")),
    st.from_regex(r"\A\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}[^\n]{0,12}\Z", fullmatch=True),
)


@fuzz(300)
@given(st.one_of(time_texts, aware_times))
def test_parse_utc_gives_an_aware_utc_time_or_value_error(value):
    try:
        when = parse_utc(value)
    except ValueError:
        return
    assert when.utcoffset() == dt.timedelta(0)


@fuzz(200)
@given(st.one_of(odd_text, st.dates().map(str),
                 st.from_regex(r"\A\d{4}-\d{2}-\d{2}\Z", fullmatch=True)))
def test_date_readers_give_a_date_or_value_error(text):
    for reader in (_date, _trip_date):
        try:
            assert isinstance(reader(text), dt.date)
        except ValueError:
            pass


OPTION_TYPES = {
    "iso_date": _common.iso_date,
    "utc_time": _common.utc_time,
    "kp": _common.number_range(0.0, 9.0, "a Kp"),
    "latitude": _common.latitude,
    "nights": _common.int_range(1, 31),
    "time_zone": _common.time_zone,
}


@fuzz(300)
@given(kind=st.sampled_from(sorted(OPTION_TYPES)), text=st.one_of(
    time_texts, st.text(alphabet="abcdefghijklmnopqrstuvwxyzABCDEFGHIJ_/-+.0123456789",
                        max_size=300),
    st.sampled_from(["Europe/Oslo", "UTC", "Etc/GMT-1", "Europe", "Europe/", "/", ".", "..",
                     "Europe/Oslo\x00", "Europe/Oslo\udcff", "A" * 5000, "zoneinfo"])))
def test_option_types_give_a_value_or_argument_type_error(kind, text):
    parse = OPTION_TYPES[kind]
    try:
        value = parse(text)
    except argparse.ArgumentTypeError as exc:
        assert "\n" not in str(exc) and len(str(exc)) < 300
        return
    if kind == "kp":
        assert 0.0 <= value <= 9.0
    elif kind == "latitude":
        assert -90.0 <= value <= 90.0
    elif kind == "nights":
        assert 1 <= value <= 31
    elif kind == "utc_time":
        assert value.utcoffset() == dt.timedelta(0)
    elif kind == "iso_date":
        assert _common.FIRST_DATE <= value <= _common.LAST_DATE


# --- the fixes, pinned with the inputs that used to escape -----------------------------------


@pytest.mark.parametrize("text", ["9999-12-31T23:59-01:00", "0001-01-01T00:00+01:00"])
def test_times_that_leave_the_calendar_in_utc_are_value_errors(text):
    with pytest.raises(ValueError, match="outside the calendar"):
        parse_utc(text)
    with pytest.raises(argparse.ArgumentTypeError, match="outside the calendar"):
        _common.utc_time(text)


@pytest.mark.parametrize("name", ["Europe", "Europe/Oslo" * 40])
def test_zone_folders_and_overlong_zone_names_are_option_errors(name):
    with pytest.raises(argparse.ArgumentTypeError, match="IANA"):
        _common.time_zone(name)


def test_option_dates_match_the_span_the_sky_is_computed_for():
    from auroraplan import sky

    assert (_common.FIRST_DATE, _common.LAST_DATE) == (sky.FIRST_NIGHT, sky.LAST_NIGHT)


def test_every_setting_has_a_checker_that_its_default_passes():
    from auroraplan.settings import Settings

    defaults = Settings()
    for record in (getattr(defaults, f.name) for f in dataclasses.fields(Settings)):
        fields = dataclasses.fields(record)
        assert fields and all("check" in f.metadata for f in fields)
        for f in fields:
            if f.default is not None:  # None: not written, nothing to check
                assert f.metadata["check"](f.default) == f.default, f.name
