"""Cloud from weather-model files at the sites: 3 models × 72 hourly steps on a 500 × 500
grid, to 100 sites (target: under 2 s and 300 MB on top of the process).

The files are GRIB2 written with ecCodes (16-bit packing, as weather centres publish
them). Ours: ``weatherfiles.read_weather_files`` (only the block around the sites is
decoded into memory) and ``weather.cloud_grid`` for the 72 hours, timed twice: with the
user cache emptied before each run (every file decoded) and with the readings kept there
from the run before (as every later command on the same files). Baseline, in the same
run: plain xarray over cfgrib, ``open_dataset`` and one ``.interp`` per site (xarray's
default caching loads each model's whole array once). Both must agree within 0.01 %.

Median of 5 runs of each, with the fastest and slowest. The baseline takes about a
second per site and model, so each of its runs times the first site of every model (opening and
decoding the file included) and the next ``BASELINE_SAMPLE - 1`` sites, and counts the
remaining sites at the measured per-site cost (the loop's cost after the first site is the
same for every site); its values are checked on the sampled sites.
"""

import os
import shutil
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from timing import Runs, repeats_for, timed  # noqa: E402

from auroraplan.weather import cloud_grid  # noqa: E402
from auroraplan.weatherfiles import eccodes_module, read_weather_files  # noqa: E402
from auroraplan.weathersamples import write_grib2  # noqa: E402
from auroraplan.workspace import Site  # noqa: E402

TARGET_S = 2.0
TARGET_MB = 300.0
RUN = np.datetime64("2027-01-12T00:00", "s")
BASELINE_SAMPLE = 10


def _files(folder: Path, size: int, steps: int, models: int = 3) -> list[Path]:
    lats = np.linspace(75.0, 60.0, size)
    lons = np.linspace(5.0, 35.0, size)
    lat2, lon2 = np.meshgrid(lats, lons, indexing="ij")
    paths = []
    for m in range(models):
        fields = np.array([np.clip(50 + 40 * np.sin(lat2 * 0.9 + s * 0.2 + m)
                                   * np.cos(lon2 * 0.4 - s * 0.1), 0, 100) for s in range(steps)])
        path = folder / f"model{m}.grib2"
        write_grib2(path, lats, lons, RUN, np.arange(steps), fields, centre=255)
        paths.append(path)
    return paths


def _sites(n: int):
    rng = np.random.default_rng(7)
    lat = rng.uniform(67.0, 71.0, n)
    lon = rng.uniform(14.0, 28.0, n)
    return [Site(name=f"S{i}", lat=float(a), lon=float(b)) for i, (a, b) in enumerate(
        zip(lat, lon, strict=True))], lat, lon


def _ours(paths, sites, lat, lon, steps, kept: bool):
    """Cloud at the sites; ``kept`` False: the user cache emptied first, so every file is
    decoded, as on the first run after a new forecast arrives."""
    if not kept:
        shutil.rmtree(Path(os.environ["AURORAPLAN_CACHE"]), ignore_errors=True)
    reading = read_weather_files(paths, lat, lon)
    times = RUN + np.arange(steps) * np.timedelta64(3600, "s")
    return cloud_grid(sites, None, times, reading=reading).model_pct


def _baseline(paths, lat, lon, n_sites: int):
    """Seconds the per-site loop would take for ``n_sites`` (see the module docstring),
    and its values (models, sampled sites, steps)."""
    import xarray as xr

    seconds, out = 0.0, []
    for path in paths:
        start = time.perf_counter()
        ds = xr.open_dataset(path, engine="cfgrib", backend_kwargs={"indexpath": ""})
        var = ds[list(ds.data_vars)[0]]
        values = [var.interp(latitude=lat[0], longitude=lon[0]).values]
        first = time.perf_counter() - start
        start = time.perf_counter()
        values += [var.interp(latitude=a, longitude=b).values
                   for a, b in zip(lat[1:], lon[1:], strict=True)]
        each = (time.perf_counter() - start) / (len(lat) - 1)
        ds.close()
        seconds += first + each * (n_sites - 1)
        out.append(np.array(values))
    return seconds, np.array(out)


def run(quick=False) -> list:
    """Ours (files decoded, then readings kept in the user cache) and the baseline, median
    of 5 runs each (1 when quick); one dict per figure.

    Returns
    -------
    dict
        ``name``, ``seconds`` (with ``min_s``/``max_s``), ``baseline_seconds`` (with its
        min and max), ``ratio``, ``peak_extra_mb`` (peak of the memory our reading
        allocates, numpy arrays included, as tracemalloc counts it; the files are written
        before, so the process's resident peak cannot show it), ``target_seconds``,
        ``target_mb``, ``ok``.
    """
    size, steps, n = (200, 24, 100) if quick else (500, 72, 100)
    eccodes_module()
    import cfgrib  # noqa: F401  loaded before measuring, as a command has it loaded
    import xarray  # noqa: F401

    repeats = repeats_for(quick)
    with tempfile.TemporaryDirectory() as tmp:
        paths = _files(Path(tmp), size, steps)
        sites, lat, lon = _sites(n)
        os.environ["AURORAPLAN_CACHE"] = str(Path(tmp) / "cache")
        tracemalloc.start()
        runs, ours = timed(lambda: _ours(paths, sites, lat, lon, steps, False), repeats)
        extra_mb = tracemalloc.get_traced_memory()[1] / 2**20  # ours: (M, N, T)
        tracemalloc.stop()
        kept, again = timed(lambda: _ours(paths, sites, lat, lon, steps, True), repeats)
        if not np.array_equal(again, ours, equal_nan=True):
            raise AssertionError("the kept reading differs from the decoded one")
        sample = slice(0, BASELINE_SAMPLE)
        measured = [_baseline(paths, lat[sample], lon[sample], n) for _ in range(repeats)]
        base = Runs(tuple(m[0] for m in measured))
        agree = bool(np.allclose(ours[:, sample], measured[0][1], atol=0.01))
    seconds = runs.median
    name = f"weather: 3 models × {steps} h on {size}×{size} GRIB2 to {n} sites"
    return [{
        "name": f"{name}, files decoded",
        **runs.fields(),
        "baseline": "plain xarray `.interp` per site",
        **base.fields("baseline_"),
        "ratio": seconds / base.median,
        "peak_extra_mb": round(extra_mb, 1),
        "target_seconds": TARGET_S,
        "target_mb": TARGET_MB,
        "agree_with_baseline": agree,
        "ok": seconds <= TARGET_S and extra_mb <= TARGET_MB and agree,
    }, {
        "name": f"{name}, readings kept in the user cache",
        **kept.fields(),
        "baseline": "plain xarray `.interp` per site",
        **base.fields("baseline_"),
        "ratio": kept.median / base.median,
        "target_seconds": TARGET_S,
        "ok": kept.median <= TARGET_S and agree,
    }]


if __name__ == "__main__":
    for row in run(quick="--quick" in sys.argv):
        print(row)
