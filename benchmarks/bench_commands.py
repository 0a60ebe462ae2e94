"""Whole-command wall time and peak memory, each against a floor measured in the same run.

Every figure is a fresh process, as an operator would start it: the median wall
time of at least five runs with the fastest and slowest, and the largest peak resident
memory (``ru_maxrss`` of that one child, from ``os.wait4``). Floors are measured
alongside, five runs each:

- interpreter start (``python -c pass``) for ``auroraplan --help``;
- the import floor (``python -c "import numpy, ..."`` with the third-party libraries
  the command was seen to load, no more) for the working commands: the part of the
  time no code of ours can remove. A large clouds.csv brings Arrow's CSV reader
  (which loads pandas itself), so those rows have a floor with them.

Large inputs come from ``make_workspace`` (invented data) in a temporary folder; every
generated workspace has clouds.csv and activity.csv for its first three nights, as a
short-range forecast would, whether or not the command reads them. A target given as a
multiple of another row (``linear_to``) is checked against that row's median of the
same run. ``memory_growth`` doubles the sites, then the hours, and prints each ratio of
peak memory. With ``quick`` the repeats drop to one and the largest inputs shrink; a
shrunken figure has no target, since the targets are stated for the full sizes.

Run ``python benchmarks/bench_commands.py [--quick] [--only TEXT]`` (``--only`` runs the
rows whose name holds TEXT).
"""

from __future__ import annotations

import datetime as dt
import shutil
import statistics
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from make_workspace import make_workspace  # noqa: E402
from timing import REPEATS  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_sites"
PY = sys.executable

LARGE_FILES = "pyarrow.csv, pyarrow.compute, pandas"
FLOORS = {
    # name: the command run for it. The import lists are the third-party packages each
    # command was seen to load (sys.modules after a run), so the floor is what it must pay.
    "interpreter start": [PY, "-c", "pass"],
    "imports: tonight": [PY, "-c", "import numpy, skyfield.api, aacgmv2, rich.table"],
    "imports: tonight, large files": [PY, "-c", "import numpy, skyfield.api, aacgmv2, "
                                      f"rich.table, {LARGE_FILES}"],
    "imports: week": [PY, "-c", "import numpy, scipy.optimize, scipy.sparse, skyfield.api, "
                      "aacgmv2"],
    "imports: week, large files": [PY, "-c", "import numpy, scipy.optimize, scipy.sparse, "
                                   f"skyfield.api, aacgmv2, {LARGE_FILES}"],
    "imports: season": [PY, "-c", "import numpy, skyfield.api, aacgmv2"],
    "imports: sites": [PY, "-c", "import numpy, aacgmv2"],
}
FLOOR_REPEATS = REPEATS


@dataclass(frozen=True)
class Generated:
    """Arguments of make_workspace for one generated workspace."""

    sites: int
    trips: int
    first_night: dt.date
    nights: int
    forecasts: bool = True

    def label(self) -> str:
        return f"{self.sites:,} sites"


@dataclass(frozen=True)
class Case:
    """One timed command line; ``{ws}`` stands for the workspace folder."""

    name: str
    args: tuple
    target_s: float
    floor: str
    workspace: Generated | None = None  # None: demo_sites
    memory_target_mb: float | None = None
    quick_workspace: Generated | None = None  # smaller stand-in when quick (no target then)
    repeats: int = REPEATS
    floor_factor: float | None = None  # target: the larger of target_s and this x the floor
    linear_to: str | None = None  # target: target_s x the median of the row of this name


