"""Column-wise reading of the large CSV files (clouds.csv, activity.csv) and their tables.

A forecast file can hold a million rows. Checking it row by row in Python costs tens of
seconds; here the file is split into columns by Apache Arrow's CSV reader (C++, every
cell kept as text) and each column is checked at once:

- columns with few distinct values (site names, cloud and Kp figures, units) are checked
  by the very checker the row-by-row reader uses, once per distinct value, and mapped back;
- time columns, where nearly every value differs, are read from the text's bytes at once
  when they follow a strict ISO 8601 layout (``YYYY-MM-DDTHH:MM[:SS][Z]``, UTC), then held
  to ``checks.FILE_YEARS``.

This path only accepts: whenever a cell fails, or the file has anything it does not vouch
for (a quoted header, a short row, a time with an offset, a repeated hour), it answers
None and the loader reads the file row by row, which finds the bad row and names it in
its usual one line. Files below ``COLUMNWISE_FROM_BYTES`` are read row by row directly
(Arrow's import would cost more than it saves).

The tables (:class:`ActivityTable`, :class:`CloudTable`) are plain numpy columns, so the
commands that read them need no pandas; ``to_frame()`` gives a pandas DataFrame where one
is wanted.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

COLUMNWISE_FROM_BYTES = 256 * 1024
"""Files at least this large are read column-wise (measured: below it the row-by-row
reader takes under 50 ms, about what importing Arrow costs)."""



# ---------------------------------------------------------------------------------------
# Tables
# ---------------------------------------------------------------------------------------


class Columns:
    """Named numpy columns of equal length; ``table["name"]`` gives a column."""

    NAMES: tuple = ()
    TIMES: tuple = ()  # the datetime64[s] UTC columns
    SORT: tuple = ()  # the order rows are kept in

    def __init__(self, **columns):
        for name in self.NAMES:
            setattr(self, name, np.asarray(columns[name]))
        if len({len(getattr(self, n)) for n in self.NAMES}) > 1:
            raise ValueError("columns of different lengths")

    def __len__(self) -> int:
        return len(getattr(self, self.NAMES[0]))

    def __getitem__(self, name):
        if name not in self.NAMES:
            raise KeyError(name)
        return getattr(self, name)

    def __contains__(self, name) -> bool:
        return name in self.NAMES

    @property
    def columns(self) -> list:
        return list(self.NAMES)

    def replace(self, **changes):
        """A copy with some columns replaced."""
        return type(self)(**{n: changes.get(n, getattr(self, n)) for n in self.NAMES})

    def take(self, rows):
        """A copy with the rows selected (a boolean mask or indices)."""
        return type(self)(**{n: getattr(self, n)[rows] for n in self.NAMES})

    def sorted(self):
        """The rows in ``SORT`` order (stable)."""
        if not len(self):
            return self
        keys = [getattr(self, n) for n in reversed(self.SORT)]
        keys = [np.unique(k, return_inverse=True)[1] if k.dtype == object else k for k in keys]
        return self.take(np.lexsort(keys))

    def to_frame(self):
        """A pandas DataFrame, times as aware UTC (imports pandas)."""
        import pandas as pd

        data = {}
        for name in self.NAMES:
            values = getattr(self, name)
            if name in self.TIMES:
                values = pd.Series(pd.to_datetime(values.astype("datetime64[ns]"), utc=True))
            elif values.dtype == object:
                values = pd.Series(values, dtype=object)
            data[name] = values
        return pd.DataFrame(data)

    def csv_text(self) -> str:
        """The rows as CSV text, as pandas' ``to_csv(index=False)`` writes the same table
        (times "YYYY-MM-DD HH:MM:SS+00:00", floats by ``repr``, NaN empty): the text a
        plan's input digest is taken of."""
        columns = []
        for name in self.NAMES:
            values = getattr(self, name)
            if name in self.TIMES:
                text = np.datetime_as_string(values.astype("datetime64[s]"), unit="s")
                columns.append([t.replace("T", " ") + "+00:00" for t in text])
            elif values.dtype.kind == "f":
                columns.append(["" if v != v else repr(float(v)) for v in values.tolist()])
            else:
                columns.append([str(v) for v in values.tolist()])
        lines = [",".join(self.NAMES)] + [",".join(row) for row in zip(*columns, strict=True)]
        return "\n".join(lines) + "\n"

    def __eq__(self, other):
        if type(other) is not type(self):
            return NotImplemented
        return all(np.array_equal(getattr(self, n), getattr(other, n), equal_nan=
                                  getattr(self, n).dtype.kind == "f") for n in self.NAMES)

    __hash__ = None

    def __repr__(self) -> str:
        return f"{type(self).__name__}({len(self)} rows: {', '.join(self.NAMES)})"


