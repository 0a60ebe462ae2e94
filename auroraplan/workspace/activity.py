"""activity.csv: the Kp forecast in 3-hour blocks."""

from __future__ import annotations

from auroraplan import checks, csvcolumns
from auroraplan.activity import BLOCK_HOURS, parse_kp
from auroraplan.csvcolumns import ActivityTable
from auroraplan.errors import ProblemList
from auroraplan.workspace.files import CSV_COLUMNS, _check_field, _read_checked

KP_SD_RANGE = (0.0, 5.0)

_kp_sd = checks.optional(checks.cell_number(*KP_SD_RANGE, "Kp"))
_block_start = checks.block_start(BLOCK_HOURS, "Kp")


def _load_activity(path, label, problems: ProblemList):
    """ActivityTable, or None with the problems added. A large file is read column-wise
    (auroraplan.csvcolumns); the bad rows it finds, or the whole of a file it cannot
    split, are read row by row (``_check_rows``), which names each bad row."""
    found = csvcolumns.read_activity(path, *CSV_COLUMNS["activity"], parse_kp, KP_SD_RANGE,
                                     BLOCK_HOURS * 3600)
    return _read_checked(found, path, label, "activity", problems,
                         lambda rows, said: _check_rows(rows, label, said))


def _check_rows(rows, label, problems: ProblemList):
    """The row reader: (ActivityTable or None, the lines found wrong), problems added."""
    kp_of, sd_of = checks.remembered(parse_kp), checks.remembered(_kp_sd)
    starts, kps, sds = [], [], []
    first_line = {}
    wrong = set()
    for line, row in rows:
        where = f"{label} line {line}"
        before = len(problems)
        start = _check_field(problems, where, "start_utc", _block_start, row["start_utc"])
        kp = _check_field(problems, where, "kp", kp_of, row["kp"])
        sd = _check_field(problems, where, "kp_sd", sd_of, row.get("kp_sd", ""))
        if len(problems) > before:
            wrong.add(line)
            continue
        if start in first_line:
            problems.add(
                f"{where}, start_utc: block {start:%Y-%m-%dT%H:%MZ} is also on line "
                f"{first_line[start]}; give each block once"
            )
            wrong.add(line)
            continue
        first_line[start] = line
        starts.append(start)
        kps.append(kp)
        sds.append(sd)
    return (None if problems else ActivityTable.from_rows(starts, kps, sds)), wrong
