"""Writing outputs: nothing the user owns is replaced, lost or left half-written."""

import errno
import os
import shutil
import stat
from pathlib import Path

import pytest
from broken_files import BrokenFile

from auroraplan import cli, outfiles
from auroraplan.errors import InputError

ROOT = Path(__file__).resolve().parents[1]
BASE = ROOT / "tests" / "bad_inputs" / "base"


@pytest.fixture(autouse=True)
def _fresh():
    outfiles.reset()
    yield
    outfiles.reset()


@pytest.fixture
def ws(tmp_path):
    folder = tmp_path / "ws"
    shutil.copytree(BASE, folder)
    return folder


def test_every_input_a_workspace_may_read_is_listed(ws, tmp_path):
    (ws / "operator.toml").write_text((ws / "operator.toml").read_text().replace(
        "sd_max = 2.0", 'sd_max = 2.0\nhistory_file = "../kp.txt"'))
    (tmp_path / "kp.txt").write_text("history")
    (ws / "weather").mkdir()
    (ws / "notes.md").write_text("the operator's own notes")
    (ws / "store.sqlite").write_text("")
    files, folders = outfiles.workspace_inputs(ws)
    real = {Path(os.path.realpath(p)) for p in files}
    for name in ("operator.toml", "sites.geojson", "trips.csv", "activity.csv", "clouds.csv",
                 "basemap.geojson", "auroraplan.sqlite", "notes.md", "store.sqlite-wal"):
        assert Path(os.path.realpath(ws / name)) in real, name
    assert Path(os.path.realpath(tmp_path / "kp.txt")) in real
    assert Path(os.path.realpath(ws / "weather")) in folders


def test_every_file_name_a_loader_reads_is_an_input_even_while_missing():
    from auroraplan.report import BASEMAP_FILES
    from auroraplan.store import DATABASE_NAME
    from auroraplan.workspace import FILE_NAMES, SOLARWIND_FILE

    read = {*FILE_NAMES.values(), SOLARWIND_FILE, *BASEMAP_FILES, DATABASE_NAME}
    assert read <= set(outfiles.INPUT_NAMES), read - set(outfiles.INPUT_NAMES)


def test_a_replaced_file_keeps_its_mode_and_a_new_file_gets_the_usual_one(tmp_path):
    old = tmp_path / "plan.csv"
    old.write_text("old\n")
    old.chmod(0o640)
    outfiles.write_text_atomic(old, "new\n")
    assert old.read_text() == "new\n" and stat.S_IMODE(old.stat().st_mode) == 0o640
    new = tmp_path / "fresh.csv"
    outfiles.write_text_atomic(new, "x")
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(new.stat().st_mode) == 0o666 & ~mask


def test_a_link_keeps_pointing_at_its_file_which_is_written(tmp_path):
    target = tmp_path / "plans" / "w02.csv"
    target.parent.mkdir()
    target.write_text("old\n")
    link = tmp_path / "latest.csv"
    link.symlink_to(target)
    outfiles.write_text_atomic(link, "new\n")
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert target.read_text() == "new\n"


def test_a_read_only_file_is_refused_and_kept(tmp_path):
    out = tmp_path / "plan.csv"
    out.write_text("keep me\n")
    out.chmod(0o444)
    with pytest.raises(InputError, match="read-only"):
        outfiles.write_text_atomic(out, "new\n")
    assert out.read_text() == "keep me\n" and stat.S_IMODE(out.stat().st_mode) == 0o444


def test_a_device_is_refused():
    with pytest.raises(InputError, match="not a regular file"):
        outfiles.check_output_path("/dev/null")


def test_an_unwritable_folder_is_found_before_the_work(ws, tmp_path, monkeypatch):
    # As root every folder is writable, so the refusal of the probe file is simulated.
    def refused(**kwargs):
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(outfiles.tempfile, "mkstemp", refused)
    calls = []
    monkeypatch.setattr("auroraplan.report.week_report", lambda *a, **k: calls.append(a))
    code = cli.main(["week", str(ws), "--start", "2027-01-11", "--nights", "1",
                     "--csv", str(tmp_path / "w.csv")])
    assert code == 2 and calls == []


