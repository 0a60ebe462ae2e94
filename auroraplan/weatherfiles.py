"""What weather-model files (GRIB1/GRIB2, NetCDF) say about cloud over each site, hour by hour.

A file is read with xarray: GRIB through cfgrib over ecCodes, NetCDF-4 through h5netcdf and
classic NetCDF through scipy. Only the block of grid around the sites is loaded. Each file
gives one or more *series*: one model (and ensemble member) with its forecast runs; the
values at the sites are interpolated in space here and in time by ``weather.cloud_at``.
"""

from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from auroraplan.errors import InputError

WEATHER_FOLDER = "weather"
"""Folder of a workspace whose weather-model files are read."""

SUFFIXES = (".grib", ".grib2", ".grb", ".grb2", ".nc")
"""File names read as weather-model files (GRIB editions 1 and 2, NetCDF)."""

MAGIC = {b"GRIB": "grib", b"CDF\x01": "netcdf3", b"CDF\x02": "netcdf3", b"CDF\x05": "netcdf3",
         b"\x89HDF": "netcdf4"}
"""First bytes of a GRIB message (WMO Manual on Codes, FM 92 section 0), a classic NetCDF file
(Unidata NetCDF format specification, "CDF" and version byte) and an HDF5 file (HDF5 format
specification, signature)."""

LAYERS = ("total", "low", "medium", "high")

GRIB_PARAM_IDS = {
    # ecCodes paramId: (layer, unit) -- ECMWF parameter database
    228164: ("total", "percent"), 164: ("total", "fraction"),
    3073: ("low", "percent"), 3074: ("medium", "percent"), 3075: ("high", "percent"),
    186: ("low", "fraction"), 187: ("medium", "fraction"), 188: ("high", "fraction"),
}
GRIB2_WMO_CLOUD = {
    # (discipline, parameterCategory, parameterNumber): layer -- WMO GRIB2 Code table 4.2,
    # meteorological products, category 6 (cloud); these are defined in percent.
    (0, 6, 1): "total", (0, 6, 3): "low", (0, 6, 4): "medium", (0, 6, 5): "high",
}
CF_STANDARD_NAMES = {
    # CF standard name table
    "cloud_area_fraction": "total",
    "low_type_cloud_area_fraction": "low",
    "medium_type_cloud_area_fraction": "medium",
    "high_type_cloud_area_fraction": "high",
}
UNITS = {
    # unit text as written in files (lower case, spaces removed): factor to percent
    "%": 100.0 / 100.0, "percent": 1.0, "pct": 1.0,
    "1": 100.0, "(0-1)": 100.0, "0-1": 100.0, "fraction": 100.0,
}
"""Percent stays; a fraction 0-1 is multiplied by 100. "1" is the CF canonical unit of
cloud_area_fraction (CF standard name table); "(0 - 1)" is how ecCodes writes a fraction."""

MEMBER_DIMS = ("number", "realization", "member", "ensemble_member", "ens", "mbr")
"""Dimension names of ensemble members: cfgrib's ``number``; CF standard name
``realization`` and common NetCDF spellings (common practice, no source)."""

MISS_FACTOR = 0.75
"""On a grid known only by 2-D latitude/longitude, a site whose nearest grid point is farther
than this many grid spacings is outside the grid (half a diagonal is 0.71; common practice,
no source)."""


@dataclass(frozen=True)
class Series:
    """Cloud at the sites from one model (or member) and one forecast run."""

    model: str
    member: str | None
    reference_utc: np.datetime64  # run time
    valid_utc: np.ndarray  # (S,) datetime64[s], ascending
    cloud_pct: np.ndarray  # (S, N) percent, NaN outside the grid
    file: Path


@dataclass
class FileReading:
    """Everything read from the weather-model files for a set of sites."""

    series: list = field(default_factory=list)
    files: list = field(default_factory=list)  # Path of every file read
    warnings: list = field(default_factory=list)

    def for_sites(self, columns) -> FileReading:
        """The same reading for a subset of its sites (indices into its site columns)."""
        from dataclasses import replace

        columns = np.asarray(columns, dtype=np.intp)
        return FileReading([replace(s, cloud_pct=s.cloud_pct[:, columns]) for s in self.series],
                           list(self.files), list(self.warnings))


# ---------------------------------------------------------------------------------------
# Which files
# ---------------------------------------------------------------------------------------


