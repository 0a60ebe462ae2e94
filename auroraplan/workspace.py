"""Loading and validating the operator's workspace folder."""

from __future__ import annotations

import csv
import dataclasses
import datetime as dt
import io
import json
import math
import os
import tomllib
import zoneinfo
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from auroraplan import checks, csvcolumns
from auroraplan.activity import BLOCK_HOURS, parse_kp
from auroraplan.csvcolumns import ActivityTable, CloudTable
from auroraplan.errors import InputError, ProblemList
from auroraplan.planner import Fleet, Guide, Vehicle
from auroraplan.settings import TABLES, Settings
from auroraplan.view import MASK_ELEVATION_RANGE


@dataclass(frozen=True)
class Operator:
    """Settings from operator.toml."""

    name: str
    base_name: str
    base_lat: float
    base_lon: float
    timezone: str
    vehicles: int = 1
    fleet: object = None  # planner.Fleet: vehicles (seats, dates away) and guides


@dataclass(frozen=True)
class Site:
    """One viewing site from sites.geojson."""

    name: str
    lat: float
    lon: float
    height_m: float = 0.0
    drive_min: float = 0.0
    capacity: int = 8
    sky_mag: float = 21.5
    horizon: np.ndarray | None = None  # (M, 2) azimuth_deg, elevation_deg; None = flat
    clear_by_month: tuple | None = None  # 12 fractions, January first
    closed: bool = False
    notes: str = ""


@dataclass(frozen=True)
class Trip:
    """One booked group from trips.csv; nights are local dates from arrive to depart - 1."""

    trip: str
    group: str
    guests: int
    arrive: dt.date
    depart: dt.date
    outings: int
    blocked: tuple = ()

    def nights(self) -> list[dt.date]:
        """Local dates of the evenings of the stay (the night of depart is not included)."""
        n = (self.depart - self.arrive).days
        return [self.arrive + dt.timedelta(days=i) for i in range(n)]


@dataclass
class Workspace:
    """Everything read from one workspace folder."""

    path: Path
    operator: Operator
    sites: list[Site]
    trips: list[Trip]
    activity: object  # csvcolumns.ActivityTable: start_utc (UTC), kp, kp_sd (NaN = default)
    clouds: object  # csvcolumns.CloudTable: site, time_utc (UTC), cloud_pct
    settings: Settings = field(default_factory=Settings)  # every stage's settings record
    files: dict = field(default_factory=dict)  # role -> Path actually read
    warnings: list = field(default_factory=list)
    sky_reports: list = field(default_factory=list)  # weather.SkyReport from --sky

    @property
    def weather_files(self) -> list:
        """The weather-model files to read: ``files`` entries whose role starts "weather:"."""
        return [path for role, path in self.files.items() if role.startswith("weather:")]

    def add_weather_files(self, paths) -> None:
        """Add files given on the command line (``--weather``); InputError when one is missing."""
        from auroraplan.weatherfiles import weather_files

        for path in weather_files(self.path, paths):
            self.files.setdefault(f"weather:{path}", path)


# ---------------------------------------------------------------------------------------
# What the files may hold
# ---------------------------------------------------------------------------------------

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

SITE_LIMITS = {
    # property: (low, high, unit) -- plausible ranges, to catch typos
    "drive_min": (0.0, 600.0, "minutes"),
    "capacity": (1, 1000, "guests"),
    "sky_mag": (16.0, 22.5, "V mag/arcsec²"),
    "height_m": (-500.0, 9000.0, "m"),
}
SITE_DEFAULTS = {"sky_mag": 21.5}
"""sky_mag 21.5: a dark rural sky; the natural zenith sky is about 21.9-22.0 V mag/arcsec²
(Krisciunas & Schaefer 1991, from memory). ``capacity`` has no default (a missing one is
an error: the tool cannot guess how many guests a site holds) and a missing ``drive_min``
is estimated from the distance to the base (`estimated_drive_min`) with a warning."""

ROAD_FACTOR = 1.3
"""Road distance over straight-line distance for a missing drive_min. Circuity factors
of road networks lie near 1.2-1.4 (Ballou, Rahardja & Sakai 2002, Transportation Research
Part A 36, 843-848; from memory); coastal and fjord roads are at the high end."""

WINTER_ROAD_KMH = 60.0
"""Mean speed on winter roads at night for a missing drive_min (common practice, no
source): below the 80 km/h limit of most rural roads in the Nordic countries."""

MAX_SITE_KM = 1000.0
"""Farthest a site may lie from the base: a night excursion drives a few hundred km at
most (common practice, no source). Farther usually means latitude and longitude swapped
(GeoJSON is [longitude, latitude], RFC 7946 section 3.1.1) or a typo."""

