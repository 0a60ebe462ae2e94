"""sites.geojson / sites.gpkg: the viewing sites and their properties."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from auroraplan import checks
from auroraplan.errors import ProblemList
from auroraplan.view import MASK_ELEVATION_RANGE
from auroraplan.workspace.files import _check_field, _parse_document, _read_text, _unique
from auroraplan.workspace.model import Site

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


def estimated_drive_min(km_straight: float) -> float:
    """One-way drive in minutes from the straight-line distance: ROAD_FACTOR × km at
    WINTER_ROAD_KMH, rounded up to 5 minutes."""
    minutes = km_straight * ROAD_FACTOR / WINTER_ROAD_KMH * 60.0
    return float(math.ceil(minutes / 5.0) * 5.0)


SITE_PROPERTIES = {
    # property: checker; name and coordinates are checked separately
    "drive_min": checks.number(*SITE_LIMITS["drive_min"]),
    "capacity": checks.whole(*SITE_LIMITS["capacity"]),
    "sky_mag": checks.number(*SITE_LIMITS["sky_mag"]),
    "horizon": checks.horizon(MASK_ELEVATION_RANGE),
    "clear_by_month": checks.monthly_fractions,
    "closed": checks.yes_no,
    "notes": checks.notes,
}


def _site_features_geojson(text: str, label: str, problems: ProblemList):
    doc = _parse_document(text, label, problems, "json")
    if doc is None:
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
    made = ((i, _site_from_feature(i, feature, label, problems))
            for i, feature in enumerate(features, start=1))
    sites = [site for _, site in _unique(
        made, lambda site: site.name, problems,
        lambda i, site: f"{label} feature {i} {site.name!r}, name: also used by feature "
                        "{first}; site names must be unique")]
    return None if problems else sites