def weather_files(workspace_folder, extra=()) -> list[Path]:
    """The weather-model files of a workspace: those in its ``weather/`` folder, then ``extra``.

    Parameters
    ----------
    workspace_folder : str or Path
    extra : iterable of str or Path
        Files given on the command line (``--weather``); each must exist.

    Returns
    -------
    list of Path
        Sorted by name within the folder; no path twice.
    """
    from auroraplan.checks import not_a_file

    folder = Path(workspace_folder) / WEATHER_FOLDER
    listed = sorted(p for p in folder.iterdir() if p.suffix.lower() in SUFFIXES) \
        if folder.is_dir() else []
    # A pipe, device, folder or broken link named like a weather file is said, not skipped.
    problems = [why for p in listed if (why := not_a_file(p))]
    found = [p for p in listed if p.is_file()]
    for given in extra:
        path = Path(given).expanduser()
        if not path.is_file():
            problems.append(not_a_file(path)
                            or f"{path}: weather file not found; give a GRIB or NetCDF file")
            continue
        found.append(path)
    if problems:
        raise InputError(problems)
    unique = {p.resolve(): p for p in found}
    return list(unique.values())


def file_digests(paths) -> list[dict]:
    """SHA-256 and size of each file, to record which weather files a forecast used.

    Returns
    -------
    list of dict
        ``path`` (str), ``bytes`` (int), ``sha256`` (hex str), in the order given.
    """
    rows = []
    for path in paths:
        sha = hashlib.sha256()
        with open(path, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                sha.update(block)
        rows.append({"path": str(path), "bytes": Path(path).stat().st_size,
                     "sha256": sha.hexdigest()})
    return rows


def file_kind(path: Path) -> str:
    """"grib", "netcdf3" or "netcdf4" from the first bytes; InputError for anything else."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(4)
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the file") from None
    kind = MAGIC.get(head)
    if kind is None:
        raise InputError(f"{path}: not a GRIB or NetCDF file (it starts with {head!r}); "
                         "give a GRIB1/GRIB2 or NetCDF file or move it out of the folder")
    return kind


# ---------------------------------------------------------------------------------------
# Opening a file with xarray
# ---------------------------------------------------------------------------------------


def eccodes_module():
    """The ecCodes Python module, loaded after pyproj.

    Both wheels ship a PROJ library; pyproj finds its own database (and the process exits
    cleanly) only when pyproj's library is loaded first. Everything here that needs
    ecCodes (cfgrib included) comes through this function.
    """
    import pyproj  # noqa: F401

    # isort: split
    import eccodes

    return eccodes


def _open_datasets(path: Path, kind: str) -> list:
    """The file as a list of lazy xarray Datasets (a GRIB file may split into several)."""
    import xarray as xr

    eccodes_module()

    try:
        if kind == "grib":
            import cfgrib

            options = {
                "indexpath": "",  # never write an index file beside the user's file
                "read_keys": ["discipline", "parameterCategory", "parameterNumber",
                              "generatingProcessIdentifier"],
                "errors": "raise",
            }
            try:  # one pass over the messages when they form one dataset (the usual file)
                return [xr.open_dataset(path, engine="cfgrib", cache=False,
                                        backend_kwargs=options, decode_timedelta=True)]
            except cfgrib.dataset.DatasetBuildError:  # mixed levels or steps: split it
                return cfgrib.open_datasets(str(path), cache=False, backend_kwargs=options)
        engine = "h5netcdf" if kind == "netcdf4" else "scipy"
        return [xr.open_dataset(path, engine=engine, cache=False, decode_timedelta=True)]
    except InputError:
        raise
    except Exception as exc:  # the readers raise many types for broken files
        reason = str(exc).strip().splitlines()[0][:120] if str(exc).strip() else type(exc).__name__
        raise InputError(f"{path}: cannot be read as {kind.replace('3', '').replace('4', '')} "
                         f"({reason}); the file may be truncated, download it again") from None


def _unit_factor(path, name, unit_text, layer, grib_key=None) -> float:
    """Factor from the file's unit to percent; InputError when it is neither."""
    text = re.sub(r"\s+", "", str(unit_text or "")).lower()
    if text in UNITS:
        return UNITS[text]
    if grib_key in GRIB2_WMO_CLOUD:
        return 1.0  # WMO Code table 4.2 defines these in percent
    raise InputError(f"{path}: variable {name!r} ({layer} cloud) has unit {unit_text!r}; "
                     "cloud must be in percent (%) or a fraction (1 or 0-1); fix the "
                     "file's units attribute")


def cloud_variables(path, dataset) -> dict:
    """Layer -> (DataArray, factor to percent) for the cloud variables of one Dataset."""
    found = {}
    for name, var in dataset.data_vars.items():
        attrs = var.attrs
        layer, unit, key = None, attrs.get("units"), None
        if "GRIB_paramId" in attrs:
            pid = int(attrs.get("GRIB_paramId", 0))
            key = tuple(int(attrs.get(k, -1)) for k in (
                "GRIB_discipline", "GRIB_parameterCategory", "GRIB_parameterNumber"))
            if pid in GRIB_PARAM_IDS:
                layer = GRIB_PARAM_IDS[pid][0]
                unit = unit if str(unit) not in ("", "unknown") else GRIB_PARAM_IDS[pid][1]
            elif key in GRIB2_WMO_CLOUD:
                layer = GRIB2_WMO_CLOUD[key]
        else:
            layer = CF_STANDARD_NAMES.get(str(attrs.get("standard_name", "")))
        if layer is None or layer in found:
            continue
        found[layer] = (var, _unit_factor(path, name, unit, layer, key))
    return found


# ---------------------------------------------------------------------------------------
# Where the sites fall on a grid
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class SiteWeights:
    """Grid cells and weights of each site: value = sum(w * field[rows, cols]) over 4 points."""

    rows: np.ndarray  # (N, 4) int, into the loaded block
    cols: np.ndarray  # (N, 4)
    weights: np.ndarray  # (N, 4), rows sum to 1; 0 outside
    inside: np.ndarray  # (N,) bool
    row_slice: slice  # block of the grid to load
    col_slice: slice


def _axis_cells(axis, x, periodic=False):
    """Left index, right index and fraction of each x on a 1-D monotonic axis.

    Returns (i0, i1, frac, inside). On a periodic axis (longitudes of a global grid) the
    cell between the last and the first column is used too.
    """
    axis = np.asarray(axis, dtype=float)
    n = axis.size
    ascending = n < 2 or axis[-1] >= axis[0]
    a = axis if ascending else axis[::-1]
    j = np.clip(np.searchsorted(a, x, side="right") - 1, 0, max(n - 2, 0))
    i0, i1 = j, np.minimum(j + 1, n - 1)
    width = a[i1] - a[i0]
    frac = np.where(width > 0, (x - a[i0]) / np.where(width > 0, width, 1.0), 0.0)
    inside = (x >= a[0]) & (x <= a[-1])
    if periodic and n > 1:
        step = (a[-1] - a[0]) / (n - 1)
        wrap = (x > a[-1]) & (x < a[0] + 360.0)
        i0 = np.where(wrap, n - 1, i0)
        i1 = np.where(wrap, 0, i1)
        frac = np.where(wrap, (x - a[-1]) / step, frac)
        inside = inside | wrap
    frac = np.clip(frac, 0.0, 1.0)
    if not ascending:
        i0, i1 = n - 1 - i0, n - 1 - i1
    return i0, i1, frac, inside


def _block(rows, cols, inside, shape):
    """The smallest block of the grid holding every used point (all of it when none used)."""
    if not inside.any():
        return slice(0, 0), slice(0, 0)
    r, c = rows[inside], cols[inside]
    return slice(int(r.min()), int(r.max()) + 1), slice(int(c.min()), int(c.max()) + 1)


def _finish(rows, cols, weights, inside, shape):
    weights = np.where(inside[:, None], weights, 0.0)
    rows = np.where(inside[:, None], rows, 0)
    cols = np.where(inside[:, None], cols, 0)
    rs, cs = _block(rows, cols, inside, shape)
    if rs.stop > 0:
        # a periodic grid whose sites straddle its seam loads whole rows: a slice is one piece
        rows, cols = rows - rs.start, cols - cs.start
    return SiteWeights(rows.astype(np.intp), cols.astype(np.intp), weights, inside, rs, cs)


def bilinear_weights(y_axis, x_axis, y, x, periodic_x=False) -> SiteWeights:
    """Bilinear interpolation on a grid with 1-D axes (latitude/longitude or projection x/y).

    The value at a site is the bilinear blend of the four surrounding grid points
    (Press et al., Numerical Recipes, 3rd ed., section 3.6). A site outside the axes is
    outside the grid.
    """
    r0, r1, fy, in_y = _axis_cells(y_axis, np.asarray(y, float))
    c0, c1, fx, in_x = _axis_cells(x_axis, np.asarray(x, float), periodic_x)
    rows = np.stack([r0, r0, r1, r1], axis=1)
    cols = np.stack([c0, c1, c0, c1], axis=1)
    weights = np.stack([(1 - fy) * (1 - fx), (1 - fy) * fx, fy * (1 - fx), fy * fx], axis=1)
    return _finish(rows, cols, weights, in_y & in_x, (len(y_axis), len(x_axis)))


def _unit_vectors(lat_deg, lon_deg):
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    return np.stack([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)], axis=-1)