MAX_ZONE_HOURS_FROM_SOLAR = 3.5
"""Largest gap allowed between the base's time zone offset and its solar time (longitude
/ 15° per hour). Civil zones stray up to about 3 hours from solar time (western China);
a wider gap means the zone of another place (common practice, no source)."""


def estimated_drive_min(km_straight: float) -> float:
    """One-way drive in minutes from the straight-line distance: ROAD_FACTOR × km at
    WINTER_ROAD_KMH, rounded up to 5 minutes."""
    minutes = km_straight * ROAD_FACTOR / WINTER_ROAD_KMH * 60.0
    return float(math.ceil(minutes / 5.0) * 5.0)

KP_SD_RANGE = (0.0, 5.0)

MAX_STAY_NIGHTS = 366
"""A stay longer than a year in trips.csv is a typo in a date (common practice, no source)."""

TRIP_DATES = (dt.date(1900, 1, 1), dt.date(2053, 1, 1))
"""Arrive and depart dates allowed in trips.csv: nights from sky.FIRST_NIGHT to
sky.LAST_NIGHT, inside the span of the JPL DE421 ephemeris (Skyfield reports de421.bsp
as covering 1899-07-29 to 2053-10-09)."""



# ---------------------------------------------------------------------------------------
# Small value checkers: each returns the value or raises ValueError saying what is allowed
# ---------------------------------------------------------------------------------------


# ---------------------------------------------------------------------------------------
# Reading files as text
# ---------------------------------------------------------------------------------------


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


def _read_csv_rows(text: str, label: str, role: str, problems: ProblemList):
    """(line number, {column: text}) for each data row; header problems are added.

    Blank lines are skipped. An empty list when the header is unusable.
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


def _check_field(problems, where, name, checker, value):
    """checker(value), or None with one problem line naming where and the field."""
    try:
        return checker(value)
    except ValueError as exc:
        problems.add(f"{where}, {name}: {exc}" if name else f"{where}: {exc}")
        return None


# ---------------------------------------------------------------------------------------
# operator.toml
# ---------------------------------------------------------------------------------------


_TRIP_DATE = checks.date_within(*TRIP_DATES)

OPERATOR_SCHEMA = {
    # table: {key: (checker, required)}; the stage tables are in auroraplan.settings.TABLES
    "base": {
        "name": (checks.name, True),
        "lat": (checks.latitude_off_pole, True),
        "lon": (checks.number(-180, 180, "degrees"), True),
        "timezone": (checks.zone, True),
    },
    "operator": {"name": (checks.name, False)},
    # vehicles: a count, or a list of {name, seats, unavailable}; seats: the default seats
    # per vehicle (without it a vehicle takes one group); guides: a count or a list of
    # {name, unavailable}. See _fleet_record.
    "fleet": {
        "vehicles": (lambda value: _fleet_members(value, "vehicle"), False),
        "seats": (checks.whole(1, 100, "seats"), False),
        "guides": (lambda value: _fleet_members(value, "guide"), False),
    },
}


def _unavailable(value, where):
    """A list of dates (TOML dates or "YYYY-MM-DD") on which a vehicle or guide is away."""
    if not isinstance(value, list):
        raise ValueError(f"{where} unavailable: give a list of dates such as [2027-01-12]")
    dates = []
    for item in value:
        if isinstance(item, dt.datetime) or not isinstance(item, dt.date | str):
            raise ValueError(f"{where} unavailable: {checks.quote(item)} is not a date; "
                             "give YYYY-MM-DD, for example 2027-01-12")
        try:
            dates.append(item if isinstance(item, dt.date) else checks.date(item))
        except ValueError as exc:
            raise ValueError(f"{where} unavailable: {exc}") from None
    return tuple(sorted(set(dates)))


FLEET_MEMBER_KEYS = {"vehicle": ("name", "seats", "unavailable"), "guide": ("name", "unavailable")}


def _fleet_members(value, kind):
    """A count (1-100), or a list of tables for each vehicle or guide; a tuple of dicts."""
    if not isinstance(value, list):
        return checks.whole(1 if kind == "vehicle" else 0, 100, f"{kind}s")(value)
    if not 1 <= len(value) <= 100:
        raise ValueError(f"give 1 to 100 {kind}s, not {len(value)}")
    members, names = [], set()
    for number, item in enumerate(value, start=1):
        where = f"{kind} {number}"
        if not isinstance(item, dict):
            raise ValueError(f"{where}: give a table such as {{ name = \"Van A\""
                             f"{', seats = 8' if kind == 'vehicle' else ''} }}")
        unknown = [key for key in item if key not in FLEET_MEMBER_KEYS[kind]]
        if unknown:
            raise ValueError(f"{where}: unknown key {unknown[0]}; allowed: "
                             f"{', '.join(FLEET_MEMBER_KEYS[kind])}")
        name = checks.text(item["name"]) if "name" in item else f"{kind} {number}"
        if name in names:
            raise ValueError(f"{where}: the name {checks.quote(name)} is used twice; name each once")
        names.add(name)
        member = {"name": name, "unavailable": _unavailable(item.get("unavailable", []), where)}
        if kind == "vehicle" and "seats" in item:
            try:
                member["seats"] = checks.whole(1, 100, "seats")(item["seats"])
            except ValueError as exc:
                raise ValueError(f"{where} seats: {exc}") from None
        members.append(member)
    return tuple(members)


def _fleet_record(values, label, problems):
    """The planner's Fleet from the checked [fleet] keys (plain `vehicles = N` by default)."""
    vehicles = values.get(("fleet", "vehicles"), 1)
    seats = values.get(("fleet", "seats"))
    if isinstance(vehicles, int):
        fleet_vehicles = Fleet.of_count(vehicles, seats).vehicles
    else:
        missing = [v["name"] for v in vehicles if "seats" not in v]
        if seats is None and missing and len(missing) < len(vehicles):
            problems.add(f"{label} [fleet] vehicles: {missing[0]} has no seats; give seats for "
                         "every vehicle, or a default seats = N in [fleet]")
            return None
        fleet_vehicles = tuple(Vehicle(v["name"], v.get("seats", seats), v["unavailable"])
                               for v in vehicles)
    guides = values.get(("fleet", "guides"))
    if isinstance(guides, int):
        guides = tuple(Guide(f"guide {i + 1}") for i in range(guides))
    elif guides is not None:
        guides = tuple(Guide(g["name"], g["unavailable"]) for g in guides)
    return Fleet(fleet_vehicles, guides)


