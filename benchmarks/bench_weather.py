"""Cloud from weather-model files at the sites: 3 models × 72 hourly steps on a 500 × 500
grid, to 100 sites (target: under 2 s and 300 MB on top of the process).

The files are GRIB2 written with ecCodes (16-bit packing, as weather centres publish
them). Ours: ``weatherfiles.read_weather_files`` (only the block around the sites is
decoded into memory) and ``weather.cloud_grid`` for the 72 hours. Baseline, in the same
run: plain xarray over cfgrib, ``open_dataset`` and one ``.interp`` per site (xarray's
default caching loads each model's whole array once). Both must agree within 0.01 %.
"""

import statistics
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from auroraplan.weather import cloud_grid  # noqa: E402
from auroraplan.weatherfiles import eccodes_module, read_weather_files  # noqa: E402
from auroraplan.weathersamples import write_grib2  # noqa: E402
from auroraplan.workspace import Site  # noqa: E402

TARGET_S = 2.0
TARGET_MB = 300.0
RUN = np.datetime64("2027-01-12T00:00", "s")


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


def _ours(paths, sites, lat, lon, steps):
    start = time.perf_counter()
    reading = read_weather_files(paths, lat, lon)
    times = RUN + np.arange(steps) * np.timedelta64(3600, "s")
    grid = cloud_grid(sites, None, times, reading=reading)
    return time.perf_counter() - start, grid.model_pct


def _baseline(paths, lat, lon):
    import xarray as xr

    start = time.perf_counter()
    out = []
    for path in paths:
        ds = xr.open_dataset(path, engine="cfgrib", backend_kwargs={"indexpath": ""})
        var = ds[list(ds.data_vars)[0]]
        out.append(np.array([var.interp(latitude=a, longitude=b).values
                             for a, b in zip(lat, lon, strict=True)]))  # (N, S) per model
        ds.close()
    return time.perf_counter() - start, np.array(out)


def run(quick=False) -> dict:
    """One measurement (median of 3 when not quick) of ours, then the baseline.

    Returns
    -------
    dict
        ``name``, ``seconds``, ``baseline_seconds``, ``ratio``, ``peak_extra_mb`` (peak of
        the memory our reading allocates, numpy arrays included, as tracemalloc counts it;
        the files are written before, so the process's resident peak cannot show it),
        ``target_seconds``, ``target_mb``, ``ok``.
    """
    size, steps, n = (200, 24, 100) if quick else (500, 72, 100)
    eccodes_module()
    import cfgrib  # noqa: F401  loaded before measuring, as a command has it loaded
    import xarray  # noqa: F401

    with tempfile.TemporaryDirectory() as tmp:
        paths = _files(Path(tmp), size, steps)
        sites, lat, lon = _sites(n)
        tracemalloc.start()
        runs = [_ours(paths, sites, lat, lon, steps) for _ in range(1 if quick else 3)]
        extra_mb = tracemalloc.get_traced_memory()[1] / 2**20
        tracemalloc.stop()
        seconds = statistics.median(r[0] for r in runs)
        base_seconds, base = _baseline(paths, lat, lon)
        ours = runs[0][1]  # (M, N, T)
        agree = bool(np.allclose(ours, base, atol=0.01))
    return {
        "name": f"weather: 3 models × {steps} h on {size}×{size} GRIB2 to {n} sites",
        "seconds": round(seconds, 3),
        "baseline_seconds": round(base_seconds, 3),
        "ratio": round(seconds / base_seconds, 3),
        "peak_extra_mb": round(extra_mb, 1),
        "target_seconds": TARGET_S,
        "target_mb": TARGET_MB,
        "agree_with_baseline": agree,
        "ok": seconds <= TARGET_S and extra_mb <= TARGET_MB and agree,
    }


if __name__ == "__main__":
    print(run(quick="--quick" in sys.argv))
