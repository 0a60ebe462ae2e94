"""solarwind.csv (read only by the commands that use it) and the other command-only CSV files."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from auroraplan import checks
from auroraplan.errors import InputError, ProblemList
from auroraplan.workspace.files import CSV_COLUMNS, _check_field, _read_csv_rows, _read_text
from auroraplan.workspace.model import Workspace

SOLARWIND_FILE = "solarwind.csv"


SOLARWIND_COLUMNS = (
    ("time_utc", "by_gsm_nt", "bz_gsm_nt", "speed_km_s", "density_cm3"),
    ("bx_gsm_nt", "distance_km"),
)

"""Required and optional columns of solarwind.csv: measurement time at the spacecraft
(UTC), GSM field components (nT), bulk speed (km/s), proton density (cm^-3), and the
spacecraft's distance upstream of the Earth (km; default: L1, 1.5 million km)."""

CSV_COLUMNS["solarwind"] = SOLARWIND_COLUMNS


SOLARWIND_GAP_MIN = 10.0

"""A pause of more than this between good measurements (and more than three times the
file's usual cadence) is reported as a gap (common practice, no source)."""


@dataclass(frozen=True)
class SolarWindFile:
    """The good rows of a solar-wind file, as arrays (M,), and what was left out.

    ``left_out`` holds one line per row not used (gap or spike) and per pause in the
    measurements; the rows are only reported, never guessed at.
    """

    path: Path
    times_utc: np.ndarray
    speed_km_s: np.ndarray
    density_cm3: np.ndarray
    by_nt: np.ndarray
    bz_nt: np.ndarray
    distance_km: np.ndarray | None
    left_out: list
    rows: int


def read_command_csv(path, role: str, what: str):
    """A CSV file read only by the commands that use it (the logbook, solar wind).

    Returns ``(label, rows, problems)``: the file's name for error lines, its data rows
    as ``_read_csv_rows`` gives them, and the problems met so far (unreadable text, a bad
    header), for the caller to add its own and raise. A missing file is one line saying
    ``what`` to give.
    """
    path = Path(path).expanduser()
    label = str(path)
    if not path.is_file():
        raise InputError(f"{label}: not found or not a file; {what}")
    problems = ProblemList()
    text = _read_text(path, label, problems)
    rows = [] if text is None else _read_csv_rows(text, label, role, problems)
    return label, rows, problems


def load_solarwind(path) -> SolarWindFile:
    """Read a solar-wind file of upstream measurements.

    Parameters
    ----------
    path : str or Path
        A CSV file with the columns of SOLARWIND_COLUMNS, one row per measurement.

    Returns
    -------
    SolarWindFile
        The usable rows sorted by time. Empty cells and fill values (such as -9999.9) are
        gaps, values outside solarwind.PLAUSIBLE are spikes; both are listed in
        ``left_out`` and not used.

    Raises
    ------
    InputError
        One line per bad row (a time that is not ISO 8601 or is repeated, a cell that is
        not a number), naming the file, the line and the column.
    """
    from auroraplan import solarwind

    label, rows, problems = read_command_csv(
        path, "solarwind", "give a CSV file of solar-wind measurements with the columns "
        + ", ".join(SOLARWIND_COLUMNS[0]))
    names = SOLARWIND_COLUMNS[0][1:] + SOLARWIND_COLUMNS[1]
    lines, times, values = [], [], {name: [] for name in names}
    first_line = {}
    for line, row in rows:
        where = f"{label} line {line}"
        before = len(problems)
        when = _check_field(problems, where, "time_utc", checks.file_time, row["time_utc"])
        cells = {name: _check_field(problems, where, name, checks.measurement, row.get(name, ""))
                 for name in names}
        if len(problems) > before:
            continue
        if when in first_line:
            problems.add(f"{where}, time_utc: {when:%Y-%m-%dT%H:%M:%SZ} is also on line "
                         f"{first_line[when]}; give each measurement once")
            continue
        first_line[when] = line
        lines.append(line)
        times.append(np.datetime64(when.replace(tzinfo=None), "s"))
        for name in names:
            values[name].append(cells[name])
    problems.raise_if_any()
    if not lines:
        raise InputError(f"{label}: holds no measurements; give one row per measurement")
    order = np.argsort(np.array(times, dtype="datetime64[s]"), kind="stable")
    arr = {name: np.array(values[name], dtype=float)[order] for name in names}
    line_no = np.array(lines)[order]
    times_arr = np.array(times, dtype="datetime64[s]")[order]
    header = rows[0][1] if rows else {}
    good, reasons = solarwind.screen(arr["speed_km_s"], arr["density_cm3"], arr["by_gsm_nt"],
                                     arr["bz_gsm_nt"],
                                     arr["bx_gsm_nt"] if "bx_gsm_nt" in header else None)
    has_distance = "distance_km" in header
    distance = arr["distance_km"] if has_distance else None
    if distance is not None:
        low, high = solarwind.SPACECRAFT_KM_RANGE
        bad = ~np.isnan(distance) & ((distance < low) | (distance > high))
        for i in np.flatnonzero(bad & good):
            reasons[i] = "spike in distance_km"
        good &= ~bad
        distance = np.where(np.isnan(distance), solarwind.L1_DISTANCE_KM, distance)
    left_out = [f"{label} line {line_no[i]}: not used ({reasons[i]})"
                for i in np.flatnonzero(~good)]
    kept = times_arr[good].astype("int64")
    if kept.size > 2:
        pauses = np.diff(kept)
        limit = max(SOLARWIND_GAP_MIN * 60, 3 * float(np.median(pauses)))
        for i in np.flatnonzero(pauses > limit):
            left_out.append(
                f"{label}: no usable measurement from {times_arr[good][i]}Z to "
                f"{times_arr[good][i + 1]}Z; the estimate rests on fewer values there")
    return SolarWindFile(
        path=path, times_utc=times_arr[good], speed_km_s=arr["speed_km_s"][good],
        density_cm3=arr["density_cm3"][good], by_nt=arr["by_gsm_nt"][good],
        bz_nt=arr["bz_gsm_nt"][good],
        distance_km=None if distance is None else distance[good],
        left_out=left_out, rows=len(lines),
    )


def solar_wind_for(ws: Workspace, given=None) -> SolarWindFile | None:
    """The solar-wind file a command uses: ``given`` (an option), else the workspace's own
    solarwind.csv when there is one, else None."""
    if given:
        return load_solarwind(given)
    own = Path(ws.path) / SOLARWIND_FILE
    why = checks.not_a_file(own)
    if why:
        raise InputError(why)
    return load_solarwind(own) if own.is_file() else None