def neighbour_weights(lat2d, lon2d, lat, lon) -> SiteWeights:
    """Inverse-distance weights of the 4 nearest grid points on a grid known by 2-D lat/lon.

    Neighbours come from a KD-tree on unit vectors (chord distance, which orders points as
    the great-circle distance does); weights are 1/d² (Shepard 1968), and a site on a grid
    point takes that point's value. A site whose nearest point is farther than
    ``MISS_FACTOR`` grid spacings is outside the grid.
    """
    from scipy.spatial import cKDTree

    shape = np.shape(lat2d)
    points = _unit_vectors(np.ravel(lat2d), np.ravel(lon2d))
    tree = cKDTree(points)
    dist, index = tree.query(_unit_vectors(np.asarray(lat, float), np.asarray(lon, float)), k=4)
    spacing = np.median(np.linalg.norm(
        points.reshape(*shape, 3)[:, 1:] - points.reshape(*shape, 3)[:, :-1], axis=-1))
    inside = dist[:, 0] <= MISS_FACTOR * spacing * np.sqrt(2)
    exact = dist[:, :1] < 1e-12
    inv = np.where(exact, np.eye(4)[0], 1.0 / np.maximum(dist, 1e-12) ** 2)
    weights = inv / inv.sum(axis=1, keepdims=True)
    rows, cols = np.unravel_index(index, shape)
    return _finish(rows, cols, weights, inside, shape)