def test_disk_full_on_the_second_output_leaves_both_untouched(ws, tmp_path, monkeypatch, capsys):
    out = tmp_path / "out"
    out.mkdir()
    first, second = out / "ranked.csv", out / "outings.ics"
    first.write_text("last week's ranking\n")
    real_fdopen = os.fdopen
    opened = []

    def disk_full(fh, data):
        raise OSError(errno.ENOSPC, "No space left on device")

    def fdopen(fd, mode):
        opened.append(fd)
        return (real_fdopen(fd, mode) if len(opened) == 1
                else BrokenFile(real_fdopen(fd, mode), disk_full))

    monkeypatch.setattr(outfiles.os, "fdopen", fdopen)
    code = cli.main(["week", str(ws), "--start", "2027-01-11", "--nights", "1",
                     "--csv", str(first), "--ics", str(second)])
    err = capsys.readouterr().err
    assert code == 2
    assert err.count("\n") == 1 and "the disk is full" in err
    assert "none of the outputs was written" in err
    assert first.read_text() == "last week's ranking\n" and not second.exists()
    assert sorted(p.name for p in out.iterdir()) == ["ranked.csv"]


def test_a_set_interrupted_while_being_made_changes_no_file(tmp_path, monkeypatch):
    outputs = {tmp_path / f"{i}.txt": f"new {i}" for i in range(4)}
    for path in outputs:
        path.write_text("old")
    real = outfiles._stage
    made = []

    def stage(*args):
        if len(made) == 2:
            raise KeyboardInterrupt
        made.append(args)
        return real(*args)

    monkeypatch.setattr(outfiles, "_stage", stage)
    with pytest.raises(KeyboardInterrupt):
        outfiles.write_files(outputs)
    assert all(p.read_text() == "old" for p in outputs)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["0.txt", "1.txt", "2.txt", "3.txt"]
    assert outfiles.written == []


def test_interrupted_message_names_what_was_written_whole(tmp_path, monkeypatch, capsys):
    out = tmp_path / "oval.png"

    def interrupt(*args):
        raise KeyboardInterrupt

    real = outfiles.write_files

    def write_then_stop(outputs):
        done = real(outputs)
        interrupt()
        return done

    monkeypatch.setattr(outfiles, "write_files", write_then_stop)
    code = cli.main(["oval", "--kp", "5", "--png", str(out)])
    err = capsys.readouterr().err
    assert code == 130 and out.exists()
    assert err.count("\n") == 1 and f"written whole before that: {out}" in err


def test_an_output_folder_may_not_be_the_workspace_or_inside_it(ws, tmp_path, capsys):
    code = cli.main(["publish", str(ws), "--start", "2027-01-11", "--nights", "1",
                     "--out", str(ws / "out")])
    assert code == 2 and "inside it" in capsys.readouterr().err
    assert not (ws / "out").exists()


def test_publish_interrupted_leaves_the_earlier_outputs_as_they_were(ws, tmp_path, monkeypatch,
                                                                      capsys):
    out = tmp_path / "out"
    out.mkdir()
    earlier = {"index.html": "earlier index", "week.csv": "earlier week", "mine.txt": "mine"}
    for name, text in earlier.items():
        (out / name).write_text(text)

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr("auroraplan.render.charts.week_heatmap_png", interrupted)
    code = cli.main(["publish", str(ws), "--start", "2027-01-11", "--nights", "1",
                     "--out", str(out)])
    assert code == 130
    assert capsys.readouterr().err.endswith("interrupted; no output was written\n")
    assert {p.name: p.read_text() for p in out.iterdir()} == earlier


def test_publish_disk_full_on_one_file_leaves_the_folder_as_it_was(ws, tmp_path, monkeypatch,
                                                                     capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "index.html").write_text("earlier index")
    real = outfiles._stage
    staged = []

    def stage(target, payload, shown, count):
        if len(staged) == 3:
            raise InputError(f"{shown}: cannot be written (the disk is full); none of the "
                             "outputs was written; free some space or choose another folder")
        staged.append(target)
        return real(target, payload, shown, count)

    monkeypatch.setattr(outfiles, "_stage", stage)
    code = cli.main(["publish", str(ws), "--start", "2027-01-11", "--nights", "1",
                     "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and "none of the outputs was written" in err
    assert {p.name: p.read_text() for p in out.iterdir()} == {"index.html": "earlier index"}
