"""The workspace folder: which files it holds, read together into one Workspace."""

from __future__ import annotations

import os
from pathlib import Path

from auroraplan import checks
from auroraplan.csvcolumns import ActivityTable, CloudTable, NotRead
from auroraplan.errors import InputError, ProblemList
from auroraplan.workspace.activity import _load_activity
from auroraplan.workspace.clouds import _load_clouds
from auroraplan.workspace.crosschecks import _sites_near_base
from auroraplan.workspace.files import FILE_NAMES
from auroraplan.workspace.model import Workspace
from auroraplan.workspace.operator_toml import _load_operator
from auroraplan.workspace.sites import _load_sites
from auroraplan.workspace.trips import _load_trips


def _folder(path) -> Path:
    folder = Path(path).expanduser()
    try:
        folder.stat()
        if folder.is_dir():
            os.listdir(folder)
    except PermissionError:
        raise InputError(f"{folder}: the folder cannot be read (permission denied); "
                         "give yourself read access to it (chmod u+rx)") from None
    except OSError:
        pass  # missing: said below
    if not folder.exists():
        raise InputError(
            f"{folder}: folder not found; give the workspace folder that holds "
            "operator.toml, sites.geojson and trips.csv"
        )
    if not folder.is_dir():
        raise InputError(
            f"{folder}: is a file, not a folder; give the workspace folder that holds it"
        )
    return folder


FORECAST_ROLES = ("activity", "clouds")
"""The optional forecast files, read only by the commands that use them."""


def _find_files(folder: Path, forecasts: bool = True) -> tuple[dict, list]:
    """Role -> path of the files present, and the problems for required ones missing (and
    for a forecast file that is not a file, when the forecasts are read)."""
    found, missing = {}, []
    roles = ("operator", "trips", *(FORECAST_ROLES if forecasts else ()), "sites", "sites_gpkg")
    missing = [why for role in roles if (why := checks.not_a_file(folder / FILE_NAMES[role]))]
    if missing:
        return found, missing
    for role in ("operator", "trips", "activity", "clouds"):
        candidate = folder / FILE_NAMES[role]
        if candidate.is_file():
            found[role] = candidate
        elif role in ("operator", "trips"):
            missing.append(f"{candidate}: not found; every workspace needs {FILE_NAMES[role]}")
    for role in ("sites", "sites_gpkg"):
        candidate = folder / FILE_NAMES[role]
        if candidate.is_file():
            found["sites"] = candidate
            break
    else:
        missing.append(
            f"{folder / FILE_NAMES['sites']}: not found; give the sites as sites.geojson "
            "(or sites.gpkg)"
        )
    return found, missing


def load_workspace(path, forecasts: bool = True) -> Workspace:
    """Read and check every file of a workspace folder.

    Parameters
    ----------
    path : str or Path
        The folder holding operator.toml, sites.geojson (or sites.gpkg), trips.csv and,
        optionally, activity.csv and clouds.csv.
    forecasts : bool
        Read activity.csv and clouds.csv. A command that uses neither (``sites``,
        ``season``, the plan-of-record and logbook commands) passes False: the files are
        then neither read nor checked, ``activity`` and ``clouds`` are
        ``csvcolumns.NotRead`` (any use of them is a fault in the program, said at once),
        and ``files`` still names them, so that no output replaces them.

    Returns
    -------
    Workspace
        ``settings`` holds every stage's settings record (auroraplan.settings.Settings)
        filled from operator.toml, defaults where a key is not written. ``activity`` and ``clouds`` are
        tables of numpy columns (csvcolumns.ActivityTable, CloudTable; ``to_frame()`` for
        pandas) with UTC datetime64 times; a missing optional file gives an empty table and a
        line in ``warnings``.

    Raises
    ------
    InputError
        One line per problem, naming the file, the CSV line (the header is line 1) or the
        GeoJSON feature (counted from 1, with its name), the field and what is allowed;
        all problems of a file are reported together (at most ProblemList.LIMIT each).
        The files are only read, never changed.

    Notes
    -----
    Times in the files are ISO 8601; "Z" or an offset is honoured and a time without a
    zone is taken as UTC; they must fall in the years FILE_YEARS. Trip dates lie within
    TRIP_DATES and a stay lasts at most MAX_STAY_NIGHTS. Each key of the stage tables is
    checked by its settings field's checker (auroraplan.checks), each key once. Text fields may not
    hold control characters or lone surrogates, which could not be written as UTF-8.
    Dates in trips.csv are local calendar dates; ``blocked`` dates outside the stay are
    errors (a typo there would leave the intended night unblocked).
    """
    folder = _folder(path)
    found, missing = _find_files(folder, forecasts)
    if missing:
        raise InputError(missing)
    lines: list[str] = []
    warnings: list[str] = []

    def step(role, loader, *args):
        problems = ProblemList()
        result = loader(found[role], str(found[role]), *args, problems)
        try:
            problems.raise_if_any()
        except InputError as exc:
            lines.extend(exc.problems)
        return result

    operator, settings = step("operator", _load_operator) or (None, None)
    sites = step("sites", _load_sites)
    if operator is not None and sites is not None:
        sites = step("sites", lambda p, label, probs: _sites_near_base(
            operator, sites, label, probs, warnings))
    trips = step("trips", lambda p, label, probs: _load_trips(p, label, sites, probs, warnings))
    site_names = None if sites is None else {s.name for s in sites}
    activity = clouds = None
    if not forecasts:  # the files stay in ``found``: no output may replace them
        activity, clouds = NotRead(FILE_NAMES["activity"]), NotRead(FILE_NAMES["clouds"])
    else:
        if "activity" in found:
            activity = step("activity", _load_activity)
        else:
            warnings.append(f"{folder / FILE_NAMES['activity']}: not found; no Kp forecast, "
                            "chances come from climatology")
        if "clouds" in found:
            unit = settings.weather.clouds_unit if settings is not None else "percent"
            clouds = step("clouds", lambda p, label, probs: _load_clouds(p, label, site_names,
                                                                         probs, unit))
        else:
            warnings.append(f"{folder / FILE_NAMES['clouds']}: not found; no cloud forecast, "
                            "chances use each site's monthly clear-sky fraction")
    from auroraplan.weatherfiles import weather_files

    for weather_path in weather_files(folder):
        found[f"weather:{weather_path}"] = weather_path
    if lines:
        raise InputError(lines)
    return Workspace(
        path=folder,
        operator=operator,
        sites=sites,
        trips=trips,
        activity=activity if activity is not None else ActivityTable.from_rows(),
        clouds=clouds if clouds is not None else CloudTable.from_rows(),
        files=dict(found),
        warnings=warnings,
        settings=settings,
    )
