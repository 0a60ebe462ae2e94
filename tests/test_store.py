"""The workspace database: creation, forward migration, transactions, damaged files.

Reference for the behaviour checked: the SQLite documentation on write-ahead
logging (https://sqlite.org/wal.html) and atomic commit
(https://sqlite.org/atomiccommit.html): a committed transaction survives the
death of the writing process; an uncommitted one leaves no trace.
"""

import sqlite3

import pytest

from auroraplan import store
from auroraplan.errors import InputError


def test_a_new_database_is_in_wal_mode_at_the_current_schema(tmp_path):
    path = store.database_path(tmp_path)
    with store.open_store(path) as db:
        assert db.query("PRAGMA journal_mode")[0][0] == "wal"
        assert db.query("PRAGMA user_version")[0][0] == store.schema_version()
        names = {r[0] for r in db.query("SELECT name FROM sqlite_master WHERE type='table'")}
    assert {"plans", "outings", "outing_events", "planned_trips"} <= names
    assert path.name == store.DATABASE_NAME


def test_opening_without_create_leaves_no_file(tmp_path):
    assert store.open_store(store.database_path(tmp_path), create=False) is None
    assert list(tmp_path.iterdir()) == []


def test_migrations_are_numbered_one_by_one():
    assert [m.version for m in store.MIGRATIONS] == list(range(1, len(store.MIGRATIONS) + 1))


def test_an_older_database_is_migrated_forward_and_keeps_its_rows(tmp_path, monkeypatch):
    path = store.database_path(tmp_path)
    with store.open_store(path) as db, db.transaction() as con:
        con.execute("INSERT INTO plans (made_at, made_by, command, first_night, last_night, "
                    "trips, inputs) VALUES ('2027-01-10T12:00Z', 'ann', 'week', '2027-01-11', "
                    "'2027-01-17', '[]', '{}')")
    extra = store.Migration(store.schema_version() + 1, "a test table", (
        "CREATE TABLE notes_for_test (id INTEGER PRIMARY KEY, text TEXT)",
        "INSERT INTO notes_for_test (text) SELECT made_by FROM plans",
    ))
    monkeypatch.setattr(store, "MIGRATIONS", store.MIGRATIONS + [extra])
    with store.open_store(path) as db:
        assert db.query("PRAGMA user_version")[0][0] == extra.version
        assert [r[0] for r in db.query("SELECT made_by FROM plans")] == ["ann"]
        assert [r[0] for r in db.query("SELECT text FROM notes_for_test")] == ["ann"]


def test_a_failing_migration_leaves_the_database_as_it_was(tmp_path, monkeypatch):
    path = store.database_path(tmp_path)
    store.open_store(path).close()
    broken = store.Migration(store.schema_version() + 1, "half a step", (
        "CREATE TABLE first_half (id INTEGER)",
        "THIS IS NOT SQL",
    ))
    monkeypatch.setattr(store, "MIGRATIONS", store.MIGRATIONS + [broken])
    with pytest.raises(sqlite3.OperationalError):
        store.open_store(path)
    monkeypatch.undo()
    with store.open_store(path) as db:
        assert db.query("PRAGMA user_version")[0][0] == store.schema_version()
        assert not db.query("SELECT name FROM sqlite_master WHERE name='first_half'")


def test_a_transaction_is_all_or_nothing(tmp_path):
    with store.open_store(store.database_path(tmp_path)) as db:
        with pytest.raises(RuntimeError), db.transaction() as con:
            con.execute("INSERT INTO plans (made_at, made_by, command, first_night, "
                        "last_night, trips, inputs) VALUES ('t', 'b', 'week', 'a', 'b', "
                        "'[]', '{}')")
            raise RuntimeError("stopped half-way")
        assert db.query("SELECT count(*) FROM plans")[0][0] == 0


def test_a_file_that_is_not_a_database_is_one_clear_error(tmp_path):
    path = store.database_path(tmp_path)
    path.write_bytes(b"these are not the bytes of an SQLite file" * 40)
    with pytest.raises(InputError, match="not a readable auroraplan database"):
        store.open_store(path)
    assert path.read_bytes().startswith(b"these are not")


def test_another_programs_sqlite_file_is_refused(tmp_path):
    path = store.database_path(tmp_path)
    con = sqlite3.connect(path)
    con.execute("CREATE TABLE theirs (x)")
    con.commit()
    con.close()
    with pytest.raises(InputError, match="another program"):
        store.open_store(path)


def test_a_database_from_a_newer_release_is_refused(tmp_path):
    path = store.database_path(tmp_path)
    store.open_store(path).close()
    con = sqlite3.connect(path)
    con.execute(f"PRAGMA user_version = {store.schema_version() + 5}")
    con.commit()
    con.close()
    with pytest.raises(InputError, match="newer auroraplan"):
        store.open_store(path)


def test_the_protected_files_name_the_wal_companions(tmp_path):
    names = [p.name for p in store.protected_files(store.database_path(tmp_path))]
    assert names == ["auroraplan.sqlite", "auroraplan.sqlite-wal", "auroraplan.sqlite-shm"]
