"""Reading workspace files as text: UTF-8 checks, CSV rows with their header checked, one problem line per bad field."""

from __future__ import annotations

import csv
import io
import json
import tomllib
from pathlib import Path

from auroraplan.errors import ProblemList

FILE_NAMES = {
    "operator": "operator.toml",
    "sites": "sites.geojson",
    "sites_gpkg": "sites.gpkg",
    "trips": "trips.csv",
    "activity": "activity.csv",
    "clouds": "clouds.csv",
}


CSV_COLUMNS = {
    # role: (required columns, optional columns)
    "trips": (("trip", "group", "guests", "arrive", "depart", "outings"), ("blocked",)),
    "activity": (("start_utc", "kp"), ("kp_sd",)),
    "clouds": (("site", "time_utc", "cloud_pct"), ("unit",)),
    "logbook": (("site", "night", "aurora"), ("hours_out", "cloud_seen", "note", "source")),
}


def _read_text(path: Path, label: str, problems: ProblemList) -> str | None:
    """The file's text, or None with a problem added (not UTF-8, empty, unreadable)."""
    try:
        data = path.read_bytes()
    except OSError as exc:
        problems.add(f"{label}: cannot be read ({exc.strerror}); check the file's permissions")
        return None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        problems.add(
            f"{label} line {line}: not UTF-8 text (byte 0x{data[exc.start]:02x}); "
            "save the file with UTF-8 encoding"
        )
        return None
    if not text.strip():
        problems.add(f"{label}: the file is empty")
        return None
    if "\x00" in text:
        line = text[: text.index("\x00")].count("\n") + 1
        problems.add(
            f"{label} line {line}: holds NUL bytes (UTF-16 or a binary file?); "
            "save the file as UTF-8 text"
        )
        return None
    return text


def _read_csv_rows(text: str, label: str, role: str, problems: ProblemList, numbers=None):
    """(line number, {column: text}) for each data row; header problems are added.

    Blank lines are skipped. An empty list when the header is unusable. ``numbers``: the
    file line number of each data line of ``text`` (some lines of a file, one record
    each), to name them as in the whole file.
    """
    required, optional = CSV_COLUMNS[role]
    reader = csv.reader(io.StringIO(text))
    try:
        header = next(reader)
    except (StopIteration, csv.Error) as exc:
        problems.add(f"{label} line 1: cannot read the header ({exc})")
        return []
    header = [h.strip().lower() for h in header]
    wanted = ", ".join(required + optional)
    missing = [c for c in required if c not in header]
    if missing:
        problems.add(
            f"{label} line 1: missing column{'s' if len(missing) > 1 else ''} "
            f"{', '.join(missing)}; the header needs {wanted}"
        )
        return []
    seen = set()
    for col in header:
        if col in seen and col:
            problems.add(f"{label} line 1: column {col} appears twice; keep one")
        seen.add(col)
    rows = []
    line = end = reader.line_num
    try:
        for fields in reader:
            # A quoted value may span lines: a record is named by the line it starts on.
            line, end = end + 1, reader.line_num
            if numbers is not None:
                line = numbers[line - 2]
            if not any(f.strip() for f in fields):
                continue
            if len(fields) > len(header):
                problems.add(
                    f"{label} line {line}: {len(fields)} fields but the header has "
                    f"{len(header)}; quote values that contain commas"
                )
                continue
            fields = fields + [""] * (len(header) - len(fields))
            rows.append((line, dict(zip(header, fields, strict=True))))
    except csv.Error as exc:
        problems.add(f"{label} line {end + 1}: cannot be read as CSV ({exc})")
    return rows


def _read_checked(found, path: Path, label: str, role: str, problems: ProblemList,
                  check_rows):
    """The table of a forecast file, or None with its problems added.

    ``found`` is what the column-wise reader gave: the table; ``csvcolumns.Located``
    rows, which are then read row by row alone; or None, when the whole file is.
    ``check_rows(rows, problems)`` is the row reader's check: (table or None, the lines
    it found wrong). Located rows stand for the file only when the row reader finds every
    located bad cell wrong; else (a cell Arrow refuses and Python reads) the whole file
    is read, so the problems are always the whole file's.
    """
    from auroraplan import csvcolumns

    if found is not None and not isinstance(found, csvcolumns.Located):
        return found
    if found is not None and (lines := csvcolumns.located_lines(found)) is not None:
        text, numbers, cell_lines = lines
        said = ProblemList()
        _, wrong = check_rows(_read_csv_rows(text, label, role, said, numbers=numbers), said)
        if len(said) and cell_lines <= wrong:
            problems.problems.extend(said.problems)
            return None
    text = _read_text(path, label, problems)
    if text is None:
        return None
    return check_rows(_read_csv_rows(text, label, role, problems), problems)[0]


def _check_field(problems, where, name, checker, value):
    """checker(value), or None with one problem line naming where and the field."""
    try:
        return checker(value)
    except ValueError as exc:
        problems.add(f"{where}, {name}: {exc}" if name else f"{where}: {exc}")
        return None


def _repeated(first_seen: dict, key, where, problems, message: str) -> bool:
    """True (and one problem) when ``key`` was seen before; else remember where it was seen.

    ``message`` may hold ``{first}``, the place of the first occurrence.
    """
    if key in first_seen:
        problems.add(message.replace("{first}", str(first_seen[key])))
        return True
    first_seen[key] = where
    return False


def _unique(made, key, problems: ProblemList, message):
    """(where, record) for each record made, leaving out the None ones and those whose
    ``key(record)`` repeats an earlier one's (one problem each, ``message(where, record)``,
    which may hold ``{first}``: where the first one stands)."""
    first_seen: dict = {}
    for where, rec in made:
        if rec is None or _repeated(first_seen, key(rec), where, problems, message(where, rec)):
            continue
        yield where, rec


def _parse_document(text: str, label: str, problems: ProblemList, kind: str):
    """A TOML (``kind`` "toml") or JSON document parsed, or None with one problem line
    that names the line where the file can say it (JSON) and what to check."""
    try:
        return tomllib.loads(text) if kind == "toml" else json.loads(text)
    except tomllib.TOMLDecodeError as exc:
        problems.add(f"{label}: not valid TOML ({exc}); check quotes and [table] headers")
    except json.JSONDecodeError as exc:
        problems.add(f"{label} line {exc.lineno}: not valid JSON ({exc.msg}, column {exc.colno})")
    except RecursionError:
        nested = "arrays or tables" if kind == "toml" else "lists or objects"
        problems.add(f"{label}: {nested} nested too deeply to read; check the brackets")
    return None