def _read_settings(doc: dict, label: str, problems: ProblemList) -> Settings | None:
    """The stage settings records filled from their operator.toml tables (auroraplan.settings).

    Each key is checked by its field's checker; a key may stand in one of the tables that
    accept it, once.
    """
    before = len(problems)
    records = [f.name for f in dataclasses.fields(Settings)]
    defaults = Settings()
    values: dict = {name: {} for name in records}
    set_in: dict = {}  # key -> table
    for table, homes in TABLES.items():
        given = doc.get(table)
        if not isinstance(given, dict):
            continue
        fields = {}
        for home in homes:
            for key, fld in checks.setting_fields(getattr(defaults, home)).items():
                fields.setdefault(key, (home, fld))
        for key, raw in given.items():
            where = f"{label} [{table}] {key}"
            if key not in fields:
                problems.add(f"{where}: unknown key; allowed: {', '.join(fields)}")
                continue
            home, fld = fields[key]
            if key in set_in:
                problems.add(f"{where}: also set in [{set_in[key]}]; set it in one table only")
                continue
            set_in[key] = table
            checked = _check_field(problems, where, None, fld.metadata["check"], raw)
            if checked is not None:
                values[home][key] = checked
    if len(problems) > before:
        return None
    filled = {name: dataclasses.replace(getattr(defaults, name), **values[name])
              for name in records}
    for record in filled.values():
        for low, high, meaning in getattr(record, "ORDERED", ()):
            if low in set_in or high in set_in:
                if getattr(record, low) > getattr(record, high):
                    key = high if high in set_in else low
                    problems.add(
                        f"{label} [{set_in[key]}] {key}: {low} {getattr(record, low):g} is "
                        f"above {high} {getattr(record, high):g}; {meaning}, give {low} ≤ {high}"
                    )
    if len(problems) > before:
        return None
    return Settings(**filled)


def _check_zone_near_base(lat: float, lon: float, zone: str, label: str,
                          problems: ProblemList) -> None:
    """One problem when the base's time zone is far from its solar time (a zone of another
    place: every local time, darkness window and outing hour would be shifted)."""
    tz = zoneinfo.ZoneInfo(zone)
    offsets = {tz.utcoffset(dt.datetime(2027, month, 15, 12)).total_seconds() / 3600.0
               for month in (1, 7)}
    solar = lon / 15.0
    gap = min(abs((o - solar + 12.0) % 24.0 - 12.0) for o in offsets)
    if gap <= MAX_ZONE_HOURS_FROM_SOLAR:
        return
    try:
        from timezonefinder import TimezoneFinder

        found = TimezoneFinder().timezone_at(lng=lon, lat=lat)
    except Exception:  # a suggestion only; the problem stands without it
        found = None
    hint = f"; the zone at the base is {found}" if found else ""
    shown = ", ".join(f"UTC{o:+g}" for o in sorted(offsets))
    problems.add(
        f"{label} [base] timezone: {zone} ({shown}) is {gap:.1f} h from the solar time of a "
        f"base at {abs(lon):.1f}° {'E' if lon >= 0 else 'W'} (UTC{solar:+.1f}){hint}; give "
        "the time zone of the base")


