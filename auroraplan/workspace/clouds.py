"""clouds.csv: cloud cover per site and hour."""

from __future__ import annotations

from auroraplan import checks, csvcolumns
from auroraplan.csvcolumns import CloudTable
from auroraplan.errors import ProblemList
from auroraplan.workspace.files import (
    CSV_COLUMNS,
    FILE_NAMES,
    _check_field,
    _read_checked,
)

CLOUD_UNITS = {"%": "percent", "percent": "percent", "pct": "percent", "fraction": "fraction",
               "1": "fraction", "0-1": "fraction"}

"""Words allowed in the ``unit`` column of clouds.csv, and what they mean."""


_cloud_unit = checks.word(CLOUD_UNITS, "give percent (or %) or fraction")
_cloud_value = checks.percent_cell


def _load_clouds(path, label, site_names, problems: ProblemList, default_unit="percent"):
    """CloudTable, or None with the problems added. A large file is read column-wise
    (auroraplan.csvcolumns); the bad rows it finds, or the whole of a file it cannot
    split, are read row by row (``_check_rows``), which names each bad row.

    ``cloud_pct`` is percent unless the row's ``unit`` column or ``[weather] clouds_unit``
    says fraction. A file whose values all lie within 0-1 (and are not all 0) with no unit
    saying fraction is rejected: 0.7 % is far likelier to be a fraction typed as percent.
    """
    found = csvcolumns.read_clouds(path, *CSV_COLUMNS["clouds"], site_names, _cloud_unit,
                                   lambda unit: checks.PERCENT_CELLS[unit][:3], default_unit)
    return _read_checked(found, path, label, "clouds", problems,
                         lambda rows, said: _check_rows(rows, label, site_names, said,
                                                        default_unit))


def _check_rows(rows, label, site_names, problems: ProblemList, default_unit):
    """The row reader: (CloudTable or None, the lines found wrong), problems added."""
    site_of, unit_of = checks.remembered(checks.text), checks.remembered(_cloud_unit)
    cloud_in = {unit: checks.remembered(_cloud_value(unit)) for unit in ("percent", "fraction")}
    names, times, clouds = [], [], []
    unit_said = default_unit == "fraction"
    largest = 0.0
    unknown = {}  # site name -> (first line, rows)
    first_line = {}
    wrong = set()
    for line, row in rows:
        where = f"{label} line {line}"
        before = len(problems)
        name = _check_field(problems, where, "site", site_of, row["site"])
        when = _check_field(problems, where, "time_utc", checks.file_time, row["time_utc"])
        unit = default_unit
        if str(row.get("unit", "")).strip():
            unit = _check_field(problems, where, "unit", unit_of, row["unit"])
            unit_said = True
        # a refused unit (None, already said) leaves the cloud checked as percent
        cloud = _check_field(problems, where, "cloud_pct", cloud_in[unit or "percent"],
                             row["cloud_pct"])
        if cloud is not None:
            largest = max(largest, cloud if unit == "percent" else 100.0)
        if name is not None and site_names is not None and name not in site_names:
            first, count = unknown.get(name, (line, 0))
            unknown[name] = (first, count + 1)
            wrong.add(line)
            continue
        if len(problems) > before:
            wrong.add(line)
            continue
        if (name, when) in first_line:
            problems.add(
                f"{where}, time_utc: {name} at {when:%Y-%m-%dT%H:%MZ} is also on line "
                f"{first_line[(name, when)]}; give each hour once"
            )
            wrong.add(line)
            continue
        first_line[(name, when)] = line
        names.append(name)
        times.append(when)
        clouds.append(cloud)
    for name, (first, count) in unknown.items():
        listed = sorted(site_names)
        shown = ", ".join(listed[:12]) + (", ..." if len(listed) > 12 else "")
        problems.add(
            f"{label} line {first}, site: {checks.quote(name)} is not a site in {FILE_NAMES['sites']} "
            f"({count} row{'s' if count > 1 else ''}); known sites: {shown}"
        )
    if clouds and not unit_said and 0.0 < largest <= 1.0 and not problems:
        problems.add(
            f"{label}, cloud_pct: every value lies within 0-1 (largest {largest:g}), which "
            "looks like fractions; write percent 0-100, or add a column unit with "
            "'fraction', or set clouds_unit = \"fraction\" in [weather] of operator.toml"
        )
    return (None if problems else CloudTable.from_rows(names, times, clouds)), wrong
