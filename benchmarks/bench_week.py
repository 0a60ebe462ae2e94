"""Where the time of a large `week` goes: each stage as a share of the whole, in one process.

The workspace is generated (200 sites x 7 nights x 20 trips, invented data). The
stages are the ones the command runs: reading the workspace, building the Kp
climatology, the report (sky, view, chance grid and the plan) and the JSON text.
The whole, measured in the same process, is the baseline, so each ratio is that
stage's share; the imports are paid before timing (bench_commands has them).

Run ``python benchmarks/bench_week.py`` (``--quick`` for 50 sites and one repeat).
"""

from __future__ import annotations

import datetime as dt
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from make_workspace import make_workspace  # noqa: E402
from timing import Runs, repeats_for  # noqa: E402

FIRST = dt.date(2027, 1, 11)
NIGHTS = 7


def _stages(folder: Path) -> dict:
    """Seconds of each stage of one week run: in-process caches emptied first, the user
    cache (the kept climatology and Kp-needed tables) as a command finds it."""
    from auroraplan import climatology, report
    from auroraplan.commands._common import json_text
    from auroraplan.workspace import load_workspace

    climatology._load_history_cached.cache_clear()
    climatology.bundled_climatology.cache_clear()
    times = {}
    start = time.perf_counter()
    ws = load_workspace(folder)
    times["read workspace"] = time.perf_counter() - start
    start = time.perf_counter()
    clim = report.workspace_climatology(ws)
    times["Kp climatology"] = time.perf_counter() - start
    start = time.perf_counter()
    result = report.week_report(ws, FIRST, NIGHTS, climatology=clim)
    times["grid + plan"] = time.perf_counter() - start
    start = time.perf_counter()
    json_text(result)
    times["JSON text"] = time.perf_counter() - start
    return times


def run(quick: bool = False) -> list[dict]:
    """Median seconds per stage and its share of the whole week run.

    Returns
    -------
    list of dict
        One per stage: ``name``, ``seconds``, ``baseline`` ("whole week, in-process"),
        ``baseline_seconds`` (sum of the stages) and ``ratio`` (the share).
    """
    import scipy.optimize  # noqa: F401  (paid once, as the command does before its work)
    import skyfield.api  # noqa: F401

    n_sites, n_trips = (50, 20) if quick else (200, 20)
    with tempfile.TemporaryDirectory(prefix="auroraplan-week-") as scratch:
        folder = make_workspace(Path(scratch) / "ws", n_sites, n_trips, FIRST, NIGHTS)
        _stages(folder)  # warm the ephemeris file and the disk cache
        runs = [_stages(folder) for _ in range(repeats_for(quick))]
    stages = {name: Runs(tuple(r[name] for r in runs)) for name in runs[0]}
    whole = Runs(tuple(sum(r.values()) for r in runs))
    size = f"{n_sites} sites x {NIGHTS} nights x {n_trips} trips"
    return [{"name": f"week stage: {name}", "size": size, **stage.fields(),
             "baseline": "whole week, in-process", **whole.fields("baseline_"),
             "ratio": stage.median / whole.median} for name, stage in stages.items()]


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    for row in run(quick="--quick" in argv):
        print(f"{row['name']:<32} {row['seconds']:7.3f} s  {100 * row['ratio']:5.1f} % "
              f"of {row['baseline_seconds']:.3f} s ({row['size']})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