def _load_operator(path: Path, label: str, problems: ProblemList):
    """(Operator, Settings) from operator.toml, or None with the problems added."""
    text = _read_text(path, label, problems)
    if text is None:
        return None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        problems.add(f"{label}: not valid TOML ({exc}); check quotes and [table] headers")
        return None
    except RecursionError:
        problems.add(f"{label}: arrays or tables nested too deeply to read; check the brackets")
        return None
    known = tuple(OPERATOR_SCHEMA) + tuple(TABLES)
    values = {}
    for table, value in doc.items():
        if table not in known:
            problems.add(f"{label} [{table}]: unknown table; allowed: {', '.join(known)}")
        elif not isinstance(value, dict):
            problems.add(f"{label} {table}: must be a [{table}] table")
    for table, keys in OPERATOR_SCHEMA.items():
        given = doc.get(table, {})
        if not isinstance(given, dict):
            continue
        for key in given:
            if key not in keys:
                problems.add(
                    f"{label} [{table}] {key}: unknown key; allowed: {', '.join(keys)}"
                )
        for key, (checker, required) in keys.items():
            if key not in given:
                if required:
                    problems.add(f"{label} [{table}] {key}: missing; it is required")
                continue
            checked = _check_field(problems, f"{label} [{table}] {key}", None, checker,
                                   given[key])
            if checked is not None:
                values[(table, key)] = checked
    settings = _read_settings(doc, label, problems)
    if all(("base", k) in values for k in ("lat", "lon", "timezone")):
        _check_zone_near_base(values[("base", "lat")], values[("base", "lon")],
                              values[("base", "timezone")], label, problems)
    if problems:
        return None
    fleet = _fleet_record(values, label, problems)
    if fleet is None:
        return None
    operator = Operator(
        name=values.get(("operator", "name"), values[("base", "name")]),
        base_name=values[("base", "name")],
        base_lat=values[("base", "lat")],
        base_lon=values[("base", "lon")],
        timezone=values[("base", "timezone")],
        vehicles=len(fleet.vehicles),
        fleet=fleet,
    )
    return operator, settings


# ---------------------------------------------------------------------------------------
# sites.geojson / sites.gpkg
# ---------------------------------------------------------------------------------------


def _repeated(first_seen: dict, key, where, problems, message: str) -> bool:
    """True (and one problem) when ``key`` was seen before; else remember where it was seen.

    ``message`` may hold ``{first}``, the place of the first occurrence.
    """
    if key in first_seen:
        problems.add(message.replace("{first}", str(first_seen[key])))
        return True
    first_seen[key] = where
    return False


def _json_list(value, problem: str):
    """A list property as given, or parsed from JSON text (GeoPackage columns hold text)."""
    if not isinstance(value, str):
        return value
    try:
        return json.loads(value)
    except json.JSONDecodeError:
        raise ValueError(problem) from None


def _horizon(value):
    """A horizon polyline [[azimuth°, elevation°], ...] as an (M, 2) array sorted by azimuth."""
    if checks.is_missing(value):
        return None
    value = _json_list(value, "is not a list of [azimuth, elevation] pairs")
    allowed = "give a list of [azimuth 0-360, elevation -5 to 90] pairs in degrees"
    if not isinstance(value, list) or len(value) < 2:
        raise ValueError(f"needs at least two points; {allowed}")
    points = []
    for i, point in enumerate(value, start=1):
        if (
            not isinstance(point, list | tuple)
            or len(point) != 2
            or not all(isinstance(v, int | float) and not isinstance(v, bool) for v in point)
        ):
            raise ValueError(f"point {i} ({checks.quote(point)}) is not an [azimuth, elevation] pair; {allowed}")
        az, el = checks.as_float(point[0]), checks.as_float(point[1])
        if not (math.isfinite(az) and 0.0 <= az <= 360.0):
            raise ValueError(f"point {i}: azimuth {az:g} is outside 0 to 360 degrees")
        low, high = MASK_ELEVATION_RANGE
        if not (math.isfinite(el) and low <= el <= high):
            raise ValueError(f"point {i}: elevation {el:g} is outside {low} to {high} degrees")
        points.append((az, el))
    arr = np.array(points, dtype=float)
    return arr[np.argsort(arr[:, 0], kind="stable")]


