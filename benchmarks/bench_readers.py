"""Reading and checking clouds.csv and activity.csv against pandas' Arrow reader.

Target: the loader's reading and checking of each file at most 2 x the time of
``pandas.read_csv(path, engine="pyarrow")`` on the same file, measured in the same
process, alternating, median of at least five runs each (with fastest and slowest). Ours
checks every cell and gives the table the commands use; pandas only splits and types.

Files (invented, written here): the clouds.csv of 10,000 generated sites (720,000 rows),
a 1,000,000-row clouds.csv for 8 sites, and an activity.csv of every 3-hour block of
150 years (438,000 rows).

Each row gives wall seconds (median, fastest, slowest) and CPU seconds of every thread
(median) for both. Run ``python benchmarks/bench_readers.py`` (``--quick``: one run,
smaller files).
"""

from __future__ import annotations

import datetime as dt
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from make_workspace import make_workspace, site_names  # noqa: E402
from timing import Runs, repeats_for  # noqa: E402

from auroraplan import workspace  # noqa: E402
from auroraplan.errors import ProblemList  # noqa: E402

TARGET_RATIO = 2.0
KP = ("0o", "1-", "1o", "1+", "2-", "2o", "2+", "3-", "3o", "3+", "4-", "4o", "5-", "G1")


def _clouds_for_few_sites(path: Path, sites: int, rows: int) -> set:
    names = site_names(sites)
    hours = rows // sites
    start = np.datetime64("2027-01-01T00:00", "m")
    times = [f"{t}Z" for t in (start + np.arange(hours) * np.timedelta64(1, "h")).astype(str)]
    rng = np.random.default_rng(1)
    with path.open("w", encoding="utf-8") as out:
        out.write("site,time_utc,cloud_pct\n")
        for name in names:
            cloud = rng.integers(0, 101, hours)
            out.writelines(f"{name},{t},{c}\n" for t, c in zip(times, cloud, strict=True))
    return set(names)


def _activity(path: Path, years: int) -> None:
    starts = np.arange(np.datetime64("1900-01-01T00:00", "m"),
                       np.datetime64(f"{1900 + years}-01-01T00:00", "m"), np.timedelta64(3, "h"))
    rng = np.random.default_rng(2)
    kp = rng.integers(0, len(KP), len(starts))
    with path.open("w", encoding="utf-8") as out:
        out.write("start_utc,kp,kp_sd\n")
        out.writelines(f"{t}Z,{KP[k]},{'0.8' if k % 5 == 0 else ''}\n"
                       for t, k in zip(starts.astype(str), kp, strict=True))


def _ours(role: str, path: Path, names):
    problems = ProblemList()
    if role == "clouds":
        table = workspace._load_clouds(path, str(path), names, problems)
    else:
        table = workspace._load_activity(path, str(path), problems)
    if table is None or len(problems):
        raise AssertionError(f"{path}: {list(problems)[:1]}")
    return table


def _time(function) -> tuple[float, float]:
    """Wall and CPU seconds (every thread of the process) of one call."""
    wall, cpu = time.perf_counter(), time.process_time()
    function()
    return time.perf_counter() - wall, time.process_time() - cpu


def run(quick: bool = False) -> list[dict]:
    """One dict per file: ours against pandas' Arrow engine, medians and ratio."""
    import pandas as pd

    repeats = repeats_for(quick)
    rows = []
    with tempfile.TemporaryDirectory(prefix="auroraplan-readers-") as scratch:
        scratch = Path(scratch)
        big = make_workspace(scratch / "big", 1_000 if quick else 10_000, 4,
                             dt.date(2027, 1, 11), 3, forecasts=True)
        files = [("clouds", big / "clouds.csv", set(site_names(1_000 if quick else 10_000)),
                  f"clouds.csv, {'72,000' if quick else '720,000'} rows, "
                  f"{1_000 if quick else 10_000:,} sites")]
        few = scratch / "few.csv"
        count = 100_000 if quick else 1_000_000
        files.append(("clouds", few, _clouds_for_few_sites(few, 8, count),
                      f"clouds.csv, {count:,} rows, 8 sites"))
        act = scratch / "activity.csv"
        _activity(act, 15 if quick else 150)
        files.append(("activity", act, None,
                      f"activity.csv, {'43,800' if quick else '438,000'} rows"))
        for role, path, names, label in files:
            _ours(role, path, names)  # warm up: Arrow's import and thread pool
            pd.read_csv(path, engine="pyarrow")
            ours, theirs = [], []  # (wall, CPU) seconds of each run
            for _ in range(repeats):  # alternating, so both see the same machine load
                ours.append(_time(lambda role=role, path=path, names=names:
                                  _ours(role, path, names)))
                theirs.append(_time(lambda path=path: pd.read_csv(path, engine="pyarrow")))
            wall, base_wall = Runs(tuple(w for w, _ in ours)), Runs(tuple(w for w, _ in theirs))
            rows.append({
                "name": f"read and check {label}", "size": f"{path.stat().st_size / 1e6:.0f} MB",
                **wall.fields(), "baseline": "pandas.read_csv(engine=pyarrow)",
                **base_wall.fields("baseline_"), "ratio": wall.median / base_wall.median,
                "cpu_seconds": statistics.median(c for _, c in ours),
                "baseline_cpu_seconds": statistics.median(c for _, c in theirs),
                "target_seconds": TARGET_RATIO * base_wall.median,
                "ok": wall.median <= TARGET_RATIO * base_wall.median,
            })
    return rows


def main() -> int:
    for r in run(quick="--quick" in sys.argv):
        print(f"{r['name']} ({r['size']}): {r['seconds']:.3f} s ({r['min_s']:.3f}-"
              f"{r['max_s']:.3f}; CPU {r['cpu_seconds']:.3f}); pandas+Arrow "
              f"{r['baseline_seconds']:.3f} s ({r['baseline_min_s']:.3f}-{r['baseline_max_s']:.3f}"
              f"; CPU {r['baseline_cpu_seconds']:.3f}); ratio {r['ratio']:.2f} "
              f"(target {TARGET_RATIO:g}) {'met' if r['ok'] else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
