"""Loading and validating the operator's workspace folder.

One module per file the workspace holds (``operator_toml``, ``sites``, ``trips``,
``activity``, ``clouds``, ``solarwind``), the data classes (``model``), reading files as
text (``files``), the checks across files (``crosschecks``) and the folder itself
(``loader``: :func:`load_workspace`). Value checkers are in :mod:`auroraplan.checks`.
Everything is importable from here: ``from auroraplan.workspace import load_workspace``.
"""

from auroraplan.workspace.activity import KP_SD_RANGE, _load_activity
from auroraplan.workspace.clouds import CLOUD_UNITS, _load_clouds
from auroraplan.workspace.crosschecks import (
    MAX_ZONE_HOURS_FROM_SOLAR,
    _check_zone_near_base,
    _sites_near_base,
)
from auroraplan.workspace.files import CSV_COLUMNS, FILE_NAMES, _read_csv_rows, _read_text
from auroraplan.workspace.loader import load_workspace
from auroraplan.workspace.model import Operator, Site, Trip, Workspace
from auroraplan.workspace.operator_toml import OPERATOR_SCHEMA, _load_operator
from auroraplan.workspace.sites import (
    MAX_SITE_KM,
    ROAD_FACTOR,
    SITE_DEFAULTS,
    SITE_LIMITS,
    SITE_PROPERTIES,
    WINTER_ROAD_KMH,
    _load_sites,
    estimated_drive_min,
)
from auroraplan.workspace.solarwind import (
    SOLARWIND_COLUMNS,
    SOLARWIND_FILE,
    SOLARWIND_GAP_MIN,
    SolarWindFile,
    load_solarwind,
    read_command_csv,
    solar_wind_for,
)
from auroraplan.workspace.trips import _TRIP_DATE, MAX_STAY_NIGHTS, TRIP_DATES, _load_trips

__all__ = [
    "CLOUD_UNITS", "CSV_COLUMNS", "FILE_NAMES", "KP_SD_RANGE", "MAX_SITE_KM", "MAX_STAY_NIGHTS",
    "MAX_ZONE_HOURS_FROM_SOLAR", "OPERATOR_SCHEMA", "ROAD_FACTOR", "SITE_DEFAULTS",
    "SITE_LIMITS", "SITE_PROPERTIES", "SOLARWIND_COLUMNS", "SOLARWIND_FILE",
    "SOLARWIND_GAP_MIN", "TRIP_DATES", "WINTER_ROAD_KMH", "_TRIP_DATE",
    "_check_zone_near_base", "_load_activity", "_load_clouds", "_load_operator",
    "_load_sites", "_load_trips", "_read_csv_rows", "_read_text", "_sites_near_base",
    "Operator", "Site", "SolarWindFile", "Trip", "Workspace", "estimated_drive_min",
    "load_solarwind", "load_workspace", "read_command_csv", "solar_wind_for",
]