def _coord_by(dataset, var, names=(), standard_names=(), axis=None):
    for name in var.dims:
        coord = dataset.coords.get(name)
        if coord is None:
            continue
        if (name in names or coord.attrs.get("standard_name") in standard_names
                or (axis and coord.attrs.get("axis") == axis)):
            return name
    return None


def site_weights(path, dataset, var, lat, lon):
    """(SiteWeights, y dim, x dim) for one variable's grid and the sites.

    Regular latitude/longitude axes: bilinear, longitudes -180..180 or 0..360, either
    order. A CF ``grid_mapping`` with 1-D projection axes (rotated pole, Lambert conformal,
    polar stereographic ...): the sites are projected with pyproj and interpolated
    bilinearly on the projection axes. Otherwise 2-D latitude/longitude: ``neighbour_weights``.
    """
    lat = np.asarray(lat, float)
    lon = np.asarray(lon, float)
    y = _coord_by(dataset, var, ("latitude", "lat"), ("latitude",), None)
    x = _coord_by(dataset, var, ("longitude", "lon"), ("longitude",), None)
    if y and x and dataset[y].ndim == 1 and dataset[x].ndim == 1:
        xs = dataset[x].values.astype(float)
        x0 = float(np.min(xs))
        site_x = x0 + np.mod(lon - x0, 360.0)
        step = abs(xs[1] - xs[0]) if xs.size > 1 else 0.0
        periodic = step > 0 and abs(xs.size * step - 360.0) < 0.5 * step
        return bilinear_weights(dataset[y].values, xs, lat, site_x, periodic), y, x
    mapping = var.attrs.get("grid_mapping")
    if mapping and mapping in dataset.variables:
        y = _coord_by(dataset, var, (), ("projection_y_coordinate", "grid_latitude"), "Y")
        x = _coord_by(dataset, var, (), ("projection_x_coordinate", "grid_longitude"), "X")
        if y and x:
            import pyproj

            crs = pyproj.CRS.from_cf(dict(dataset[mapping].attrs))
            to_grid = pyproj.Transformer.from_crs("EPSG:4326", crs, always_xy=True)
            gx, gy = to_grid.transform(lon, lat)
            scale = 1000.0 if str(dataset[x].attrs.get("units", "")).strip() == "km" else 1.0
            gx, gy = np.asarray(gx) / scale, np.asarray(gy) / scale
            return bilinear_weights(dataset[y].values, dataset[x].values, gy, gx), y, x
    lat2 = next((c for c in ("latitude", "lat") if c in dataset.coords
                 and dataset[c].ndim == 2), None)
    lon2 = next((c for c in ("longitude", "lon") if c in dataset.coords
                 and dataset[c].ndim == 2), None)
    if lat2 and lon2:
        dims = dataset[lat2].dims
        weights = neighbour_weights(dataset[lat2].values, dataset[lon2].values, lat, lon)
        return weights, dims[0], dims[1]
    raise InputError(f"{path}: the grid of {var.name!r} has no latitude/longitude this "
                     "program can read (give a regular latitude/longitude grid, a CF "
                     "grid_mapping with x/y axes, or 2-D latitude and longitude)")


