"""Loading and validating the operator's workspace folder."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np


@dataclass(frozen=True)
class Operator:
    """Settings from operator.toml."""

    name: str
    base_name: str
    base_lat: float
    base_lon: float
    timezone: str
    vehicles: int = 1
    darkness: str = "nautical"
    min_elevation_deg: float = 5.0
    emission_height_km: float = 110.0
    oval_model: str = "starkov1994"
    settings: dict = field(default_factory=dict)


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
    activity: object  # pandas.DataFrame: start_utc (UTC), kp (float), kp_sd (float, NaN = default)
    clouds: object  # pandas.DataFrame: site, time_utc (UTC), cloud_pct (float)
    files: dict = field(default_factory=dict)  # role -> Path actually read
    warnings: list = field(default_factory=list)
