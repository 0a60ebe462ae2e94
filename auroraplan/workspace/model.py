"""The workspace's data classes: the operator, a site, a trip and the whole workspace."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from auroraplan.settings import Settings


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
    files: dict = field(default_factory=dict)  # role -> Path of each file found
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