# ---------------------------------------------------------------------------------------
# Which model, which run
# ---------------------------------------------------------------------------------------


def model_name(path: Path, dataset) -> str:
    """The model a file comes from.

    GRIB: the originating centre (WMO Common Code table C-11 as ecCodes abbreviates it) and
    the generating process number (GRIB2 octet 14 of section 4), as "ecmf/148". NetCDF: the
    ``source`` attribute, else ``institution`` (CF conventions, section 2.6.2). Failing
    those, the file name without a trailing run date.
    """
    attrs = dataset.attrs
    centre = str(attrs.get("GRIB_centre", "")).strip()
    if centre and centre not in ("consensus", "255", "missing"):
        process = next((v.attrs.get("GRIB_generatingProcessIdentifier")
                        for v in dataset.data_vars.values()), None)
        return f"{centre}/{process}" if process not in (None, 255, "255") else centre
    if "GRIB_centre" not in attrs:
        for key in ("source", "institution"):
            text = str(attrs.get(key, "")).strip()
            if text:
                return text[:60]
    stem = re.sub(r"[._-]*(\d{8,}|\d{4}-\d{2}-\d{2}).*$", "", path.stem)
    return stem or path.stem


def _times(values) -> np.ndarray:
    return np.asarray(values).astype("datetime64[s]")


def _member_dim(var):
    return next((d for d in var.dims if d in MEMBER_DIMS), None)


def _runs(dataset, var):
    """(run dim or None, reference times (R,), valid-time array shaped like the run × step
    dims, step dim) for a variable."""
    dims = var.dims
    if "step" in dims or "valid_time" in dataset.coords:
        # cfgrib: time = reference time (a dim when several runs), step, valid_time(time, step)
        ref = _times(np.atleast_1d(dataset["time"].values))
        valid = _times(dataset["valid_time"].values) if "valid_time" in dataset.coords else \
            ref[..., None] + dataset["step"].values
        run_dim = "time" if "time" in dims else None
        step_dim = "step" if "step" in dims else None
        return run_dim, ref, valid, step_dim
    time_dim = _coord_by(dataset, var, ("time",), ("time",), "T")
    if time_dim is None:
        time_dim = next((d for d in dims if np.issubdtype(dataset[d].dtype, np.datetime64)),
                        None) if all(d in dataset.coords for d in dims) else None
    if time_dim:
        valid = _times(dataset[time_dim].values)
    elif "time" in dataset.coords and dataset["time"].ndim == 0:  # one time, no dimension
        valid = _times(np.atleast_1d(dataset["time"].values))
    else:
        valid = np.array([np.datetime64("NaT")], "datetime64[s]")
    if "forecast_reference_time" in dataset.coords:
        ref = _times(np.atleast_1d(dataset["forecast_reference_time"].values))[:1]
    else:
        ref = valid[:1]  # no run time: the first valid time stands for it
    return None, ref, valid, time_dim


# ---------------------------------------------------------------------------------------
# Reading
# ---------------------------------------------------------------------------------------