class ActivityTable(Columns):
    """activity.csv: ``start_utc`` (datetime64[s] UTC, block starts, ascending), ``kp``
    (float) and ``kp_sd`` (float, NaN = the spread from [activity])."""

    NAMES = ("start_utc", "kp", "kp_sd")
    TIMES = ("start_utc",)
    SORT = ("start_utc",)

    @classmethod
    def from_rows(cls, starts=(), kps=(), sds=()):
        """From the row-by-row reader's lists (aware UTC datetimes)."""
        return cls(start_utc=_datetime64(starts), kp=np.array(kps, dtype=float),
                   kp_sd=np.array(sds, dtype=float)).sorted()


class CloudTable(Columns):
    """clouds.csv: ``site`` (str), ``time_utc`` (datetime64[s] UTC), ``cloud_pct`` (float,
    percent); ordered by site, then time."""

    NAMES = ("site", "time_utc", "cloud_pct")
    TIMES = ("time_utc",)
    SORT = ("site", "time_utc")

    @classmethod
    def from_rows(cls, names=(), times=(), clouds=()):
        """From the row-by-row reader's lists (aware UTC datetimes)."""
        return cls(site=np.array(list(names), dtype=object), time_utc=_datetime64(times),
                   cloud_pct=np.array(clouds, dtype=float)).sorted()


def _datetime64(moments) -> np.ndarray:
    return np.array([m.replace(tzinfo=None) for m in moments], dtype="datetime64[s]")


# ---------------------------------------------------------------------------------------
# Reading column-wise
# ---------------------------------------------------------------------------------------


class _NotVouched(Exception):
    """The column-wise path cannot accept the file; read it row by row."""