def _clear_by_month(value):
    if checks.is_missing(value):
        return None
    value = _json_list(value, "is not a list of 12 fractions")
    if not isinstance(value, list) or len(value) != 12:
        raise ValueError("give 12 fractions 0 to 1, January first")
    check = checks.number(0, 1)
    return tuple(check(v) for v in value)


def _closed(value):
    if checks.is_missing(value):
        return False
    if isinstance(value, bool) or value in (0, 1):
        return bool(value)
    raise ValueError(f"{checks.quote(value)} is not true or false")


def _notes(value):
    if checks.is_missing(value):
        return ""
    if not isinstance(value, str):
        raise ValueError("must be text")
    if len(value) > checks.MAX_NOTES_CHARS:
        raise ValueError(f"is {len(value)} characters long; notes may have at most "
                         f"{checks.MAX_NOTES_CHARS}, shorten them")
    return checks.printable(value.replace("\r\n", "\n").replace("\r", "\n"), checks.CONTROL_IN_NOTES_RE)


SITE_PROPERTIES = {
    # property: checker; name and coordinates are checked separately
    "drive_min": checks.number(*SITE_LIMITS["drive_min"]),
    "capacity": checks.whole(*SITE_LIMITS["capacity"]),
    "sky_mag": checks.number(*SITE_LIMITS["sky_mag"]),
    "horizon": _horizon,
    "clear_by_month": _clear_by_month,
    "closed": _closed,
    "notes": _notes,
}


def _site_features_geojson(text: str, label: str, problems: ProblemList):
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        problems.add(f"{label} line {exc.lineno}: not valid JSON ({exc.msg}, column {exc.colno})")
        return None
    except RecursionError:
        problems.add(f"{label}: lists or objects nested too deeply to read; check the brackets")
        return None
    if not isinstance(doc, dict) or doc.get("type") != "FeatureCollection":
        problems.add(f"{label}: must be a GeoJSON FeatureCollection (RFC 7946)")
        return None
    features = doc.get("features")
    if not isinstance(features, list):
        problems.add(f"{label} features: must be a list of Point features")
        return None
    return features


def _plain(value):
    """A numpy value from a GIS reader as plain Python, so it checks like GeoJSON."""
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.generic):
        return value.item()
    return value


def _site_features_gpkg(path: Path, label: str, problems: ProblemList):
    """Features of a GeoPackage layer in the same shape as GeoJSON features."""
    import geopandas

    try:
        frame = geopandas.read_file(path)
    except Exception as exc:  # any reader failure is a problem of the file
        problems.add(f"{label}: cannot be read as a GeoPackage ({exc})")
        return None
    if frame.crs is not None and frame.crs.to_epsg() != 4326:
        frame = frame.to_crs(4326)
    features = []
    for _, row in frame.iterrows():
        geom = row.geometry
        props = {k: row[k] for k in frame.columns if k != "geometry"}
        props = {k: _plain(v) for k, v in props.items()}
        if geom is None or geom.geom_type != "Point":
            coords = None
        else:
            coords = [geom.x, geom.y] + ([geom.z] if geom.has_z else [])
        features.append({"type": "Feature",
                         "geometry": {"type": "Point", "coordinates": coords},
                         "properties": props})
    return features


def _point(geometry):
    """(lon, lat, height_m) of a GeoJSON Point; ValueError saying what is allowed."""
    allowed = "give a Point with coordinates [longitude, latitude] or [lon, lat, height m]"
    if not isinstance(geometry, dict) or geometry.get("type") != "Point":
        raise ValueError(f"not a Point; {allowed}")
    coords = geometry.get("coordinates")
    if not isinstance(coords, list) or len(coords) not in (2, 3):
        raise ValueError(allowed)
    return coords