def _values_at_sites(var, weights: SiteWeights, ydim, xdim, factor):
    """Load the block around the sites and interpolate: array (..., N) in percent."""
    block = var.isel({ydim: weights.row_slice, xdim: weights.col_slice})
    order = [d for d in block.dims if d not in (ydim, xdim)] + [ydim, xdim]
    data = block.transpose(*order).values.astype(float) * factor
    corners = data[..., weights.rows, weights.cols]  # (..., N, 4)
    valid = np.isfinite(corners) & (weights.weights > 0)
    w = np.where(valid, weights.weights, 0.0)
    total = w.sum(axis=-1)
    value = np.where(total > 0, (np.nan_to_num(corners) * w).sum(axis=-1)
                     / np.where(total > 0, total, 1.0), np.nan)
    value[..., ~weights.inside] = np.nan
    return value, [d for d in order if d not in (ydim, xdim)]


def effective_layers(low, medium, high, weights):
    """Cloud that hides the aurora, percent, from low, medium and high cover (percent).

    E = 1 - (1 - L)(1 - w_m M)(1 - w_h H) on fractions: layers overlap at random
    (Geleyn & Hollingsworth 1979), and each layer hides only the share ``weights`` of what
    it covers, because thin high cloud lets a bright display through more than low cloud
    does. The weights are an assumption (``[weather] layer_weights``), not a published value.
    """
    w_low, w_mid, w_high = weights
    clear = ((1 - w_low * np.asarray(low) / 100) * (1 - w_mid * np.asarray(medium) / 100)
             * (1 - w_high * np.asarray(high) / 100))
    return 100.0 * (1.0 - clear)


def read_file(path: Path, lat, lon, layer_weights=(1.0, 0.8, 0.5)) -> tuple[list, list]:
    """Every cloud series of one file at the sites, and warnings.

    Raises
    ------
    InputError
        Not GRIB/NetCDF, unreadable or truncated, no cloud variable, an unknown unit.
    """
    kind = file_kind(path)
    datasets = _open_datasets(path, kind)
    series, warnings = [], []
    seen = []
    for dataset in datasets:
        layers = cloud_variables(path, dataset)
        if not layers:
            continue
        seen.append(dataset)
        use = (("low", "medium", "high") if {"low", "medium", "high"} <= set(layers)
               else ("total",) if "total" in layers else None)
        if use is None:
            warnings.append(f"{path}: only {', '.join(sorted(layers))} cloud, no total; "
                            "the file is not used")
            continue
        var0 = layers[use[0]][0]
        weights, ydim, xdim = site_weights(path, dataset, var0, lat, lon)
        if not weights.inside.any():
            warnings.append(f"{path}: its grid covers none of the sites; the file is not used")
            continue
        values = []
        for name in use:
            value, dims = _values_at_sites(layers[name][0], weights, ydim, xdim, layers[name][1])
            values.append(value)
        cloud = values[0] if len(values) == 1 else effective_layers(*values, layer_weights)
        run_dim, ref, valid, step_dim = _runs(dataset, var0)
        member_dim = _member_dim(var0)
        series.extend(_split(path, model_name(path, dataset), cloud, dims, run_dim, step_dim,
                             member_dim, ref, valid, dataset))
    if not seen:
        names = sorted({n for d in datasets for n in d.data_vars})
        raise InputError(f"{path}: no cloud cover variable (found: {', '.join(names) or 'none'}); "
                         "give total cloud (GRIB2 0/6/1, ecCodes paramId 164 or 228164, CF "
                         "standard name cloud_area_fraction) or low, medium and high cloud")
    for dataset in datasets:
        dataset.close()
    return series, warnings


def _split(path, model, cloud, dims, run_dim, step_dim, member_dim, ref, valid, dataset):
    """One Series per run and member from an array with dims ``dims`` + sites."""
    order = [d for d in (run_dim, member_dim, step_dim) if d]
    extra = [d for d in dims if d not in order]
    if extra:  # a leftover length-1 dimension (a height level, say)
        cloud = cloud.reshape([s for d, s in zip(dims, cloud.shape, strict=False)
                               if d not in extra] + [cloud.shape[-1]])
        dims = [d for d in dims if d not in extra]
    cloud = np.moveaxis(cloud, [dims.index(d) for d in order], range(len(order)))
    if run_dim is None:
        cloud = cloud[None]
    if member_dim is None:
        cloud = cloud[:, None]
    if step_dim is None:
        cloud = cloud[:, :, None]
    valid = np.asarray(valid).reshape(len(ref), -1) if valid.size != len(ref) or step_dim \
        else valid.reshape(len(ref), 1)
    members = ([str(int(m)) if np.issubdtype(np.asarray(m).dtype, np.number) else str(m)
                for m in dataset[member_dim].values] if member_dim else [None])
    if member_dim is None and "number" in dataset.coords and \
            str(dataset.attrs.get("GRIB_dataType", "")) in ("cf", "pf"):
        members = [str(int(dataset["number"].values))]
    out = []
    for r in range(cloud.shape[0]):
        times = valid[r] if valid.shape[0] > r else valid[0]
        for m, member in enumerate(members):
            values = cloud[r, m]
            good = ~np.isnat(times)
            order_t = np.argsort(times[good], kind="stable")
            out.append(Series(model=model, member=member, reference_utc=ref[r],
                              valid_utc=times[good][order_t], cloud_pct=values[good][order_t],
                              file=path))
    return out