def _columns(path: Path, required, optional):
    """Text columns (pyarrow arrays, cells as written) of the wanted columns present."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    data = path.read_bytes()
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        raise _NotVouched from None
    if b"\x00" in data:
        raise _NotVouched
    first = data.split(b"\n", 1)[0].decode("utf-8").rstrip("\r")
    if '"' in first or "\r" in first:
        raise _NotVouched
    header = [h.strip().lower() for h in next(csv.reader(io.StringIO(first)), [])]
    if any(c not in header for c in required) or len(set(header)) < len(header):
        raise _NotVouched
    wanted = [c for c in (*required, *optional) if c in header]
    try:
        table = pcsv.read_csv(
            io.BytesIO(data),
            read_options=pcsv.ReadOptions(skip_rows=1, column_names=header),
            parse_options=pcsv.ParseOptions(newlines_in_values=False, ignore_empty_lines=True),
            convert_options=pcsv.ConvertOptions(
                include_columns=wanted, column_types={c: pa.string() for c in wanted},
                strings_can_be_null=False, quoted_strings_can_be_null=False),
        )
    except (pa.ArrowInvalid, pa.ArrowException):
        raise _NotVouched from None
    if table.num_rows == 0:
        raise _NotVouched
    return {c: table.column(c) for c in wanted}


def _distinct(column, checker, dtype=float):
    """``checker`` applied to each distinct text of a column: (values (K,), index (R,)).

    The checker strips the cell itself, as it does in the row reader."""
    import pyarrow.compute as pc

    distinct = pc.unique(column)
    values = []
    for text in distinct.to_pylist():
        try:
            values.append(checker(text))
        except ValueError:
            raise _NotVouched from None
    index = pc.index_in(column, value_set=distinct)
    return np.array(values, dtype=dtype), index.to_numpy()


def _by_value(column, checker, dtype=float) -> np.ndarray:
    """``checker`` applied to each distinct text of a column, mapped back to every row."""
    values, index = _distinct(column, checker, dtype)
    return values[index]


_TIME_LAYOUTS = {
    # text length: (digit positions, separator positions and characters); all UTC
    16: "dddd-dd-ddTdd:dd",
    17: "dddd-dd-ddTdd:ddZ",
    19: "dddd-dd-ddTdd:dd:dd",
    20: "dddd-dd-ddTdd:dd:ddZ",
}
"""The times the column-wise path reads itself: ISO 8601 in UTC ("Z" or no zone), to the
minute or second. ``checks.parse_utc`` reads each of them to the same instant."""


_MONTH_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def _days_from_civil(year, month, day):
    """Days since 1970-01-01 of proleptic Gregorian dates (arrays), by H. Hinnant's
    algorithm ("chrono-compatible low-level date algorithms", 2013): years from March."""
    y = year - (month <= 2)
    era = y // 400
    yoe = y - era * 400
    doy = (153 * ((month + 9) % 12) + 2) // 5 + day - 1
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy
    return era * 146097 + doe - 719468


def _times(column) -> np.ndarray:
    """ISO 8601 UTC texts of ``_TIME_LAYOUTS`` as datetime64[s], within checks.FILE_YEARS.

    The text bytes are laid out as a (rows, length) array: every character is checked at
    its position and the fields are read as numbers, all at once; dates that do not exist
    (30 February) and hours or minutes out of range are refused.
    """
    import pyarrow as pa

    if isinstance(column, pa.ChunkedArray):
        parts = [_times(chunk) for chunk in column.chunks]
        return np.concatenate(parts) if parts else np.empty(0, dtype="datetime64[s]")
    return _times_of(column)


def _times_of(array) -> np.ndarray:
    """:func:`_times` of one Arrow string array."""
    import pyarrow as pa

    from auroraplan.checks import FILE_YEARS

    if array.null_count or not isinstance(array, pa.StringArray):
        raise _NotVouched
    _, offsets, data = array.buffers()
    offsets = np.frombuffer(offsets, dtype=np.int32)[array.offset:array.offset + len(array) + 1]
    text = np.frombuffer(data, dtype=np.uint8)
    lengths = np.diff(offsets)
    out = np.empty(len(array), dtype="datetime64[s]")
    for length in np.unique(lengths):
        layout = _TIME_LAYOUTS.get(int(length))
        if layout is None:
            raise _NotVouched
        rows = np.flatnonzero(lengths == length)
        start = offsets[rows[0]]
        if rows.size == len(array) and offsets[-1] - start == rows.size * length:
            cells = text[start:start + rows.size * length].reshape(rows.size, length)
        else:
            cells = text[offsets[rows][:, None] + np.arange(length)]  # (rows, length) bytes
        low = np.array([48 if c == "d" else ord(c) for c in layout], dtype=np.uint8)
        high = np.array([57 if c == "d" else ord(c) for c in layout], dtype=np.uint8)
        if not np.all((cells >= low) & (cells <= high)):
            raise _NotVouched

        def field(at, width, cells=cells):
            total = cells[:, at].astype(np.int64) - 48
            for i in range(1, width):
                total = total * 10 + cells[:, at + i] - 48
            return total

        year, month, day = field(0, 4), field(5, 2), field(8, 2)
        hour, minute = field(11, 2), field(14, 2)
        second = field(17, 2) if length >= 19 else 0
        if (np.any((year < FILE_YEARS[0]) | (year > FILE_YEARS[1])) or np.any(month < 1)
                or np.any(month > 12) or np.any(day < 1) or np.any(hour > 23)
                or np.any(minute > 59) or np.any(second > 59)):
            raise _NotVouched
        leap = (year % 4 == 0) & ((year % 100 != 0) | (year % 400 == 0))
        if np.any(day > _MONTH_DAYS[month - 1] + (leap & (month == 2))):
            raise _NotVouched  # a day the month does not have
        seconds = _days_from_civil(year, month, day) * 86400 + hour * 3600 + minute * 60 + second
        out[rows] = seconds.astype("datetime64[s]")
    return out


def read_activity(path: Path, required, optional, kp, kp_sd, block_s) -> ActivityTable | None:
    """activity.csv column-wise; None when only the row-by-row reader can say what is wrong.

    ``kp`` and ``kp_sd`` are the row reader's cell checkers; ``block_s`` the block length
    in seconds that every start must be a multiple of (UTC)."""
    if path.stat().st_size < COLUMNWISE_FROM_BYTES:
        return None
    try:
        columns = _columns(path, required, optional)
        starts = _times(columns["start_utc"])
        seconds = starts.astype(np.int64)
        if np.any(seconds % block_s):
            return None
        order = None if np.all(np.diff(seconds) > 0) else np.argsort(seconds, kind="stable")
        if order is not None and np.any(np.diff(seconds[order]) == 0):
            return None  # a repeated block: the row reader names both lines
        kps = _by_value(columns["kp"], kp)
        sds = (_by_value(columns["kp_sd"], kp_sd) if "kp_sd" in columns
               else np.full(len(starts), np.nan))
    except _NotVouched:
        return None
    table = ActivityTable(start_utc=starts, kp=kps, kp_sd=sds)
    return table if order is None else table.take(order)


def read_clouds(path: Path, required, optional, site_names, unit_of, cloud_in,
                default_unit="percent") -> CloudTable | None:
    """clouds.csv column-wise; None when only the row-by-row reader can say what is wrong.

    ``unit_of(text)`` reads the ``unit`` cell, ``cloud_in(unit)`` gives the checker of a
    cloud cell in that unit (returning percent): the row reader's own checkers. Sites not
    in ``site_names``, a repeated site and hour, or a file whose values all look like
    fractions are left to the row reader, which names them."""
    if site_names is None or path.stat().st_size < COLUMNWISE_FROM_BYTES:
        return None
    import pyarrow as pa

    from auroraplan import checks

    try:
        columns = _columns(path, required, optional)

        def site(text):
            name = checks.text(text)
            if name not in site_names:
                raise ValueError(name)
            return name

        distinct, code = _distinct(columns["site"], site, dtype=object)
        times = _times(columns["time_utc"])
        said = default_unit == "fraction"
        if "unit" in columns:
            words, unit_code = _distinct(columns["unit"], lambda t: unit_of(t) if t.strip()
                                         else default_unit, dtype=object)
            said = said or any(t.strip() for t in columns["unit"].dictionary_encode()
                               .dictionary.to_pylist())
        else:
            words, unit_code = np.array([default_unit], dtype=object), np.zeros(len(times), int)
        cloud = np.empty(len(times))
        percent = np.zeros(len(times), bool)
        for u, unit in enumerate(words):
            rows = unit_code == u
            if rows.all():
                cloud = _by_value(columns["cloud_pct"], cloud_in(unit))
            elif rows.any():
                cloud[rows] = _by_value(columns["cloud_pct"].filter(pa.array(rows)),
                                        cloud_in(unit))
            percent |= rows & (unit == "percent")
    except _NotVouched:
        return None
    largest = np.max(np.where(percent, cloud, 100.0))
    if not said and 0.0 < largest <= 1.0:
        return None
    # Rows by site name, then time (stable), as the row reader keeps them.
    rank = np.empty(len(distinct), dtype=np.int64)
    rank[np.argsort(distinct, kind="stable")] = np.arange(len(distinct))
    site_rank = rank[code]
    step_site, step_time = np.diff(site_rank), np.diff(times.astype(np.int64))
    if not np.all((step_site > 0) | ((step_site == 0) & (step_time >= 0))):
        order = np.lexsort((times, site_rank))
        site_rank, times, code, cloud = site_rank[order], times[order], code[order], cloud[order]
        step_site, step_time = np.diff(site_rank), np.diff(times.astype(np.int64))
    if np.any((step_site == 0) & (step_time == 0)):
        return None  # a repeated site and hour: the row reader names both lines
    return CloudTable(site=distinct[code], time_utc=times, cloud_pct=cloud)
