"""Writing small cloud files in the formats weather centres publish: GRIB2 and CF NetCDF.

Used to make the demo's invented model files, the test files with known fields and the
benchmark's large files. GRIB2 messages start from ecCodes' own "GRIB2" sample (a valid
message that ships with the library) and set the WMO section keys; NetCDF follows the CF
conventions (standard name ``cloud_area_fraction``, a ``grid_mapping`` for rotated grids).
"""

from __future__ import annotations

import numpy as np

GRIB_TOTAL_CLOUD = {"percent": 228164, "fraction": 164}
"""ecCodes paramId of total cloud cover in percent (GRIB2 0/6/1) and as a fraction 0-1."""

GRIB_LAYERS = {"low": 3073, "medium": 3074, "high": 3075}
"""ecCodes paramId of low, medium and high cloud cover in percent (GRIB2 0/6/3, 4, 5)."""


def write_grib2(path, lats, lons, reference_utc, steps_h, fields, *, param_id=228164,
                centre="ecmf", process=None, member=None, append=False, bits_per_value=16):
    """Write a regular latitude/longitude GRIB2 file, one message per step.

    Parameters
    ----------
    path : str or Path
    lats, lons : array_like (J,), (I,)
        Grid axes, degrees; equally spaced; latitudes either order, longitudes ascending
        (-180..180 or 0..360).
    reference_utc : numpy.datetime64
        Run time (whole hours).
    steps_h : array_like of int (S,)
        Forecast steps, hours.
    fields : numpy.ndarray (S, J, I)
        Values in the unit of ``param_id``.
    param_id : int
        ecCodes paramId (``GRIB_TOTAL_CLOUD``, ``GRIB_LAYERS``).
    centre : str or int
        Originating centre; 255 = missing.
    process : int or None
        Generating process identifier.
    member : int or None
        Ensemble member number (product definition template 4.1), None for a single run.
    append : bool
        Add to an existing file.
    bits_per_value : int
        Simple packing precision (16: 0-100 % to 0.002; 8: to 0.4).
    """
    from auroraplan.weatherfiles import eccodes_module

    eccodes = eccodes_module()
    lats = np.asarray(lats, float)
    lons = np.asarray(lons, float)
    ref = np.datetime64(reference_utc, "m").astype(object)
    fields = np.asarray(fields, float)
    with open(path, "ab" if append else "wb") as out:
        for k, step in enumerate(np.asarray(steps_h, int)):
            handle = eccodes.codes_grib_new_from_samples("GRIB2")
            try:
                eccodes.codes_set(handle, "centre", centre)
                if member is not None:
                    eccodes.codes_set(handle, "productDefinitionTemplateNumber", 1)
                    eccodes.codes_set(handle, "typeOfEnsembleForecast", 3)
                    eccodes.codes_set(handle, "perturbationNumber", int(member))
                    eccodes.codes_set(handle, "numberOfForecastsInEnsemble", 51)
                eccodes.codes_set(handle, "paramId", int(param_id))
                if process is not None:
                    eccodes.codes_set(handle, "generatingProcessIdentifier", int(process))
                eccodes.codes_set(handle, "dataDate", int(ref.strftime("%Y%m%d")))
                eccodes.codes_set(handle, "dataTime", int(ref.strftime("%H%M")))
                eccodes.codes_set(handle, "stepUnits", 1)
                eccodes.codes_set(handle, "forecastTime", int(step))
                for key, value in (
                    ("gridType", "regular_ll"), ("Ni", lons.size), ("Nj", lats.size),
                    ("latitudeOfFirstGridPointInDegrees", float(lats[0])),
                    ("latitudeOfLastGridPointInDegrees", float(lats[-1])),
                    ("longitudeOfFirstGridPointInDegrees", float(lons[0])),
                    ("longitudeOfLastGridPointInDegrees", float(lons[-1])),
                    ("iDirectionIncrementInDegrees", abs(float(lons[1] - lons[0]))),
                    ("jDirectionIncrementInDegrees", abs(float(lats[1] - lats[0]))),
                    ("jScansPositively", int(lats[-1] > lats[0])),
                ):
                    eccodes.codes_set(handle, key, value)
                eccodes.codes_set(handle, "bitsPerValue", int(bits_per_value))
                eccodes.codes_set_values(handle, fields[k].ravel())
                eccodes.codes_write(handle, out)
            finally:
                eccodes.codes_release(handle)


def cf_cloud_dataset(times_utc, fields, y, x, *, unit="%", source=None, rotated_pole=None,
                     reference_utc=None, members=None, layer="cloud_area_fraction"):
    """A CF-conventions xarray Dataset of cloud cover.

    Parameters
    ----------
    times_utc : array_like of datetime64 (T,)
        Valid times.
    fields : numpy.ndarray (T, Y, X) or (T, E, Y, X) with ``members``
    y, x : array_like
        Latitude and longitude, or with ``rotated_pole`` the rotated grid's latitude and
        longitude (CF ``grid_latitude``, ``grid_longitude``), degrees.
    unit : str
        "%" or "1" (a fraction).
    source : str or None
        Global ``source`` attribute (the model).
    rotated_pole : (float, float) or None
        Grid north pole latitude and longitude (CF ``rotated_latitude_longitude``).
    reference_utc : datetime64 or None
        ``forecast_reference_time``.
    members : array_like of int or None
        Ensemble member numbers (CF standard name ``realization``).
    layer : str
        CF standard name of the variable.
    """
    import xarray as xr

    spatial = ("rlat", "rlon") if rotated_pole else ("lat", "lon")
    dims = ("time", "realization", *spatial) if members is not None else ("time", *spatial)
    attrs = {"standard_name": layer, "units": unit, "long_name": layer.replace("_", " ")}
    coords = {"time": ("time", np.asarray(times_utc, "datetime64[ns]"),
                       {"standard_name": "time"})}
    if rotated_pole:
        attrs["grid_mapping"] = "rotated_pole"
        coords["rlat"] = ("rlat", np.asarray(y, float),
                          {"standard_name": "grid_latitude", "units": "degrees", "axis": "Y"})
        coords["rlon"] = ("rlon", np.asarray(x, float),
                          {"standard_name": "grid_longitude", "units": "degrees", "axis": "X"})
    else:
        coords["lat"] = ("lat", np.asarray(y, float),
                         {"standard_name": "latitude", "units": "degrees_north"})
        coords["lon"] = ("lon", np.asarray(x, float),
                         {"standard_name": "longitude", "units": "degrees_east"})
    if members is not None:
        coords["realization"] = ("realization", np.asarray(members),
                                 {"standard_name": "realization"})
    if reference_utc is not None:
        coords["forecast_reference_time"] = ((), np.datetime64(reference_utc, "ns"),
                                             {"standard_name": "forecast_reference_time"})
    data = {"cloud": (dims, np.asarray(fields, np.float32), attrs)}
    if rotated_pole:
        data["rotated_pole"] = ((), np.int32(0), {
            "grid_mapping_name": "rotated_latitude_longitude",
            "grid_north_pole_latitude": float(rotated_pole[0]),
            "grid_north_pole_longitude": float(rotated_pole[1]),
        })
    ds = xr.Dataset(data, coords=coords, attrs={"Conventions": "CF-1.8"})
    if source:
        ds.attrs["source"] = source
    return ds