def read_for_workspace(ws, settings=None) -> FileReading | None:
    """The workspace's weather files read at all its sites (None without files): called
    before a command writes anything, so that a bad file stops it first."""
    if not ws.weather_files:
        return None
    settings = settings or ws.settings.weather
    return read_cached(ws.weather_files, [s.lat for s in ws.sites], [s.lon for s in ws.sites],
                       settings.layer_weights)


_READINGS: dict = {}
_READINGS_KEPT = 4


def read_cached(paths, lat, lon, layer_weights=(1.0, 0.8, 0.5)) -> FileReading:
    """``read_weather_files``, remembered for the same files (path, size, modification time)
    and sites, so that the reports of one command read each file once."""
    lat = np.ascontiguousarray(lat, dtype=float)
    lon = np.ascontiguousarray(lon, dtype=float)
    stamp = tuple((str(p), Path(p).stat().st_size, Path(p).stat().st_mtime_ns) for p in paths)
    key = (stamp, lat.tobytes(), lon.tobytes(), tuple(layer_weights))
    if key not in _READINGS:
        if len(_READINGS) >= _READINGS_KEPT:
            _READINGS.pop(next(iter(_READINGS)))
        _READINGS[key] = read_weather_files(paths, lat, lon, layer_weights)
    return _READINGS[key]


DISK_CACHE_VERSION = 1
"""Bumped whenever what ``read_file`` returns changes, so that old entries are not used."""


def cache_folder() -> Path | None:
    """Where site values read from weather files are kept between runs: the ``weather``
    folder of the user's cache directory (:func:`auroraplan.usercache.cache_folder`),
    never the workspace. None when it cannot be made."""
    from auroraplan.usercache import cache_folder as kind_folder

    return kind_folder("weather")


def read_file_kept(path: Path, lat, lon, layer_weights=(1.0, 0.8, 0.5)) -> tuple[list, list]:
    """``read_file``, kept in ``cache_folder()`` for the same file (path, size, modification
    time), sites and layer weights, so that the guide's repeated checks of the next hours
    do not decode the same GRIB or NetCDF file again. A cache that cannot be read or
    written is passed over; a file that changed is read afresh."""
    from auroraplan import usercache

    key = usercache.digest((*usercache.file_stamp(path), repr(tuple(layer_weights))),
                           (lat, lon))
    series, warnings = usercache.kept("weather", key, DISK_CACHE_VERSION,
                                      lambda: read_file(path, lat, lon, layer_weights))
    return [dataclasses_replace(s, file=path) for s in series], warnings


def dataclasses_replace(series: Series, **changes) -> Series:
    import dataclasses

    return dataclasses.replace(series, **changes)


def read_weather_files(paths, lat, lon, layer_weights=(1.0, 0.8, 0.5)) -> FileReading:
    """Cloud at the sites from every weather-model file given.

    Parameters
    ----------
    paths : list of Path
    lat, lon : array_like (N,)
        Site coordinates, degrees (north, east).
    layer_weights : (float, float, float)
        See ``effective_layers``.

    Returns
    -------
    FileReading
        ``series`` from every file that covers at least one site, ``warnings`` for files
        that cover none or miss sites.

    Raises
    ------
    InputError
        One line per bad file (all files are read before raising).
    """
    reading = FileReading()
    problems = []
    for path in paths:
        try:
            series, warnings = read_file_kept(Path(path), lat, lon, layer_weights)
        except InputError as exc:
            problems.extend(exc.problems)
            continue
        reading.series.extend(series)
        reading.files.append(Path(path))
        reading.warnings.extend(warnings)
    if problems:
        raise InputError(problems)
    return reading
