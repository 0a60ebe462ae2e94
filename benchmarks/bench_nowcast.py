"""The guide's `nowcast` command on the demo: whole process against its import floor.

The nowcast is what a guide runs from a phone's terminal app or a laptop at base an hour
before leaving, so it is timed as a fresh process, start-up included. The floor is a fresh
interpreter importing what the command needs (numpy, skyfield, aacgmv2, rich, and pandas,
which the workspace loader uses for the Kp and cloud files); the ratio says how much of
the time is ours. Also measured, in-process: reading and estimating from the solar-wind
file against the whole command's in-process time.

Run ``python benchmarks/bench_nowcast.py`` (``--quick`` for fewer repeats).
"""

from __future__ import annotations

import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))

from timing import Runs, repeats_for  # noqa: E402

DEMO = ROOT / "demo_sites"
PY = sys.executable

COMMAND = [PY, "-m", "auroraplan.cli", "nowcast", str(DEMO), "--json"]
FLOOR = [PY, "-c", "import numpy, pandas, skyfield.api, aacgmv2, rich.table"]
TARGET_S = 1.0
"""A guide's next-hour check should answer within a second on the demo."""


def _timed(argv) -> tuple[float, float]:
    """Wall seconds and peak resident MB of one fresh child process."""
    start = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _pid, status, usage = __import__("os").wait4(proc.pid, 0)
    seconds = time.perf_counter() - start
    if status != 0:
        raise RuntimeError(f"{' '.join(argv)} exited with status {status}")
    return seconds, usage.ru_maxrss / 1024.0


def _in_process(repeats: int) -> tuple[Runs, Runs]:
    """Runs of (read + estimate from the solar-wind file, the whole report)."""
    import datetime as dt

    from auroraplan import report
    from auroraplan.workspace import load_workspace, solar_wind_for

    ws = load_workspace(DEMO)
    at = dt.datetime(2027, 1, 12, 19, 10, tzinfo=dt.UTC)
    report.nowcast_report(ws, solar_wind_for(ws), at=at)  # warm caches
    read, whole = [], []
    for _ in range(repeats):
        t0 = time.perf_counter()
        wind = solar_wind_for(ws)
        report.solar_wind_estimate(wind)
        t1 = time.perf_counter()
        report.nowcast_report(ws, wind, at=at)
        t2 = time.perf_counter()
        read.append(t1 - t0)
        whole.append(t2 - t1 + (t1 - t0))
    return Runs(tuple(read)), Runs(tuple(whole))


def run(quick: bool = False) -> list[dict]:
    """Rows for benchmarks/run_all.py: the command against its floor, and the solar-wind
    stage against the command's in-process work."""
    repeats = repeats_for(quick, 7)
    _timed(COMMAND)  # warm the disk cache and the climatology cache
    command, floor = [], []
    for _ in range(repeats):  # alternately, so both see the same load
        command.append(_timed(COMMAND))
        floor.append(_timed(FLOOR))
    runs = Runs(tuple(c[0] for c in command))
    read, whole = _in_process(repeats)
    return [
        {"name": "nowcast demo_sites (whole process)", **runs.fields(),
         "baseline": "imports: nowcast", **Runs(tuple(f[0] for f in floor)).fields("baseline_"),
         "target_seconds": TARGET_S, "met": runs.median <= TARGET_S,
         "peak_mb": max(c[1] for c in command)},
        {"name": "nowcast: read + estimate from solarwind.csv", **read.fields(),
         "baseline": "whole nowcast report, in-process", **whole.fields("baseline_"),
         "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0},
    ]


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    for row in run(quick="--quick" in argv):
        extra = f" (min {row['min_s']:.3f}, max {row['max_s']:.3f}, {row['repeats']} runs)"
        print(f"{row['name']:<46} {row['seconds']:7.3f} s vs {row['baseline']} "
              f"{row['baseline_seconds']:.3f} s = {row['seconds'] / row['baseline_seconds']:.2f}"
              f"{extra}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
