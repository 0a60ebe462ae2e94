"""The guides' logbook: reading the CSV file, one line per bad row, idempotent import,
and a crash during an import leaving the database as it was."""

import shutil
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from auroraplan import logbook, store
from auroraplan.errors import InputError

DEMO = Path(__file__).resolve().parent.parent / "demo_sites"
SITES = {"Island Lake", "Harbour Steps", "Sound Bay"}

GOOD = textwrap.dedent("""\
    site,night,aurora,hours_out,cloud_seen,note,source
    Island Lake,2027-01-12,clear,20:30-23:45,20,"green arc, then corona",Ada
    Harbour Steps,2027-01-12,No,,7/8,,Ada
    Sound Bay,2027-01-13,strong,21:00 – 01:30,0%,,run sheet
    """)


def _write(tmp_path, text, name="logbook.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _dump(path):
    con = sqlite3.connect(path)
    rows = con.execute("SELECT entry_key, site, night, out_from, out_until, aurora, cloud_pct, "
                       "note, source FROM logbook ORDER BY entry_key").fetchall()
    con.close()
    return rows


def test_reads_every_column_in_its_normal_form(tmp_path):
    entries = logbook.read_logbook_csv(_write(tmp_path, GOOD), SITES)
    assert [e.aurora for e in entries] == ["clear", "none", "strong"]
    assert (entries[0].out_from, entries[0].out_until) == ("20:30", "23:45")
    assert (entries[2].out_from, entries[2].out_until) == ("21:00", "01:30")
    # 7 oktas of 8 is 87.5 % of the sky (WMO code table 2700)
    assert entries[1].cloud_pct == 87.5
    assert entries[0].note == "green arc, then corona"
    assert entries[1].seen() is False and entries[0].seen("clear") and not entries[0].seen("strong")


def test_a_bad_row_is_one_line_naming_the_row_and_the_field(tmp_path):
    text = GOOD + "Island Lake,2027-01-14,maybe,,,,\nNowhere,2027-02-30,none,,150,,\n"
    with pytest.raises(InputError) as err:
        logbook.read_logbook_csv(_write(tmp_path, text), SITES)
    lines = err.value.problems
    assert len(lines) == 2
    assert "line 5" in lines[0] and "aurora" in lines[0] and "none, faint, clear or strong" in lines[0]
    assert "line 6" in lines[1] and "site" in lines[1] and "night" in lines[1]
    assert "cloud_seen" in lines[1]


def test_a_missing_column_names_the_header(tmp_path):
    with pytest.raises(InputError) as err:
        logbook.read_logbook_csv(_write(tmp_path, "site,night\nIsland Lake,2027-01-12\n"), SITES)
    assert "line 1" in err.value.problems[0] and "aurora" in err.value.problems[0]


def test_the_same_entry_twice_is_stored_once(tmp_path):
    db_path = tmp_path / store.DATABASE_NAME
    entries = logbook.read_logbook_csv(_write(tmp_path, GOOD), SITES)
    with store.open_store(db_path) as db:
        assert logbook.store_entries(db, entries) == (3, 0)
    first = _dump(db_path)
    with store.open_store(db_path) as db:
        assert logbook.store_entries(db, entries + entries[:1]) == (0, 4)
    assert _dump(db_path) == first
    # a changed note is a different entry
    changed = logbook.Entry(**{**entries[0].__dict__, "note": "corona at 22:10"})
    with store.open_store(db_path) as db:
        assert logbook.store_entries(db, [changed]) == (1, 0)
        assert len(logbook.stored_entries(db, "2027-01-12", "2027-01-12")) == 3


def test_an_error_during_an_import_leaves_the_database_as_it_was(tmp_path):
    db_path = tmp_path / store.DATABASE_NAME
    entries = logbook.read_logbook_csv(_write(tmp_path, GOOD), SITES)
    with store.open_store(db_path) as db:
        logbook.store_entries(db, entries[:1])
    before = _dump(db_path)

    class Broken:
        @property
        def key(self):
            raise RuntimeError("disk gone")

    with store.open_store(db_path) as db, pytest.raises(RuntimeError):
        logbook.store_entries(db, entries[1:] + [Broken()])
    assert _dump(db_path) == before


def test_a_process_killed_during_an_import_leaves_the_database_as_it_was(tmp_path):
    # The process dies (os._exit: no rollback, no clean-up) after writing some rows of
    # its transaction; SQLite's write-ahead log keeps the last commit (sqlite.org/wal.html).
    db_path = tmp_path / store.DATABASE_NAME
    csv_path = _write(tmp_path, GOOD)
    with store.open_store(db_path) as db:
        logbook.store_entries(db, logbook.read_logbook_csv(csv_path, SITES)[:1])
    before = _dump(db_path)
    script = textwrap.dedent(f"""
        import os
        from auroraplan import logbook, store
        entries = logbook.read_logbook_csv({str(csv_path)!r})

        def dying():
            yield from entries[1:]
            os._exit(9)

        class Entries(list):
            def __iter__(self):
                return dying()

        with store.open_store({str(db_path)!r}) as db:
            logbook.store_entries(db, Entries(entries))
    """)
    result = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True)
    assert result.returncode == 9, result.stderr
    assert _dump(db_path) == before


@pytest.fixture
def workspace(tmp_path):
    ws = tmp_path / "ws"
    shutil.copytree(DEMO, ws, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
    return ws


def _cli(*argv):
    return subprocess.run([sys.executable, "-m", "auroraplan.cli", *map(str, argv)],
                          capture_output=True, text=True)


def test_import_on_the_command_line_twice_and_a_bad_file(workspace, tmp_path):
    good = _write(tmp_path, GOOD.replace("Island Lake", "Island Lake"))
    first = _cli("logbook", "import", workspace, good)
    assert first.returncode == 0, first.stderr
    assert "3 added" in first.stdout
    again = _cli("logbook", "import", workspace, good)
    assert "0 added, 3 already" in again.stdout
    before = _dump(workspace / store.DATABASE_NAME)
    bad = _write(tmp_path, GOOD + "Island Lake,2027-01-14,maybe,,,,\n", "bad.csv")
    result = _cli("logbook", "import", workspace, bad)
    assert result.returncode == 2
    assert result.stderr.count("\n") == 1 and "line 5" in result.stderr
    assert "Traceback" not in result.stderr
    assert _dump(workspace / store.DATABASE_NAME) == before
    assert bad.read_text(encoding="utf-8").endswith("maybe,,,,\n")  # the input is untouched


def test_add_one_entry_on_the_command_line(workspace):
    args = ("logbook", "add", workspace, "--site", "Island Lake", "--night", "2027-01-12",
            "--aurora", "faint", "--hours-out", "21:00-23:00", "--cloud", "40")
    assert _cli(*args).returncode == 0
    assert "already" in _cli(*args).stdout
    bad = _cli("logbook", "add", workspace, "--site", "Island Lake", "--night", "2027-01-12",
               "--aurora", "bright")
    assert bad.returncode == 2 and "--aurora" in bad.stderr and bad.stderr.count("\n") == 1
    listed = _cli("logbook", "list", workspace, "--json")
    assert '"aurora": "faint"' in listed.stdout