JAN = dt.date(2027, 1, 11)
SEP = dt.date(2026, 9, 1)
SEASON = ("season", "{ws}", "--from", "2026-09-01", "--to", "2027-04-13", "--json")
BIG = Generated(10_000, 6, JAN, 7)  # with 720,000 hourly cloud rows (3 nights x 24 h)
CASES = (
    Case("auroraplan --help", ("--help",), 0.5, "interpreter start", repeats=7),
    Case("tonight demo_sites", ("tonight", "{ws}", "--date", "2027-01-12"), 0.8,
         "imports: tonight", floor_factor=3.0),
    Case("week demo_sites --json", ("week", "{ws}", "--start", "2027-01-11", "--json"), 3.0,
         "imports: week"),
    Case("week 50 sites x 7 nights x 6 trips", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 3.0, "imports: week", workspace=Generated(50, 6, JAN, 7)),
    Case("week 200 sites x 7 nights x 20 trips", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 10.0, "imports: week", workspace=Generated(200, 20, JAN, 7),
         quick_workspace=Generated(50, 20, JAN, 7)),
    Case("week 100 sites x 7 nights x 100 trips", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 15.0, "imports: week", workspace=Generated(100, 100, JAN, 7),
         quick_workspace=Generated(50, 30, JAN, 7)),
    Case("tonight 10,000 sites, 720,000 cloud rows", ("tonight", "{ws}", "--date",
         "2027-01-12"), 5.0, "imports: tonight, large files", workspace=BIG,
         memory_target_mb=1024.0, quick_workspace=Generated(1_000, 6, JAN, 7)),
    Case("week 10,000 sites, 720,000 cloud rows", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 10.0, "imports: week, large files", workspace=BIG,
         memory_target_mb=1536.0, quick_workspace=Generated(1_000, 6, JAN, 7)),
    Case("season demo_sites 2026-09-01..2027-04-15", ("season", "{ws}", "--from", "2026-09-01",
         "--to", "2027-04-15", "--json"), 15.0, "imports: season"),
    Case("season 100 sites x 225 nights", SEASON, 3.0, "imports: season",
         workspace=Generated(100, 6, SEP, 225), memory_target_mb=1536.0,
         quick_workspace=Generated(20, 6, SEP, 225)),
    Case("season 1,000 sites x 225 nights", SEASON, 15.0, "imports: season",
         workspace=Generated(1_000, 6, SEP, 225), memory_target_mb=1536.0,
         quick_workspace=Generated(100, 6, SEP, 225)),
    Case("season 3,000 sites x 225 nights", SEASON, 3.0, "imports: season",
         workspace=Generated(3_000, 6, SEP, 225), memory_target_mb=1536.0,
         quick_workspace=Generated(300, 6, SEP, 225),
         linear_to="season 1,000 sites x 225 nights"),
    Case("sites, 10,000 sites", ("sites", "{ws}", "--date", "2027-01-12", "--json"), 15.0,
         "imports: sites", workspace=Generated(10_000, 6, JAN, 7),
         quick_workspace=Generated(1_000, 6, JAN, 7)),
)


def auroraplan_command() -> list[str]:
    """The installed console script beside this Python, else the checkout's cli.py."""
    script = Path(PY).parent / "auroraplan"
    return [str(script)] if script.exists() else [PY, str(ROOT / "cli.py")]


# Runs in its own small interpreter, so the measured child is forked from a ~10 MB process:
# on Linux the child's ru_maxrss keeps the high-water mark of the memory it was forked
# from, and this benchmark's own process holds numpy and more.
SPAWNER = """
import os, sys, time
argv = sys.argv[1:]
start = time.perf_counter()
pid = os.posix_spawnp(argv[0], argv, os.environ,
                      file_actions=[(os.POSIX_SPAWN_OPEN, 1, os.devnull, os.O_WRONLY, 0)])
_, status, usage = os.wait4(pid, 0)
print(time.perf_counter() - start, usage.ru_maxrss, os.waitstatus_to_exitcode(status))
"""


def time_process(argv) -> tuple[float, float, int, str]:
    """Run argv once in a fresh process, started from a small spawner process.

    Returns
    -------
    tuple
        Wall time in s (spawn to exit, measured by the spawner), peak resident memory of
        that child in MB (``ru_maxrss`` from ``os.wait4``, kilobytes on Linux; it cannot
        be below the spawner's own ~10 MB), exit code, and the last line of stderr.
    """
    with tempfile.TemporaryFile() as err:
        done = subprocess.run([PY, "-S", "-c", SPAWNER, *argv], stdout=subprocess.PIPE,
                              stderr=err, cwd=ROOT, check=True)
        err.seek(0)
        lines = err.read().decode("utf-8", "replace").strip().splitlines()
    seconds, kilobytes, code = done.stdout.split()
    return float(seconds), int(kilobytes) / 1024.0, int(code), (lines[-1] if lines else "")


