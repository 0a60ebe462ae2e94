"""Column-wise reading of the large CSV files (clouds.csv, activity.csv) and their tables.

A forecast file can hold a million rows. Checking it row by row in Python costs tens of
seconds; here Apache Arrow's CSV reader (C++, on all cores) splits and types the file and
each column is checked as a whole:

- text columns (site names, Kp figures, units) come dictionary-encoded: each distinct
  cell goes once through the very checker the row-by-row reader uses (a site name the
  sites file gives is taken as it is), and the result is mapped back to every row;
- number columns (cloud, Kp spread) are read by Arrow's decimal reader, which takes a
  subset of what Python's ``float`` takes and gives the same double, so only the range
  (and a written-out "nan") is left to check, on the whole array;
- time columns are read by Arrow's ISO 8601 reader after one check of the bytes that every
  time gives the minutes (:func:`_times` says which forms, all read by
  ``checks.parse_utc`` to the same instant); UTF-8 is checked by Arrow as it converts.

This path only accepts. Where cells fail, or hours repeat, it marks their rows on the
arrays and answers :class:`Located`: the loader reads just those lines row by row, whose
one-line errors name them as in the whole file (and reads the whole file instead when the
row reader finds a marked cell fine: a form Python reads and Arrow does not). Where it
cannot split the file at all (a quoted header, a short row, a number Arrow cannot read)
it answers None and the loader reads the whole file row by row. Every row is checked, not
only those of the nights a command asks for: the same file gives the same errors whatever
the command or its dates. Files below ``COLUMNWISE_FROM_BYTES`` are read row by row
directly (Arrow's import would cost more than it saves).

The tables (:class:`ActivityTable`, :class:`CloudTable`) are plain numpy columns, so the
commands that read them need no pandas; ``to_frame()`` gives a pandas DataFrame where one
is wanted.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from auroraplan.checks import FILE_YEARS

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


class NotRead:
    """Stands for the table of a file the command did not read, since it does not use it
    (``load_workspace(path, forecasts=False)``): any use of it is a fault in the program,
    said at once rather than taken for an empty forecast."""

    def __init__(self, file_name: str):
        self.file_name = file_name

    def _fault(self, *_):
        raise RuntimeError(f"{self.file_name} was not read for this command, yet its table "
                           "was used; load the workspace with forecasts=True")

    __len__ = __iter__ = __getitem__ = __contains__ = __bool__ = _fault

    def __getattr__(self, name):
        if name.startswith("__"):
            raise AttributeError(name)
        self._fault()

    def __repr__(self) -> str:
        return f"NotRead({self.file_name!r})"


def _datetime64(moments) -> np.ndarray:
    return np.array([m.replace(tzinfo=None) for m in moments], dtype="datetime64[s]")


# ---------------------------------------------------------------------------------------
# Reading column-wise
# ---------------------------------------------------------------------------------------


class _NotVouched(Exception):
    """The column-wise path cannot accept the file; read it row by row."""


_KINDS = {
    # how Arrow hands each kind of column over
    "text": "dictionary",  # distinct cells, each through the row reader's checker
    "number": "float64",  # Arrow's decimal reader; ranges checked on the array
    "time": "string",  # cast by Arrow's ISO 8601 reader after a layout check
}


def _columns(path: Path, required, optional, kinds: dict):
    """The wanted columns present, as Arrow chunked arrays typed by ``kinds`` (column ->
    "text", "number" or "time", see ``_KINDS``).

    The bytes are checked as they are converted: Arrow refuses text cells that are not
    UTF-8, and a NUL fails every checker, number and time; other columns are read as
    text for that check alone. A number cell left empty is null; a text cell never is."""
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pcsv

    with path.open("rb") as stream:
        first = b""
        while b"\n" not in first and (part := stream.read(1 << 16)):
            first += part
    first = first.split(b"\n", 1)[0].removeprefix(b"\xef\xbb\xbf").rstrip(b"\r")
    try:
        first = first.decode("utf-8")
    except UnicodeDecodeError:
        raise _NotVouched from None
    if '"' in first or "\r" in first or "\x00" in first:
        raise _NotVouched
    header = [h.strip().lower() for h in next(csv.reader(io.StringIO(first)), [])]
    if any(c not in header for c in required) or len(set(header)) < len(header):
        raise _NotVouched
    wanted = [c for c in (*required, *optional) if c in header]
    types = {"dictionary": pa.dictionary(pa.int32(), pa.string()), "float64": pa.float64(),
             "string": pa.string()}
    try:
        table = pcsv.read_csv(
            pa.memory_map(str(path)),
            read_options=pcsv.ReadOptions(skip_rows=1, column_names=header),
            parse_options=pcsv.ParseOptions(newlines_in_values=False, ignore_empty_lines=True),
            convert_options=pcsv.ConvertOptions(
                column_types={c: types[_KINDS[kinds[c]]] if c in wanted else pa.string()
                              for c in header},
                null_values=[""], strings_can_be_null=False, quoted_strings_can_be_null=False),
        )
    except (pa.ArrowInvalid, pa.ArrowException, OSError):
        raise _NotVouched from None
    if table.num_rows == 0:
        raise _NotVouched
    for other in set(header) - set(wanted):
        if pc.any(pc.match_substring(table.column(other), "\x00")).as_py():
            raise _NotVouched
    return {c: table.column(c) for c in wanted}


def _distinct(column, checker, known=frozenset()):
    """``checker`` applied once to each distinct cell of a text column: (values (K,), the
    value's index for every row (R,), -1 where the checker refused the cell). Cells the
    checker reads alike (" A" and "A") share one value; the checker strips the cell
    itself, as it does in the row reader. A cell in ``known`` is one the checker returns
    unchanged, taken without calling it."""
    column = column.unify_dictionaries()  # one dictionary for every chunk
    if not column.num_chunks:
        return [], np.empty(0, dtype=np.int64)
    index_of_value, values = {}, []
    texts = column.chunk(0).dictionary.to_pylist()
    remap = np.empty(len(texts), dtype=np.int64)
    for k, text in enumerate(texts):
        if text in known:
            value = text
        else:
            try:
                value = checker(text)
            except ValueError:
                remap[k] = -1
                continue
        if value not in index_of_value:
            index_of_value[value] = len(values)
            values.append(value)
        remap[k] = index_of_value[value]
    codes = np.concatenate([chunk.indices.to_numpy(zero_copy_only=False)
                            for chunk in column.chunks])
    same = len(values) == len(texts) and np.array_equal(remap, np.arange(len(texts)))
    return values, codes if same else remap[codes]


def _numbers(column) -> tuple[np.ndarray, np.ndarray | None]:
    """A number column as float64 (NaN where empty) and which cells were left empty
    (None: none). Arrow's decimal reader accepts a subset of what Python's ``float``
    reads (no "1_0", no padding it does not trim) and gives the same double for it, so
    only the range is left to check (:func:`_outside`)."""
    values = column.to_numpy()
    empty = column.is_null().to_numpy(zero_copy_only=False) if column.null_count else None
    return values, empty


def _outside(values, low, high, empty=None, empty_allowed=False) -> np.ndarray | None:
    """Which values are not finite within ``low`` to ``high`` (a "nan" written out and an
    empty cell included, the empty ones left out where ``empty_allowed``), or None when
    every one is within."""
    if not values.size or (values.min() >= low and values.max() <= high):
        return None  # (a NaN makes both comparisons false)
    outside = ~((values >= low) & (values <= high))
    if empty_allowed and empty is not None:
        outside &= ~empty
    return outside if outside.any() else None


_TIME_MIN_LENGTH = 16
"""``YYYY-MM-DDThh:mm``: a time must give the minutes (the row reader's ``checks.parse_utc``
refuses the hour alone, which Arrow's ISO 8601 reader takes)."""

_MOST_LOCATED = 5000
"""Most bad times looked for one by one (by halving the rows Arrow refuses); beyond, the
row reader reads the whole file."""


def _minutes_missing(column) -> np.ndarray | None:
    """Which texts of a string column are shorter than ``_TIME_MIN_LENGTH`` or lack ":"
    after the hour (the byte at position 13); None when every one has them."""
    import pyarrow as pa

    chunks = []
    for chunk in column.chunks:
        if chunk.null_count or not isinstance(chunk, pa.StringArray):
            raise _NotVouched
        _, offsets, data = chunk.buffers()
        offsets = np.frombuffer(offsets, dtype=np.int32)[chunk.offset:
                                                         chunk.offset + len(chunk) + 1]
        chunks.append((offsets, np.frombuffer(data, dtype=np.uint8) if data else
                       np.zeros(0, dtype=np.uint8)))
    if all(len(o) < 2 or (np.diff(o).min() >= _TIME_MIN_LENGTH
                          and not np.any(text[o[:-1] + 13] != ord(":")))
           for o, text in chunks):
        return None
    marks = []
    for offsets, text in chunks:
        short = np.diff(offsets) < _TIME_MIN_LENGTH
        at = np.where(short, 0, offsets[:-1] + 13)
        marks.append(short | (text[at] != ord(":")) if text.size else short)
    return np.concatenate(marks)


def _cast_times(column, stamp):
    """UTC seconds of every text Arrow's ISO 8601 reader takes as ``stamp`` and which
    texts it refuses (None: none), found by halving the rows refused."""
    import pyarrow as pa
    import pyarrow.compute as pc

    try:
        return pc.cast(column, stamp).cast(pa.int64()).to_numpy(), None
    except (pa.ArrowInvalid, pa.ArrowException):
        pass
    flat = column.combine_chunks()
    seconds = np.zeros(len(flat), dtype=np.int64)
    refused = np.zeros(len(flat), dtype=bool)
    spans, count = [(0, len(flat))], 0
    while spans:
        a, b = spans.pop()
        try:
            seconds[a:b] = pc.cast(flat.slice(a, b - a), stamp).cast(pa.int64()).to_numpy()
        except (pa.ArrowInvalid, pa.ArrowException):
            if b - a > 1:
                spans += [((a + b) // 2, b), (a, (a + b) // 2)]
            else:
                refused[a], count = True, count + 1
                if count > _MOST_LOCATED:
                    raise _NotVouched from None
    return seconds, refused


def _times(column) -> tuple[np.ndarray, np.ndarray | None]:
    """ISO 8601 texts as UTC datetime64[s], and which texts are not read to the instant
    ``checks.file_time`` reads (None: every one is).

    Arrow's ISO 8601 reader (``pyarrow.compute.cast`` to a timestamp) reads
    ``YYYY-MM-DD[T ]hh:mm[:ss]`` with "Z" or an offset (``+hh``, ``+hhmm``, ``+hh:mm``)
    into a zoned type, or without one into a plain type; it refuses impossible dates and
    hours, fractions of seconds (at a unit of seconds) and padding. Each of those forms is
    read by ``checks.parse_utc`` to the same instant. Arrow also takes the date alone and
    the hour without minutes, which ``parse_utc`` refuses: every text must therefore be at
    least ``_TIME_MIN_LENGTH`` long with ":" after the hour, checked on the bytes first.
    Cells padded with ASCII blanks (``site, 2027-01-11T18:00Z, 40``) are trimmed first,
    as ``parse_utc`` strips them (it strips more: such a cell is marked, for the row
    reader to judge). Texts outside ``checks.FILE_YEARS`` are marked. The kind of time
    (zoned or plain) is that of the first row: the other kind is marked too.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    missing = _minutes_missing(column)
    if missing is not None:
        column = pc.ascii_trim_whitespace(column)
        missing = _minutes_missing(column)
    first = column[0].as_py()
    zoned = any(c in first[_TIME_MIN_LENGTH:] for c in "Z+-")
    seconds, refused = _cast_times(
        column, pa.timestamp("s", tz="UTC") if zoned else pa.timestamp("s"))
    lowest, beyond = _FIRST_SECOND, _days_from_civil(FILE_YEARS[1] + 1, 1, 1) * 86400
    bad = missing
    for marks in (refused, None if (seconds.min() >= lowest and seconds.max() < beyond)
                  else (seconds < lowest) | (seconds >= beyond)):
        if marks is not None:
            bad = marks if bad is None else bad | marks
    return seconds.view("datetime64[s]"), bad


def _days_from_civil(year, month, day):
    """Days since 1970-01-01 of a proleptic Gregorian date, by H. Hinnant's algorithm
    ("chrono-compatible low-level date algorithms", 2013): years from March."""
    y = year - (month <= 2)
    era = y // 400
    yoe = y - era * 400
    doy = (153 * ((month + 9) % 12) + 2) // 5 + day - 1
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy
    return era * 146097 + doe - 719468


_FIRST_SECOND = _days_from_civil(FILE_YEARS[0], 1, 1) * 86400
"""The first second of ``checks.FILE_YEARS`` (UTC, from 1970): the origin of sort keys."""


class Located:
    """What the column-wise path found wrong in a file it split: the data rows (0-based,
    as Arrow counts them) with a refused cell (``cells``) and those sharing a key (site
    and hour, block) with another row (``repeats``). The loader reads just those lines
    row by row for its one-line errors (:func:`located_lines`)."""

    def __init__(self, path: Path, rows: int, cells, repeats):
        self.path, self.rows, self.cells, self.repeats = path, rows, cells, repeats


def _located(path, bad, keys) -> Located | None:
    """Located rows of a file: the ``bad`` rows (a mask, or None), and the rows among the
    others whose ``keys`` (int64) repeat; None when nothing is wrong."""
    good = np.flatnonzero(~bad) if bad is not None else np.arange(len(keys))
    order = np.argsort(keys[good], kind="stable")
    ranked = keys[good][order]
    same = np.flatnonzero(ranked[1:] == ranked[:-1])
    if bad is None and not same.size:
        return None
    repeats = np.unique(good[order][np.concatenate([same, same + 1])])
    cells = np.flatnonzero(bad) if bad is not None else np.empty(0, dtype=np.int64)
    return Located(path, len(keys), cells, repeats)


def located_lines(located: Located):
    """(text, line numbers, lines of bad cells) of the located rows: the header line and
    each located row's line, the file line number of each, and the set of those with a
    bad cell; None when the lines of the file cannot be told from its rows (quotes, NUL,
    lone carriage returns)."""
    data = located.path.read_bytes()
    if b'"' in data or b"\x00" in data or data.count(b"\r") != data.count(b"\r\n"):
        return None
    lines = data.split(b"\n")
    rows = [k for k in range(2, len(lines) + 1) if lines[k - 1] not in (b"", b"\r")]
    if len(rows) != located.rows:
        return None
    wanted = np.union1d(located.cells, located.repeats)
    numbers = [rows[i] for i in wanted]
    try:
        text = b"\n".join([lines[0]] + [lines[k - 1] for k in numbers]).decode("utf-8-sig")
    except UnicodeDecodeError:
        return None
    return text + "\n", numbers, {rows[i] for i in located.cells}


def read_activity(path: Path, required, optional, kp, kp_sd_range, block_s):
    """activity.csv column-wise: the ActivityTable; or the rows found wrong (``Located``);
    or None when only the row-by-row reader can say what is wrong.

    ``kp`` is the row reader's Kp cell checker, ``kp_sd_range`` the (low, high) a
    ``kp_sd`` cell may hold (empty: NaN); ``block_s`` the block length in seconds that
    every start must be a multiple of (UTC)."""
    if path.stat().st_size < COLUMNWISE_FROM_BYTES:
        return None
    try:
        columns = _columns(path, required, optional,
                           {"start_utc": "time", "kp": "text", "kp_sd": "number"})
        starts, bad = _times(columns["start_utc"])
        seconds = starts.view(np.int64)
        off_block = seconds % block_s != 0
        values, code = _distinct(columns["kp"], kp)
        sds, empty = (_numbers(columns["kp_sd"]) if "kp_sd" in columns
                      else (np.full(len(starts), np.nan), None))
        for marks in (off_block if off_block.any() else None,
                      code < 0 if len(values) == 0 or code.min() < 0 else None,
                      _outside(sds, *kp_sd_range, empty, empty_allowed=True)):
            if marks is not None:
                bad = marks if bad is None else bad | marks
    except _NotVouched:
        return None
    order = None
    if bad is not None or not np.all(np.diff(seconds) > 0):
        found = _located(path, bad, seconds)
        if found is not None:
            return found  # a bad cell or a repeated block: the row reader names them
        order = np.argsort(seconds, kind="stable")
    table = ActivityTable(start_utc=starts, kp=np.array(values, dtype=float)[code], kp_sd=sds)
    return table if order is None else table.take(order)


def read_clouds(path: Path, required, optional, site_names, unit_of, cloud_range,
                default_unit="percent"):
    """clouds.csv column-wise: the CloudTable; or the rows found wrong (``Located``);
    or None when only the row-by-row reader can say what is wrong.

    ``unit_of(text)`` reads the ``unit`` cell (the row reader's checker);
    ``cloud_range(unit)`` gives (low, high, factor to percent) of a cloud cell in that
    unit. Sites not in ``site_names`` and repeated sites and hours are located for the
    row reader, which names them; a file whose values all look like fractions is left to
    it whole."""
    if site_names is None or path.stat().st_size < COLUMNWISE_FROM_BYTES:
        return None
    from auroraplan import checks

    said = [default_unit == "fraction"]

    def site(text):
        name = checks.text(text)
        if name not in site_names:
            raise ValueError(name)
        return name

    def unit(text):
        if not text.strip():
            return default_unit
        said.append(True)
        return unit_of(text)

    try:
        columns = _columns(path, required, optional, {
            "site": "text", "time_utc": "time", "cloud_pct": "number", "unit": "text"})
        names, code = _distinct(columns["site"], site, known=site_names)
        times, bad = _times(columns["time_utc"])
        given, empty = _numbers(columns["cloud_pct"])
        units, unit_code = (_distinct(columns["unit"], unit) if "unit" in columns
                            else ([default_unit], None))
        if len(units) == 1 and (unit_code is None or unit_code.min() >= 0):
            low, high, factor = cloud_range(units[0])
            cloud = given * factor if factor != 1 else given
            marks = [_outside(given, low, high, empty)]
        else:
            cloud = np.full(len(given), np.nan)
            marks = [unit_code < 0]
            for u, word in enumerate(units):
                rows = unit_code == u
                low, high, factor = cloud_range(word)
                cloud[rows] = given[rows] * factor
                marks.append(rows & ~((given >= low) & (given <= high)))
        marks.append(code < 0 if not names or code.min() < 0 else None)
        for mark in marks:
            if mark is not None and mark.any():
                bad = mark if bad is None else bad | mark
    except _NotVouched:
        return None
    if bad is None and not any(said) and 0.0 < cloud.max() <= 1.0:  # every row in percent
        return None
    # Rows by site name, then time, as the row reader keeps them: one sort key per row.
    names = np.array(names, dtype=object)
    by_name = np.argsort(names, kind="stable")
    if np.array_equal(by_name, np.arange(len(names))):
        key = code.astype(np.int64)  # the sites came in name order
    else:
        rank = np.empty(len(names) + 1, dtype=np.int64)
        rank[by_name] = np.arange(len(names))
        rank[-1] = -1  # a refused site (code -1): located above
        key = rank[code]
    key <<= 34  # 2**34 s: over 500 years, more than FILE_YEARS spans
    key += times.view(np.int64) - _FIRST_SECOND
    if bad is not None or not np.all(np.diff(key) > 0):
        found = _located(path, bad, key)
        if found is not None:
            return found  # bad cells or a repeated site and hour: the row reader names them
        order = np.argsort(key, kind="stable")
        code, times, cloud = code[order], times[order], cloud[order]
    return CloudTable(site=names[code], time_utc=times, cloud_pct=cloud)
