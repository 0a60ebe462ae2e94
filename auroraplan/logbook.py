"""What the guides saw: logbook entries, their CSV file and their place in the workspace database.

A logbook entry says, for one site and night, whether aurora was seen
(none / faint / clear / strong), how cloudy it was, when the group was out,
a note and where the entry came from. The same entry imported twice is
stored once: each entry is known by a digest of its normalised fields
(`entry_key`), which is unique in the database.

The CSV file (``logbook.csv`` by default) has a header line and one row per
entry; `COLUMNS` lists the columns and `read_logbook_csv` checks every row.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import math
import re
from dataclasses import astuple, dataclass

AURORA_LEVELS = ("none", "faint", "clear", "strong")
"""What was seen, weakest first: none; faint (seen by eye as a pale arc or glow, often
clearer on a camera); clear (plainly seen, with structure or colour); strong (bright,
moving, lighting the ground). The words are the guide's own judgement."""

LEVEL_WORDS = {"no": "none", "nothing": "none", "0": "none", "1": "faint", "2": "clear",
               "3": "strong"}
"""Other spellings accepted in the CSV file and on the command line."""

COLUMNS = {
    "site": "site name exactly as in the sites file (required)",
    "night": "local date of the evening, YYYY-MM-DD (required)",
    "aurora": "none, faint, clear or strong (required; 'no' reads as none)",
    "hours_out": "local clock times out at the site, HH:MM-HH:MM, e.g. 20:30-23:45 (optional)",
    "cloud_seen": "cloud cover seen, percent 0-100 or oktas as N/8 (optional)",
    "note": "free text (optional)",
    "source": "who or what made the entry, e.g. a guide's name or 'run sheet' (optional)",
}
"""Columns of the logbook CSV file; extra columns are ignored."""

REQUIRED = ("site", "night", "aurora")

@dataclass(frozen=True)
class Entry:
    """One logbook entry, normalised."""

    site: str
    night: str  # YYYY-MM-DD
    aurora: str  # one of AURORA_LEVELS
    out_from: str | None = None  # HH:MM local
    out_until: str | None = None
    cloud_pct: float | None = None
    note: str = ""
    source: str = ""

    @property
    def key(self) -> str:
        """Digest of every field: the same observation written twice has the same key."""
        text = "\x1f".join("" if v is None else (f"{v:.6g}" if isinstance(v, float) else str(v))
                           for v in astuple(self))
        return hashlib.sha256(text.encode("utf-8")).hexdigest()

    def seen(self, threshold: str = "faint") -> bool:
        """True when aurora at or above ``threshold`` was seen."""
        return AURORA_LEVELS.index(self.aurora) >= AURORA_LEVELS.index(threshold)


# --------------------------------------------------------------------------------------
# checking one field


_CONTROL_RE = re.compile(r"[\x00-\x08\x0b-\x1f\x7f\ud800-\udfff]")
_CLOCK_RE = re.compile(r"^(\d{1,2}):(\d{2})$")
_OKTAS_RE = re.compile(r"^([0-8])\s*/\s*8$")
MAX_TEXT = 2000
"""Longest note or source kept; longer text is refused rather than cut."""


def aurora_level(text) -> str:
    """One of AURORA_LEVELS from its word (any case) or LEVEL_WORDS."""
    raw = str(text).strip().lower()
    level = LEVEL_WORDS.get(raw, raw)
    if level not in AURORA_LEVELS:
        raise ValueError(f"{raw[:40]!r} is not a level; give none, faint, clear or strong")
    return level


def night_date(text) -> str:
    """A local evening date YYYY-MM-DD."""
    raw = str(text).strip()
    try:
        value = dt.date.fromisoformat(raw)
    except ValueError:
        raise ValueError(f"{raw[:40]!r} is not a date; give YYYY-MM-DD, e.g. 2027-01-12") from None
    return value.isoformat()


def _clock(text: str) -> str:
    m = _CLOCK_RE.match(text.strip())
    if not m or int(m.group(1)) > 24 or int(m.group(2)) > 59 or (
            int(m.group(1)) == 24 and int(m.group(2))):
        raise ValueError(f"{text.strip()[:20]!r} is not a clock time")
    return f"{int(m.group(1)):02d}:{m.group(2)}"


def hours_out(text) -> tuple[str | None, str | None]:
    """(from, until) local clock times from 'HH:MM-HH:MM'; (None, None) when empty."""
    raw = str(text or "").strip()
    if not raw:
        return None, None
    parts = re.split(r"\s*[-–—]\s*|\s+to\s+", raw)
    try:
        if len(parts) != 2:
            raise ValueError(raw)
        start, end = _clock(parts[0]), _clock(parts[1])
    except ValueError:
        raise ValueError(f"{raw[:40]!r} is not a span of clock times; give HH:MM-HH:MM, "
                         "e.g. 20:30-23:45") from None
    if start == end:
        raise ValueError(f"{raw!r} is an empty span; give the times out, e.g. 20:30-23:45")
    return start, end


