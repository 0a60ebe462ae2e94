"""The column-wise reader of clouds.csv and activity.csv against the row-by-row reader.

Reference: the row-by-row reader of the same files (auroraplan.workspace, every cell
through its checker, the reader the bad-input corpus holds to its messages). The
column-wise path must give the very same table, and must hand any file it cannot vouch
for to the row reader, so the one-line errors stay the same.
"""

import datetime as dt
import shutil
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from auroraplan import checks, csvcolumns
from auroraplan.errors import InputError
from auroraplan.workspace import CSV_COLUMNS, load_workspace
from auroraplan.workspace.clouds import _cloud_unit

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
from make_workspace import make_workspace  # noqa: E402

KP_TEXTS = ("0o", "1-", "1o", "1+", "2", "3.5", " 4+ ", "5-", "G1", "G2", "7-")


@pytest.fixture(scope="module")
def big(tmp_path_factory):
    """A generated workspace whose clouds.csv and activity.csv pass the column-wise size."""
    folder = make_workspace(tmp_path_factory.mktemp("big") / "ws", 220, 4,
                            dt.date(2027, 1, 11), 3, seed=3)
    rng = np.random.default_rng(5)
    starts = np.arange(np.datetime64("2021-01-01T00:00"), np.datetime64("2027-01-14T00:00"),
                       np.timedelta64(3, "h"))
    lines = ["start_utc,kp,kp_sd"]
    for i, t in enumerate(starts):
        sd = f"{rng.uniform(0.3, 1.5):.1f}" if i % 7 == 0 else ""
        lines.append(f"{t}Z,{KP_TEXTS[i % len(KP_TEXTS)]},{sd}")
    (folder / "activity.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    for name in ("clouds.csv", "activity.csv"):
        assert (folder / name).stat().st_size >= csvcolumns.COLUMNWISE_FROM_BYTES
    return folder


def row_by_row(folder, monkeypatch):
    with monkeypatch.context() as m:
        m.setattr(csvcolumns, "COLUMNWISE_FROM_BYTES", 10**12)
        return load_workspace(folder)


def test_the_column_wise_tables_equal_the_row_readers(big, monkeypatch):
    calls = []
    real = csvcolumns.read_clouds
    monkeypatch.setattr(csvcolumns, "read_clouds",
                        lambda *a, **k: calls.append(1) or real(*a, **k))
    fast = load_workspace(big)
    assert calls and fast.clouds is not None
    slow = row_by_row(big, monkeypatch)
    assert len(fast.clouds) == 220 * 72 and fast.clouds == slow.clouds
    assert len(fast.activity) > 17_000 and fast.activity == slow.activity
    assert fast.activity["kp"][fast.activity["start_utc"] ==
                               np.datetime64("2021-01-01T03:00")][0] == pytest.approx(2 / 3)
    assert np.isnan(fast.activity["kp_sd"]).sum() > 0
    # the tables are ordered as the row reader keeps them: site, then time
    assert list(fast.clouds["site"][:2]) == ["Bench site 001"] * 2
    assert np.all(np.diff(fast.clouds["time_utc"][:72].astype(np.int64)) == 3600)


def test_times_with_an_offset_and_a_unit_column_give_the_row_readers_table(big, tmp_path,
                                                                         monkeypatch):
    folder = shutil.copytree(big, tmp_path / "ws")
    text = (folder / "clouds.csv").read_text(encoding="utf-8").splitlines()
    text[0] += ",unit"
    text[1:] = [line.replace("Z,", "+00:00,") + ",%" for line in text[1:]]
    (folder / "clouds.csv").write_text("\n".join(text) + "\n", encoding="utf-8")
    names = {s.name for s in load_workspace(big).sites}
    fast = csvcolumns.read_clouds(folder / "clouds.csv", *CSV_COLUMNS["clouds"], names,
                                  _cloud_unit, lambda unit: checks.PERCENT_CELLS[unit][:3])
    assert isinstance(fast, csvcolumns.CloudTable)  # taken by the fast path itself
    assert fast == row_by_row(folder, monkeypatch).clouds == load_workspace(big).clouds


@pytest.mark.parametrize("line, cell, said", [
    (4321, "cloud_pct", "cloud_pct"),
    (9000, "time_utc", "time_utc"),
    (12345, "site", "not a site"),
])
def test_a_bad_cell_deep_in_a_big_file_is_named_by_its_line(big, tmp_path, monkeypatch, line,
                                                            cell, said):
    folder = shutil.copytree(big, tmp_path / "ws")
    lines = (folder / "clouds.csv").read_text(encoding="utf-8").splitlines()
    site, time, cloud = lines[line - 1].split(",")
    bad = {"cloud_pct": (site, time, "130"), "time_utc": (site, "2027-01-11T25:00Z", cloud),
           "site": ("Nowhere Point", time, cloud)}[cell]
    lines[line - 1] = ",".join(bad)
    (folder / "clouds.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(InputError) as fast:
        load_workspace(folder)
    with pytest.raises(InputError) as slow:
        row_by_row(folder, monkeypatch)
    assert fast.value.problems == slow.value.problems
    assert len(fast.value.problems) == 1
    assert f"clouds.csv line {line}" in fast.value.problems[0] and said in fast.value.problems[0]


def test_a_repeated_hour_and_a_repeated_block_are_left_to_the_row_reader(big, tmp_path):
    folder = shutil.copytree(big, tmp_path / "ws")
    with (folder / "clouds.csv").open("a", encoding="utf-8") as out:
        out.write("Bench site 007,2027-01-12T03:00Z,40\n")
    with (folder / "activity.csv").open("a", encoding="utf-8") as out:
        out.write("2021-01-01T03:00Z,3o,\n")
    with pytest.raises(InputError) as caught:
        load_workspace(folder)
    problems = caught.value.problems
    assert any("activity.csv line" in p and "2021-01-01T03:00Z is also on line 3" in p
               for p in problems)
    assert any("clouds.csv line" in p and "Bench site 007 at 2027-01-12T03:00Z" in p
               for p in problems)


def test_tables_give_a_pandas_frame_like_the_former_loader(big):
    ws = load_workspace(big)
    frame = ws.clouds.to_frame()
    assert list(frame.columns) == ["site", "time_utc", "cloud_pct"]
    assert str(frame["time_utc"].dt.tz) == "UTC" and len(frame) == len(ws.clouds)


# --- the column-wise path against the row reader, cell by odd cell ----------------------
#
# Reference: the row reader (every cell through its checker). For any file the column-wise
# path either gives the row reader's very table or hands the file over, so the errors are
# the row reader's; a file it wrongly took would show here as a table where the row reader
# refuses, or as a different table.

SITES = ("Aspen Knoll", "Birch Flat", "Cedar Shore")
ODD_SITES = (" Birch Flat", "Cedar Shore ", "aspen knoll", "Nowhere Point", "", " ",
             "Aspen\x07Knoll", "Birch  Flat")
TIME_LAYOUTS = (  # (text of an hour, a layout Python's datetime also writes)
    "{:%Y-%m-%dT%H:%M}Z", "{:%Y-%m-%dT%H:%M}", "{:%Y-%m-%d %H:%M}Z", "{:%Y-%m-%dT%H:%M:%S}Z",
    "{:%Y-%m-%dT%H:%M:%S}", "{:%Y-%m-%dT%H:%M}+00:00", "{:%Y-%m-%dT%H:%M}-0000",
    "{:%Y-%m-%dT%H:%M}+00", " {:%Y-%m-%dT%H:%M}Z",
)
ODD_TIMES = (
    "2027-01-11T22Z", "2027-01-11T22", "2027-01-11T22+01:00", "2027-01-11", "2027-01-11Z",
    " 2027-01-11T18:00Z", "2027-01-11T18:00Z ", "2027-01-11T18:00:00.5Z", "2027-01-11T18:00:00.000",
    "2027-02-29T18:00Z", "2027-01-11T24:00Z", "2027-01-11T18:60Z", "2027-01-11T18:00:60Z",
    "1899-12-31T23:00Z", "1900-01-01T00:30+01:00", "2099-12-31T23:30-01:00", "2100-01-01T00:00Z",
    "2027-01-11t18:00z", "2027-01-11T18:00z", "2027-1-11T18:00Z", "2027-01-11T1800Z",
    "2027-01-11T18:00+01:30", "2027-01-11T18:00+24:00", "2027-01-11T18:00+01:00:30",
    "2027-01-11T18:00 Z", "2027-01-11X18:00Z", "+2027-01-11T18:00Z", "20270111T1800Z", "",
    "2027-01-12T05:00-23:59", "2027-01-11T22:00:00+01", "2027-01-11T18:00UTC",
)
ODD_NUMBERS = ("0", "100", "55.5", " 40", "40 ", "+5", "-0", "1e2", "1e3", "nan", "NaN", "inf",
               "-inf", "1_0", "", " ", "101", "-1", "0.5", ".5", "5.", "0x10", "1e-400",
               "١٢", "NA", "1,5", "100.0000000000001")
ODD_UNITS = ("", " ", "%", "percent", "PCT", "fraction", " Fraction ", "0-1", "octas", "1")
KP_CELLS = ("0o", "1-", "3+", " 4o ", "5", "5.5", "G1", "g2", "9o", "9+", "10", "", "x",
            "4\u2212", "nan", "-1")
SD_CELLS = ("", "0.5", "1", " 0.7", "5", "5.1", "-0", "nan", "inf", " ", "1e0", "x")


def _odd(draw, usual, odd):
    """Mostly the usual cell, sometimes an odd one."""
    return draw(st.sampled_from(odd)) if draw(st.integers(0, 9)) == 0 else usual


@st.composite
def cloud_files(draw):
    rows = draw(st.integers(1, 14))
    layout = draw(st.sampled_from(TIME_LAYOUTS))
    unit = draw(st.sampled_from((None, "", "%", "fraction")))
    start = dt.datetime(2027, 1, 11, 12)
    header = "site,time_utc,cloud_pct" + (",unit" if unit is not None else "")
    lines = [draw(st.sampled_from((header, header.upper().replace(",", ", "))))]
    for i in range(rows):
        site = _odd(draw, SITES[i % 3], ODD_SITES)
        again = draw(st.integers(0, 19)) == 0  # now and then an hour given twice
        hour = start + dt.timedelta(hours=draw(st.integers(0, 4)) if again else i // 3)
        time = _odd(draw, layout.format(hour), ODD_TIMES)
        fraction = unit == "fraction"
        value = draw(st.integers(0, 100)) / (100 if fraction else 1)
        cloud = _odd(draw, f"{value:g}" if draw(st.booleans()) else f"{value:.3f}", ODD_NUMBERS)
        cells = [site, time, cloud] + ([_odd(draw, unit, ODD_UNITS)] if unit is not None else [])
        lines.append(",".join(cells))
    return "\n".join(lines) + draw(st.sampled_from(("\n", "", "\n\n")))


@st.composite
def activity_files(draw):
    rows = draw(st.integers(1, 14))
    layout = draw(st.sampled_from(TIME_LAYOUTS))
    sd = draw(st.booleans())
    lines = ["start_utc,kp" + (",kp_sd" if sd else "")]
    for i in range(rows):
        again = draw(st.integers(0, 19)) == 0  # now and then a block given twice
        block = dt.datetime(2027, 1, 11) + dt.timedelta(hours=3 * (i // 2 if again else i))
        cells = [_odd(draw, layout.format(block), ODD_TIMES),
                 _odd(draw, draw(st.sampled_from(KP_CELLS[:8])), KP_CELLS)]
        if sd:
            cells.append(_odd(draw, draw(st.sampled_from(("", "0.5", "1.25"))), SD_CELLS))
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


def _both_ways(path, role):
    """(problems, table) read column-wise (even a small file), then row by row."""
    from auroraplan.errors import ProblemList
    from auroraplan.workspace.activity import _load_activity
    from auroraplan.workspace.clouds import _load_clouds

    results = []
    for threshold in (0, 10**12):
        csvcolumns.COLUMNWISE_FROM_BYTES = threshold
        problems = ProblemList()
        table = (_load_clouds(path, "clouds.csv", set(SITES), problems) if role == "clouds"
                 else _load_activity(path, "activity.csv", problems))
        results.append((problems.problems, table))
    return results


@pytest.fixture
def restored_threshold():
    kept = csvcolumns.COLUMNWISE_FROM_BYTES
    yield
    csvcolumns.COLUMNWISE_FROM_BYTES = kept


@pytest.mark.usefixtures("restored_threshold")
@settings(max_examples=500, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(case=st.one_of(cloud_files().map(lambda text: ("clouds", text)),
                      activity_files().map(lambda text: ("activity", text))))
def test_the_column_wise_readers_take_only_what_the_row_reader_takes(tmp_path, case):
    role, text = case
    path = tmp_path / f"{role}.csv"
    path.write_text(text, encoding="utf-8")
    (fast_problems, fast), (slow_problems, slow) = _both_ways(path, role)
    assert fast_problems == slow_problems
    assert (fast is None) == (slow is None) and (fast is None or fast == slow)


def _one_odd_cell(layout, column, odd):
    """A valid clouds.csv in ``layout`` with one cell of ``column`` (0 site, 1 time,
    2 cloud, 3 unit) replaced by ``odd``, on its fifth line."""
    hours = [dt.datetime(2027, 1, 11, 12) + dt.timedelta(hours=h) for h in range(6)]
    rows = [[site, layout.format(h), str(10 * i), "%"] for site in SITES
            for i, h in enumerate(hours)]
    rows[3][column] = odd
    return "site,time_utc,cloud_pct,unit\n" + "".join(",".join(r) + "\n" for r in rows)


@pytest.mark.usefixtures("restored_threshold")
@pytest.mark.parametrize("layout", TIME_LAYOUTS)
def test_one_odd_cell_in_a_valid_file_is_taken_only_as_the_row_reader_takes_it(tmp_path,
                                                                              layout):
    path = tmp_path / "clouds.csv"
    for column, cells in enumerate((ODD_SITES, ODD_TIMES, ODD_NUMBERS, ODD_UNITS)):
        for odd in cells:
            path.write_text(_one_odd_cell(layout, column, odd), encoding="utf-8")
            (fast_problems, fast), (slow_problems, slow) = _both_ways(path, "clouds")
            assert fast_problems == slow_problems, (layout, odd)
            assert (fast is None) == (slow is None), (layout, odd)
            assert fast is None or fast == slow, (layout, odd)


@pytest.mark.parametrize("layout", TIME_LAYOUTS)
def test_each_usual_time_layout_is_read_column_wise(tmp_path, layout):
    # The layouts the row reader takes and that cover nearly every real file are read by
    # the fast path itself (a path that handed everything over would pass the tests above).
    hours = [dt.datetime(2027, 1, 11, 12) + dt.timedelta(hours=h) for h in range(30)]
    (tmp_path / "clouds.csv").write_text(
        "site,time_utc,cloud_pct,unit\n" + "".join(
            f"{site},{layout.format(h)},{(7 * i) % 101},%\n"
            for site in reversed(SITES) for i, h in enumerate(hours)), encoding="utf-8")
    kept = csvcolumns.COLUMNWISE_FROM_BYTES
    try:
        csvcolumns.COLUMNWISE_FROM_BYTES = 0
        table = csvcolumns.read_clouds(tmp_path / "clouds.csv", *CSV_COLUMNS["clouds"],
                                       set(SITES), _cloud_unit,
                                       lambda unit: checks.PERCENT_CELLS[unit][:3])
    finally:
        csvcolumns.COLUMNWISE_FROM_BYTES = kept
    assert table is not None and len(table) == 90
    assert list(table["site"][[0, 30, 60]]) == list(SITES)  # ordered by site, then time
    assert table["time_utc"][0] == np.datetime64("2027-01-11T12:00")
    assert table["cloud_pct"][31] == 7.0


@pytest.mark.usefixtures("restored_threshold")
def test_a_file_mixing_percent_and_fraction_rows_is_read_column_wise_as_row_by_row(tmp_path):
    path = tmp_path / "clouds.csv"
    rows = [f"{site},2027-01-11T{h:02d}:00Z,{(h * 0.04):.2f},fraction" if h % 2 else
            f"{site},2027-01-11T{h:02d}:00Z,{h * 4},%" for site in SITES for h in range(24)]
    path.write_text("site,time_utc,cloud_pct,unit\n" + "\n".join(rows) + "\n", encoding="utf-8")
    (fast_problems, fast), (_, slow) = _both_ways(path, "clouds")
    assert not fast_problems and fast == slow
    assert fast["cloud_pct"][:4] == pytest.approx([0.0, 4.0, 8.0, 12.0])  # 0.04 -> 4 %
    csvcolumns.COLUMNWISE_FROM_BYTES = 0  # the fast path itself took it
    assert csvcolumns.read_clouds(path, *CSV_COLUMNS["clouds"], set(SITES), _cloud_unit,
                                  lambda unit: checks.PERCENT_CELLS[unit][:3]) == fast


def test_a_remembered_checker_answers_a_repeated_cell_as_the_checker_does():
    calls = []

    def checker(text):
        calls.append(text)
        return checks.percent_cell("percent")(text)

    remembered = checks.remembered(checker)
    assert remembered("40") == remembered("40") == 40.0
    for _ in range(2):
        with pytest.raises(ValueError, match=r"^130 is outside 0 to 100 %$"):
            remembered("130")
    assert calls == ["40", "130"]  # each distinct cell checked once


@pytest.mark.usefixtures("restored_threshold")
def test_a_cell_only_arrow_refuses_sends_the_whole_file_to_the_row_reader(tmp_path):
    # Line 4 gives 12:00 again with a lowercase "z", which Python reads and Arrow does
    # not; line 5 has a bad cloud. Reading only the located lines (4 and 5) would miss
    # that line 4 repeats line 2: the row reader must read the whole file.
    path = tmp_path / "clouds.csv"
    path.write_text("site,time_utc,cloud_pct\n"
                    "Aspen Knoll,2027-01-11T12:00Z,10\n"
                    "Aspen Knoll,2027-01-11T13:00Z,20\n"
                    "Aspen Knoll,2027-01-11T12:00z,30\n"
                    "Aspen Knoll,2027-01-11T14:00Z,130\n", encoding="utf-8")
    (fast_problems, fast), (slow_problems, _) = _both_ways(path, "clouds")
    assert fast is None and fast_problems == slow_problems
    assert any("line 4" in p and "also on line 2" in p for p in fast_problems)
    assert any("line 5, cloud_pct" in p for p in fast_problems)


@pytest.mark.usefixtures("restored_threshold")
def test_bad_rows_are_located_column_wise_and_named_as_by_the_whole_file(tmp_path):
    # A bad cloud, an unknown site (twice), a repeated hour and a bad time: only those
    # lines (and the line the repeat repeats) go through the row reader.
    path = tmp_path / "clouds.csv"
    rows = [f"{site},2027-01-11T{h:02d}:00Z,{h}" for site in SITES for h in range(24)]
    rows[5] = "Aspen Knoll,2027-01-11T05:00Z,101"
    rows[30] = rows[30].replace("Birch Flat", "Nowhere Point")
    rows[31] = rows[31].replace("Birch Flat", "Nowhere Point")
    rows[50] = rows[49]
    rows[60] = "Cedar Shore,2027-02-30T12:00Z,5"
    path.write_text("site,time_utc,cloud_pct\n" + "\n".join(rows) + "\n", encoding="utf-8")
    csvcolumns.COLUMNWISE_FROM_BYTES = 0
    found = csvcolumns.read_clouds(path, *CSV_COLUMNS["clouds"], set(SITES), _cloud_unit,
                                   lambda unit: checks.PERCENT_CELLS[unit][:3])
    assert isinstance(found, csvcolumns.Located)
    assert list(found.cells) == [5, 30, 31, 60] and list(found.repeats) == [49, 50]
    (fast_problems, _), (slow_problems, _) = _both_ways(path, "clouds")
    assert fast_problems == slow_problems and len(fast_problems) == 4
    assert any("line 52, time_utc: Cedar Shore at 2027-01-11T01:00Z is also on line 51" in p
               for p in fast_problems)


@pytest.mark.usefixtures("restored_threshold")
@pytest.mark.parametrize("header, between, end", [
    ("site,time_utc,cloud_pct\r\n", "\r\n", "\r\n"),  # Windows line ends
    ("\ufeffsite,time_utc,cloud_pct\n", "\n", ""),  # a byte-order mark, no last line end
    ("site,time_utc,cloud_pct\n\n", "\n\n", "\n\n"),  # blank lines between the rows
])
def test_located_rows_are_named_by_their_lines_in_the_file(tmp_path, header, between, end):
    rows = [f"{site},2027-01-11T{h:02d}:00Z,{h}" for site in SITES for h in range(24)]
    rows[7] = "Aspen Knoll,2027-01-11T07:00Z,170"
    rows[40] = "Nowhere,2027-01-11T01:00Z,5"
    path = tmp_path / "clouds.csv"
    path.write_bytes((header + between.join(rows) + end).encode("utf-8"))
    csvcolumns.COLUMNWISE_FROM_BYTES = 0
    found = csvcolumns.read_clouds(path, *CSV_COLUMNS["clouds"], set(SITES), _cloud_unit,
                                   lambda unit: checks.PERCENT_CELLS[unit][:3])
    assert isinstance(found, csvcolumns.Located) and csvcolumns.located_lines(found)
    (fast_problems, _), (slow_problems, _) = _both_ways(path, "clouds")
    assert fast_problems == slow_problems and len(fast_problems) == 2
    step = 2 if between == "\n\n" else 1
    assert fast_problems[0].startswith(f"clouds.csv line {2 + step * 7 + (step - 1)},")