def _site_from_feature(i, feature, label, problems: ProblemList) -> Site | None:
    props = feature.get("properties") if isinstance(feature, dict) else None
    if not isinstance(props, dict):
        problems.add(f"{label} feature {i}: not a Feature with properties")
        return None
    name = props.get("name")
    where = f"{label} feature {i}" + (f" {checks.quote(name)}" if isinstance(name, str) else "")
    before = len(problems)
    name = _check_field(problems, where, "name", checks.name, name)
    coords = _check_field(problems, where, "geometry", _point, feature.get("geometry"))
    lon = lat = None
    height = 0.0
    if coords is not None:
        lon = _check_field(problems, where, "longitude", checks.number(-180, 180, "degrees"), coords[0])
        lat = _check_field(problems, where, "latitude", checks.latitude_off_pole, coords[1])
        if len(coords) == 3:
            height = _check_field(problems, where, "height_m",
                                  checks.number(*SITE_LIMITS["height_m"]), coords[2])
    values = {}
    for key, checker in SITE_PROPERTIES.items():
        raw = props.get(key)
        if checks.is_missing(raw) and key in SITE_DEFAULTS:
            values[key] = SITE_DEFAULTS[key]
            continue
        if checks.is_missing(raw) and key == "drive_min":
            values[key] = math.nan  # estimated from the distance once the base is known
            continue
        if checks.is_missing(raw) and key == "capacity":
            problems.add(f"{where}, capacity: missing; give how many guests the site holds "
                         f"at once (a whole number, 1 to {SITE_LIMITS['capacity'][1]})")
            continue
        values[key] = _check_field(problems, where, key, checker, raw)
    if len(problems) > before:
        return None
    return Site(name=name, lat=lat, lon=lon, height_m=height, **values)


def _sites_near_base(operator, sites, label, problems: ProblemList, warnings: list):
    """Sites checked against the base: none beyond MAX_SITE_KM (with a hint when latitude
    and longitude look swapped), and a missing drive_min estimated from the distance."""
    from auroraplan.weather import _great_circle_km

    lat = np.array([s.lat for s in sites], float)
    lon = np.array([s.lon for s in sites], float)
    km = _great_circle_km(operator.base_lat, operator.base_lon, lat, lon)
    swapped_km = _great_circle_km(operator.base_lat, operator.base_lon,
                                  np.clip(lon, -90, 90), lat)
    out = []
    for i, site in enumerate(sites):
        where = f"{label} feature {i + 1} {checks.quote(site.name)}"
        if km[i] > MAX_SITE_KM:
            hint = (" latitude and longitude look swapped: GeoJSON gives [longitude, latitude]"
                    if abs(site.lon) <= 90 and swapped_km[i] <= MAX_SITE_KM else
                    " check the coordinates")
            problems.add(f"{where}, geometry: {km[i]:,.0f} km from the base "
                         f"{operator.base_name!r} (more than {MAX_SITE_KM:,.0f} km);{hint}")
            continue
        if math.isnan(site.drive_min):
            minutes = estimated_drive_min(float(km[i]))
            warnings.append(
                f"{where}: no drive_min; estimated {minutes:.0f} min from {km[i]:.0f} km in a "
                f"straight line × road factor {ROAD_FACTOR:g} at {WINTER_ROAD_KMH:g} km/h; "
                "give drive_min to use the real drive")
            site = dataclasses.replace(site, drive_min=minutes)
        out.append(site)
    return None if problems else out


def _load_sites(path: Path, label: str, problems: ProblemList) -> list[Site] | None:
    if path.suffix == ".gpkg":
        features = _site_features_gpkg(path, label, problems)
    else:
        text = _read_text(path, label, problems)
        features = None if text is None else _site_features_geojson(text, label, problems)
    if features is None:
        return None
    if not features:
        problems.add(f"{label}: holds no sites; add at least one Point feature")
        return None
    sites = []
    first_of = {}
    for i, feature in enumerate(features, start=1):
        site = _site_from_feature(i, feature, label, problems)
        if site is None:
            continue
        if _repeated(first_of, site.name, i, problems,
                     f"{label} feature {i} {site.name!r}, name: also used by feature {{first}}; "
                     "site names must be unique"):
            continue
        sites.append(site)
    return None if problems else sites


# ---------------------------------------------------------------------------------------
# trips.csv
# ---------------------------------------------------------------------------------------


def _blocked(text):
    parts = [p.strip() for p in str(text).split(";") if p.strip()]
    return tuple(checks.date(p) for p in parts)


