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

from auroraplan import csvcolumns
from auroraplan.errors import InputError
from auroraplan.workspace import load_workspace

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


def test_a_file_it_cannot_vouch_for_is_read_row_by_row_with_the_same_result(big, tmp_path,
                                                                            monkeypatch):
    # Times with an offset and a percent unit column: the row reader's business.
    folder = shutil.copytree(big, tmp_path / "ws")
    text = (folder / "clouds.csv").read_text(encoding="utf-8").splitlines()
    text[0] += ",unit"
    text[1:] = [line.replace("Z,", "+00:00,") + ",%" for line in text[1:]]
    (folder / "clouds.csv").write_text("\n".join(text) + "\n", encoding="utf-8")
    args = ("site", "time_utc", "cloud_pct"), ("unit",), {"Bench site 001"}, str, str
    assert csvcolumns.read_clouds(folder / "clouds.csv", *args) is None
    assert load_workspace(folder).clouds == load_workspace(big).clouds


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