def cloud_seen(text) -> float | None:
    """Cloud cover in percent from '0'..'100' (a % sign allowed) or oktas 'N/8'; None when
    empty. One okta is an eighth of the sky (WMO Manual on Codes, code table 2700)."""
    raw = str(text or "").strip()
    if not raw:
        return None
    m = _OKTAS_RE.match(raw)
    if m:
        return round(100.0 * int(m.group(1)) / 8.0, 1)
    try:
        value = float(raw.rstrip("%").strip())
    except ValueError:
        raise ValueError(f"{raw[:40]!r} is not a cloud cover; give a percent 0-100 or oktas "
                         "such as 3/8") from None
    if not (math.isfinite(value) and 0.0 <= value <= 100.0):
        raise ValueError(f"{raw[:40]!r} is outside 0 to 100 percent")
    return value


def free_text(text) -> str:
    """A note or source: printable, at most MAX_TEXT characters."""
    raw = str(text or "").replace("\r\n", "\n").replace("\r", "\n").strip()
    bad = _CONTROL_RE.search(raw)
    if bad:
        raise ValueError(f"holds a control or broken character (U+{ord(bad.group()):04X}); "
                         "retype the text")
    if len(raw) > MAX_TEXT:
        raise ValueError(f"is {len(raw)} characters long; keep it under {MAX_TEXT}")
    return raw


def make_entry(fields: dict, site_names=None) -> tuple[Entry | None, list[tuple[str, str]]]:
    """An Entry from raw text fields, or None and (field, problem) pairs."""
    problems: list[tuple[str, str]] = []

    def take(name, reader, default=None):
        try:
            return reader(fields.get(name, ""))
        except ValueError as exc:
            problems.append((name, str(exc)))
            return default

    site = str(fields.get("site", "") or "").strip()
    if not site:
        problems.append(("site", "is empty; give the site's name as in the sites file"))
    elif site_names is not None and site not in site_names:
        problems.append(("site", f"{site[:60]!r} is not a site of this workspace; use the name "
                                 "exactly as in the sites file"))
    night = take("night", night_date)
    aurora = take("aurora", aurora_level)
    out_from, out_until = take("hours_out", hours_out, (None, None))
    cloud = take("cloud_seen", cloud_seen)
    note = take("note", free_text, "")
    source = take("source", free_text, "")
    if problems:
        return None, problems
    return Entry(site=site, night=night, aurora=aurora, out_from=out_from, out_until=out_until,
                 cloud_pct=cloud, note=note, source=source), []


# --------------------------------------------------------------------------------------
# the CSV file


def read_logbook_csv(path, site_names=None) -> list[Entry]:
    """Every entry of a logbook CSV file, checked.

    Parameters
    ----------
    path : str or Path
    site_names : set of str, optional
        The workspace's site names; an entry for another site is an error.

    Raises
    ------
    InputError
        One line per bad row naming the file, the line (the header is line 1), the
        column and what is allowed; nothing is imported when any row is bad.
    """
    from auroraplan.workspace import read_command_csv

    label, rows, problems = read_command_csv(
        path, "logbook", f"give a logbook CSV file with the columns {', '.join(COLUMNS)}")
    problems.raise_if_any()
    entries = []
    from auroraplan.escape import cell_as_written

    for line, row in rows:
        # A cell written with a leading quote so that no spreadsheet runs it (by
        # entries_csv or the run sheet's form) is read as it was before.
        entry, bad = make_entry({k: cell_as_written(v) for k, v in row.items()}, site_names)
        if bad:
            problems.add(f"{label} line {line}: " + "; ".join(f"{f}: {msg}" for f, msg in bad))
        else:
            entries.append(entry)
    problems.raise_if_any()
    return entries


def entries_csv(entries) -> str:
    """Entries as logbook CSV text (the format `read_logbook_csv` reads); a cell a
    spreadsheet would run as a formula has a leading single quote, which the reader drops."""
    from auroraplan.escape import spreadsheet_text

    return spreadsheet_text(list(COLUMNS), [
        [e.site, e.night, e.aurora, f"{e.out_from}-{e.out_until}" if e.out_from else "",
         "" if e.cloud_pct is None else f"{e.cloud_pct:g}", e.note, e.source] for e in entries])


# --------------------------------------------------------------------------------------
# the database


def store_entries(store, entries, now=None) -> tuple[int, int]:
    """Add entries in one transaction; an entry already stored is skipped.

    Returns
    -------
    (added, already) : counts of new entries and of entries that were stored before
    (or appear twice in ``entries``).
    """
    added_at = (now or dt.datetime.now(dt.UTC)).astimezone(dt.UTC).isoformat(timespec="seconds")
    added = 0
    with store.transaction() as con:
        for e in entries:
            cur = con.execute(
                "INSERT OR IGNORE INTO logbook (entry_key, site, night, out_from, out_until, "
                "aurora, cloud_pct, note, source, added_at) VALUES (?,?,?,?,?,?,?,?,?,?)",
                (e.key, e.site, e.night, e.out_from, e.out_until, e.aurora, e.cloud_pct,
                 e.note, e.source, added_at))
            added += cur.rowcount
    return added, len(entries) - added


def stored_entries(store, first: str | None = None, last: str | None = None) -> list[Entry]:
    """Entries whose night lies in [first, last] (ISO dates; None = open), by night and site."""
    rows = store.query(
        "SELECT site, night, aurora, out_from, out_until, cloud_pct, note, source FROM logbook "
        "WHERE night >= ? AND night <= ? ORDER BY night, site, id",
        (first or "0000-00-00", last or "9999-99-99"))
    return [Entry(**dict(r)) for r in rows]