def _trip_from_row(line, row, label, largest, problems: ProblemList) -> Trip | None:
    where = f"{label} line {line}"
    before = len(problems)
    trip = _check_field(problems, where, "trip", checks.name, row["trip"])
    group = _check_field(problems, where, "group", checks.name, row["group"])
    high = largest[0] if largest else 1000
    guests = _check_field(problems, where, "guests", checks.cell_whole(1, 1000, "guests"), row["guests"])
    if guests is not None and largest and guests > largest[0]:
        problems.add(
            f"{where}, guests: {guests} is more than any site holds (largest: {high} at "
            f"{largest[1]}); split the group into smaller trips"
        )
    arrive = _check_field(problems, where, "arrive", _TRIP_DATE, row["arrive"])
    depart = _check_field(problems, where, "depart", _TRIP_DATE, row["depart"])
    outings = _check_field(problems, where, "outings", checks.cell_whole(1, 60, "outings"), row["outings"])
    blocked = _check_field(problems, where, "blocked", _blocked, row.get("blocked", ""))
    if arrive and depart and depart <= arrive:
        problems.add(f"{where}, depart: {depart} is not after arrive {arrive}; give a later date")
    elif arrive and depart and outings and outings > (depart - arrive).days:
        nights = (depart - arrive).days
        problems.add(f"{where}, outings: {outings} outings in a stay of {nights} night"
                     f"{'s' if nights != 1 else ''} ({arrive} to {depart}); at most one outing "
                     f"a night, give {nights} or fewer or check the dates")
    elif arrive and depart and (depart - arrive).days > MAX_STAY_NIGHTS:
        problems.add(
            f"{where}, depart: a stay of {(depart - arrive).days} nights from {arrive}; "
            f"stays are at most {MAX_STAY_NIGHTS} nights, check the dates"
        )
    elif arrive and depart and blocked:
        for night in blocked:
            if not arrive <= night < depart:
                problems.add(
                    f"{where}, blocked: {night} is not an evening of the stay "
                    f"({arrive} to {depart - dt.timedelta(days=1)})"
                )
    if len(problems) > before:
        return None
    return Trip(trip=trip, group=group, guests=guests, arrive=arrive, depart=depart,
                outings=outings, blocked=tuple(sorted(blocked)))


def _load_trips(path, label, sites, problems: ProblemList, warnings: list) -> list[Trip] | None:
    text = _read_text(path, label, problems)
    if text is None:
        return None
    open_sites = [s for s in (sites or []) if not s.closed] or list(sites or [])
    biggest = max(open_sites, key=lambda s: s.capacity, default=None)
    largest = (biggest.capacity, biggest.name) if biggest else None
    trips = []
    first_line = {}
    for line, row in _read_csv_rows(text, label, "trips", problems):
        trip = _trip_from_row(line, row, label, largest, problems)
        if trip is None:
            continue
        if _repeated(first_line, trip.trip, line, problems,
                     f"{label} line {line}, trip: {trip.trip!r} is also on line {{first}}; "
                     "trip ids must be unique"):
            continue
        free = len(trip.nights()) - len(set(trip.blocked))
        if trip.outings > free:
            warnings.append(
                f"{label} line {line}: trip {trip.trip} wants {trip.outings} outings but has "
                f"{free} free evenings; at most {free} can be planned"
            )
        trips.append(trip)
    return None if problems else trips


# ---------------------------------------------------------------------------------------
# activity.csv and clouds.csv
# ---------------------------------------------------------------------------------------


def _kp_sd(text):
    if not str(text).strip():
        return math.nan
    return checks.cell_number(*KP_SD_RANGE, "Kp")(text)


def _block_start(text):
    start = checks.file_time(text)
    if start.minute or start.second or start.microsecond or start.hour % BLOCK_HOURS:
        raise ValueError(
            f"{checks.quote(str(text).strip())} is not the start of a 3-hour Kp block; "
            "give 00, 03, 06, ... 21 h UTC"
        )
    return start


def _load_activity(path, label, problems: ProblemList):
    """ActivityTable, or None with the problems added. A large file is read column-wise
    (auroraplan.csvcolumns); one it cannot vouch for is read row by row, which names
    each bad row."""
    table = csvcolumns.read_activity(path, *CSV_COLUMNS["activity"], parse_kp, _kp_sd,
                                     BLOCK_HOURS * 3600)
    if table is not None:
        return table
    text = _read_text(path, label, problems)
    if text is None:
        return None
    starts, kps, sds = [], [], []
    first_line = {}
    for line, row in _read_csv_rows(text, label, "activity", problems):
        where = f"{label} line {line}"
        before = len(problems)
        start = _check_field(problems, where, "start_utc", _block_start, row["start_utc"])
        kp = _check_field(problems, where, "kp", parse_kp, row["kp"])
        sd = _check_field(problems, where, "kp_sd", _kp_sd, row.get("kp_sd", ""))
        if len(problems) > before:
            continue
        if start in first_line:
            problems.add(
                f"{where}, start_utc: block {start:%Y-%m-%dT%H:%MZ} is also on line "
                f"{first_line[start]}; give each block once"
            )
            continue
        first_line[start] = line
        starts.append(start)
        kps.append(kp)
        sds.append(sd)
    return None if problems else ActivityTable.from_rows(starts, kps, sds)