def median_run(argv, repeats: int) -> dict:
    """Median, fastest and slowest wall time and largest peak memory over repeats; stops
    at the first failure."""
    times, peaks = [], []
    for _ in range(repeats):
        seconds, peak, code, last = time_process(argv)
        if code != 0:
            return {"seconds": None, "min_s": None, "max_s": None, "peak_mb": peak,
                    "error": f"exit {code}: {last}", "runs": len(times)}
        times.append(seconds)
        peaks.append(peak)
    return {"seconds": statistics.median(times), "min_s": min(times), "max_s": max(times),
            "peak_mb": max(peaks), "error": None, "runs": len(times)}


def _workspace_for(case: Case, quick: bool, scratch: Path, made: dict) -> tuple[Path, bool]:
    """The folder the case runs on and whether it is the full-size input."""
    spec = case.quick_workspace if quick and case.quick_workspace else case.workspace
    if spec is None:  # a copy: the commands keep their chances in the workspace database
        demo = scratch / "demo_sites"
        if not demo.is_dir():
            shutil.copytree(DEMO, demo, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
        return demo, True
    if spec not in made:
        folder = scratch / f"ws{len(made)}"
        make_workspace(folder, spec.sites, spec.trips, spec.first_night, spec.nights,
                       seed=len(made), forecasts=spec.forecasts)
        made[spec] = folder
    return made[spec], spec == case.workspace


def _target(case: Case, floor: dict, done: dict, full_size: bool) -> float | None:
    """The row's target in seconds: fixed, a multiple of the floor, or of another row."""
    if not full_size:
        return None
    if case.linear_to is not None:
        other = done.get(case.linear_to)
        return None if other is None else case.target_s * other
    if case.floor_factor is not None and floor["seconds"] is not None:
        return max(case.target_s, case.floor_factor * floor["seconds"])
    return case.target_s


def _row(case: Case, result: dict, floor: dict, target, full_size: bool, size: str) -> dict:
    seconds = result["seconds"]
    met = None if target is None or seconds is None else seconds <= target
    if met is not None and case.memory_target_mb is not None:
        met = met and result["peak_mb"] < case.memory_target_mb
    name = case.name if full_size else f"{case.name} [quick: {size}]"
    return {
        "name": name,
        "seconds": seconds,
        "min_s": result["min_s"],
        "max_s": result["max_s"],
        "target_seconds": target,
        "ok": met,
        "peak_mb": result["peak_mb"],
        "memory_target_mb": case.memory_target_mb if full_size else None,
        "baseline": case.floor,
        "baseline_seconds": floor["seconds"],
        "baseline_min_s": floor["min_s"],
        "baseline_max_s": floor["max_s"],
        "ratio": None if seconds is None else seconds / floor["seconds"],
        "repeats": result["runs"],
        "error": result["error"],
    }


def run(quick: bool = False, cases=CASES, only: str | None = None) -> list[dict]:
    """Time every case and its floor; one dict per case.

    Returns
    -------
    list of dict
        ``name``, ``seconds`` (median wall time, None when the command failed), ``min_s``
        and ``max_s``, ``target_seconds`` (None for a shrunken quick input), ``ok``,
        ``peak_mb``, ``memory_target_mb``, ``baseline`` (floor name), ``baseline_seconds``
        (its median, with ``baseline_min_s`` and ``baseline_max_s``), ``ratio`` (seconds /
        floor), ``repeats`` and ``error`` (None or the last line the command wrote to
        stderr).
    """
    cases = [c for c in cases if only is None or only in c.name]
    command = auroraplan_command()
    floors = {}
    for name in sorted({case.floor for case in cases}):
        floors[name] = median_run(FLOORS[name], 3 if quick else FLOOR_REPEATS)
    rows, done = [], {}
    with tempfile.TemporaryDirectory(prefix="auroraplan-bench-") as scratch:
        made = {}
        for case in cases:
            folder, full_size = _workspace_for(case, quick, Path(scratch), made)
            spec = case.quick_workspace if not full_size else case.workspace
            argv = command + [a.format(ws=folder) for a in case.args]
            result = median_run(argv, 1 if quick else case.repeats)
            done[case.name] = result["seconds"]
            target = _target(case, floors[case.floor], done, full_size)
            rows.append(_row(case, result, floors[case.floor], target, full_size,
                             spec.label() if spec else "demo"))
        if only is None or "memory" in only:
            rows.extend(memory_growth(quick, Path(scratch), command))
    return rows


def memory_growth(quick: bool, scratch: Path, command) -> list[dict]:
    """Peak memory as the sites double, then as the hours double, with the ratio.

    ``tonight`` on N and 2N sites (clouds.csv included), then ``week`` over 3 and 6 nights
    on the N sites: a ratio near 2 or below means memory grows no faster than the work.
    """
    n = 250 if quick else 2_500
    folders = {k: make_workspace(scratch / f"grow{k}", k, 6, JAN, 7, seed=k)
               for k in (n, 2 * n)}
    steps = (
        (f"tonight, {n:,} -> {2 * n:,} sites", [
            ["tonight", str(folders[k]), "--date", "2027-01-12"] for k in (n, 2 * n)]),
        (f"week, {n:,} sites, 3 -> 6 nights", [
            ["week", str(folders[n]), "--start", "2027-01-11", "--nights", str(k), "--json"]
            for k in (3, 6)]),
    )
    rows = []
    for name, (small, large) in steps:
        a = median_run(command + small, 1 if quick else 5)
        b = median_run(command + large, 1 if quick else 5)
        rows.append({"name": f"memory growth: {name}", "seconds": b["seconds"],
                     "min_s": b["min_s"], "max_s": b["max_s"], "target_seconds": None,
                     "ok": None, "peak_mb": b["peak_mb"], "memory_target_mb": None,
                     "baseline": "the half-size run", "baseline_seconds": a["seconds"],
                     "baseline_min_s": a["min_s"], "baseline_max_s": a["max_s"],
                     "ratio": None if not (a["seconds"] and b["seconds"])
                     else b["seconds"] / a["seconds"],
                     "memory_ratio": b["peak_mb"] / a["peak_mb"], "baseline_peak_mb": a["peak_mb"],
                     "repeats": b["runs"], "error": a["error"] or b["error"]})
    return rows


def _fmt(value, pattern="{:.2f}"):
    return "-" if value is None else pattern.format(value)


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    only = argv[argv.index("--only") + 1] if "--only" in argv else None
    rows = run(quick="--quick" in argv, only=only)
    print(f"{'command':<48} {'median s':>9} {'min-max s':>13} {'target':>7} {'met':>4} "
          f"{'peak MB':>8} {'floor s':>8} {'ratio':>6}")
    for r in rows:
        met = {True: "yes", False: "NO", None: "-"}[r["ok"]]
        spread = "-" if r["min_s"] is None else f"{r['min_s']:.2f}-{r['max_s']:.2f}"
        print(f"{r['name']:<48} {_fmt(r['seconds']):>9} {spread:>13} "
              f"{_fmt(r['target_seconds'], '{:.1f}'):>7} {met:>4} "
              f"{_fmt(r['peak_mb'], '{:.0f}'):>8} {_fmt(r['baseline_seconds']):>8} "
              f"{_fmt(r['ratio'], '{:.1f}'):>6}")
        if "memory_ratio" in r:
            print(f"    peak memory {r['baseline_peak_mb']:.0f} -> {r['peak_mb']:.0f} MB: "
                  f"ratio {r['memory_ratio']:.2f} (time ratio {_fmt(r['ratio'])})")
        if r["error"]:
            print(f"    failed: {r['error']}")
    return 0 if all(r["error"] is None for r in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