CLOUD_UNITS = {"%": "percent", "percent": "percent", "pct": "percent", "fraction": "fraction",
               "1": "fraction", "0-1": "fraction"}
"""Words allowed in the ``unit`` column of clouds.csv, and what they mean."""


def _cloud_unit(text):
    word = str(text).strip().lower()
    if word not in CLOUD_UNITS:
        raise ValueError(f"{checks.quote(str(text).strip())} is not known; give percent (or %) or "
                         "fraction")
    return CLOUD_UNITS[word]


def _cloud_value(unit):
    """Checker of one cloud cell in ``unit``: returns percent."""
    if unit == "fraction":
        fraction = checks.cell_number(0, 1, "(a fraction)")
        return lambda text: 100.0 * fraction(text)
    return checks.cell_number(0, 100, "%")


def _load_clouds(path, label, site_names, problems: ProblemList, default_unit="percent"):
    """CloudTable, or None with the problems added. A large file is read column-wise
    (auroraplan.csvcolumns); one it cannot vouch for is read row by row, which names
    each bad row.

    ``cloud_pct`` is percent unless the row's ``unit`` column or ``[weather] clouds_unit``
    says fraction. A file whose values all lie within 0-1 (and are not all 0) with no unit
    saying fraction is rejected: 0.7 % is far likelier to be a fraction typed as percent.
    """
    table = csvcolumns.read_clouds(path, *CSV_COLUMNS["clouds"], site_names, _cloud_unit,
                                   _cloud_value, default_unit)
    if table is not None:
        return table
    text = _read_text(path, label, problems)
    if text is None:
        return None
    names, times, clouds = [], [], []
    unit_said = default_unit == "fraction"
    largest = 0.0
    unknown = {}  # site name -> (first line, rows)
    first_line = {}
    for line, row in _read_csv_rows(text, label, "clouds", problems):
        where = f"{label} line {line}"
        before = len(problems)
        name = _check_field(problems, where, "site", checks.text, row["site"])
        when = _check_field(problems, where, "time_utc", checks.file_time, row["time_utc"])
        unit = default_unit
        if str(row.get("unit", "")).strip():
            unit = _check_field(problems, where, "unit", _cloud_unit, row["unit"])
            unit_said = True
        cloud = _check_field(problems, where, "cloud_pct", _cloud_value(unit), row["cloud_pct"])
        if cloud is not None:
            largest = max(largest, cloud if unit == "percent" else 100.0)
        if name is not None and site_names is not None and name not in site_names:
            first, count = unknown.get(name, (line, 0))
            unknown[name] = (first, count + 1)
            continue
        if len(problems) > before:
            continue
        if (name, when) in first_line:
            problems.add(
                f"{where}, time_utc: {name} at {when:%Y-%m-%dT%H:%MZ} is also on line "
                f"{first_line[(name, when)]}; give each hour once"
            )
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
    return None if problems else CloudTable.from_rows(names, times, clouds)


# ---------------------------------------------------------------------------------------
# The folder
# ---------------------------------------------------------------------------------------


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


def _find_files(folder: Path) -> tuple[dict, list]:
    """Role -> path of the files present, and the problems for required ones missing."""
    found, missing = {}, []
    for role in ("operator", "trips", "activity", "clouds", "sites", "sites_gpkg"):
        candidate = folder / FILE_NAMES[role]
        if os.path.lexists(candidate) and not candidate.is_file():
            kind = "a folder" if candidate.is_dir() else "not a regular file (a pipe, device or broken link)"
            missing.append(f"{candidate}: is {kind}; {FILE_NAMES[role]} must be a file")
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


def load_workspace(path) -> Workspace:
    """Read and check every file of a workspace folder.

    Parameters
    ----------
    path : str or Path
        The folder holding operator.toml, sites.geojson (or sites.gpkg), trips.csv and,
        optionally, activity.csv and clouds.csv.

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
    found, missing = _find_files(folder)
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


# ---------------------------------------------------------------------------------------
# solarwind.csv: read only by the commands that use it
# ---------------------------------------------------------------------------------------

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


def _measured(text) -> float:
    """A measurement cell: a number, or empty (NaN, a gap)."""
    raw = str(text).strip()
    if not raw:
        return math.nan
    try:
        value = float(raw)
    except ValueError:
        raise ValueError(f"{checks.quote(raw)} is not a number; leave the cell empty for a gap") from None
    if math.isinf(value):
        raise ValueError(f"{checks.quote(raw)} is not a finite number; leave the cell empty for a gap")
    return value


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
        cells = {name: _check_field(problems, where, name, _measured, row.get(name, ""))
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
    return load_solarwind(own) if own.is_file() else None
