"""Whole-command wall time and peak memory, each against a floor measured in the same run.

Every figure is a fresh process, as an operator would start it: the median wall
time of several runs and the largest peak resident memory (``ru_maxrss`` of that
one child, from ``os.wait4``). Two floors are measured alongside:

- interpreter start (``python -c pass``) for ``auroraplan --help``;
- the import floor (``python -c "import numpy, pandas, ..."`` with the libraries
  the command needs) for the working commands: the part of the time no code of
  ours can remove.

Large inputs come from ``make_workspace`` (invented data) in a temporary folder.
With ``quick`` the repeats drop to one and the largest inputs shrink; a shrunken
figure has no target, since the targets are stated for the full sizes.

Run ``python benchmarks/bench_commands.py`` (``--quick`` for the short version).
"""

from __future__ import annotations

import datetime as dt
import statistics
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from make_workspace import make_workspace  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_sites"
PY = sys.executable

FLOORS = {
    # name: the command run for it. The import lists are the third-party packages each
    # command was seen to load (sys.modules after a run), so the floor is what it must pay.
    "interpreter start": [PY, "-c", "pass"],
    "imports: tonight": [PY, "-c", "import numpy, pandas, skyfield.api, aacgmv2, rich.table"],
    "imports: week": [PY, "-c", "import numpy, pandas, scipy.optimize, scipy.sparse, "
                      "skyfield.api, aacgmv2"],
    "imports: season": [PY, "-c", "import numpy, pandas, skyfield.api, aacgmv2"],
    "imports: sites": [PY, "-c", "import numpy, pandas, aacgmv2"],
}


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
    repeats: int = 5


JAN = dt.date(2027, 1, 11)
SEP = dt.date(2026, 9, 1)
CASES = (
    Case("auroraplan --help", ("--help",), 0.5, "interpreter start", repeats=7),
    Case("tonight demo_sites", ("tonight", "{ws}", "--date", "2027-01-12"), 2.5,
         "imports: tonight"),
    Case("week demo_sites --json", ("week", "{ws}", "--start", "2027-01-11", "--json"), 3.0,
         "imports: week"),
    Case("week 50 sites x 7 nights x 6 trips", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 3.0, "imports: week", workspace=Generated(50, 6, JAN, 7)),
    Case("week 200 sites x 7 nights x 20 trips", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 10.0, "imports: week", workspace=Generated(200, 20, JAN, 7),
         quick_workspace=Generated(50, 20, JAN, 7), repeats=3),
    Case("week 100 sites x 7 nights x 100 trips", ("week", "{ws}", "--start", "2027-01-11",
         "--json"), 15.0, "imports: week", workspace=Generated(100, 100, JAN, 7),
         quick_workspace=Generated(50, 30, JAN, 7)),
    Case("season demo_sites 2026-09-01..2027-04-15", ("season", "{ws}", "--from", "2026-09-01",
         "--to", "2027-04-15", "--json"), 15.0, "imports: season", repeats=3),
    Case("season 100 sites x 225 nights", ("season", "{ws}", "--from", "2026-09-01", "--to",
         "2027-04-13", "--json"), 20.0, "imports: season",
         workspace=Generated(100, 6, SEP, 225, forecasts=False), memory_target_mb=1536.0,
         quick_workspace=Generated(20, 6, SEP, 225, forecasts=False), repeats=3),
    Case("sites, 10,000 sites", ("sites", "{ws}", "--date", "2027-01-12", "--json"), 15.0,
         "imports: sites", workspace=Generated(10_000, 6, JAN, 7, forecasts=False),
         quick_workspace=Generated(1_000, 6, JAN, 7, forecasts=False), repeats=3),
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
    """Median wall time and largest peak memory over repeats; stops at the first failure."""
    times, peaks = [], []
    for _ in range(repeats):
        seconds, peak, code, last = time_process(argv)
        if code != 0:
            return {"seconds": None, "peak_mb": peak, "error": f"exit {code}: {last}"}
        times.append(seconds)
        peaks.append(peak)
    return {"seconds": statistics.median(times), "peak_mb": max(peaks), "error": None}


def _workspace_for(case: Case, quick: bool, scratch: Path, made: dict) -> tuple[Path, bool]:
    """The folder the case runs on and whether it is the full-size input."""
    spec = case.quick_workspace if quick and case.quick_workspace else case.workspace
    if spec is None:
        return DEMO, True
    if spec not in made:
        folder = scratch / f"ws{len(made)}"
        make_workspace(folder, spec.sites, spec.trips, spec.first_night, spec.nights,
                       seed=len(made), forecasts=spec.forecasts)
        made[spec] = folder
    return made[spec], spec == case.workspace


def _row(case: Case, result: dict, floor: dict, full_size: bool, quick: bool, size: str) -> dict:
    seconds = result["seconds"]
    target = case.target_s if full_size else None
    met = None if target is None or seconds is None else seconds <= target
    if met is not None and case.memory_target_mb is not None:
        met = met and result["peak_mb"] < case.memory_target_mb
    name = case.name if full_size else f"{case.name} [quick: {size}]"
    return {
        "name": name,
        "seconds": seconds,
        "target_seconds": target,
        "ok": met,
        "peak_mb": result["peak_mb"],
        "memory_target_mb": case.memory_target_mb if full_size else None,
        "baseline": case.floor,
        "baseline_seconds": floor["seconds"],
        "ratio": None if seconds is None else seconds / floor["seconds"],
        "repeats": 1 if quick else case.repeats,
        "error": result["error"],
    }


def run(quick: bool = False, cases=CASES) -> list[dict]:
    """Time every case and its floor; one dict per case.

    Returns
    -------
    list of dict
        ``name``, ``seconds`` (median wall time, None when the command failed),
        ``target_seconds`` (None for a shrunken quick input), ``ok``, ``peak_mb``,
        ``memory_target_mb``, ``baseline`` (floor name), ``baseline_seconds``,
        ``ratio`` (seconds / floor), ``repeats`` and ``error`` (None or the last line
        the command wrote to stderr).
    """
    command = auroraplan_command()
    floors = {}
    for name in sorted({case.floor for case in cases}):
        floors[name] = median_run(FLOORS[name], 3 if quick else 7)
    rows = []
    with tempfile.TemporaryDirectory(prefix="auroraplan-bench-") as scratch:
        made = {}
        for case in cases:
            folder, full_size = _workspace_for(case, quick, Path(scratch), made)
            spec = case.quick_workspace if not full_size else case.workspace
            argv = command + [a.format(ws=folder) for a in case.args]
            result = median_run(argv, 1 if quick else case.repeats)
            rows.append(_row(case, result, floors[case.floor], full_size, quick,
                             spec.label() if spec else "demo"))
    return rows


def _fmt(value, pattern="{:.2f}"):
    return "-" if value is None else pattern.format(value)


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    rows = run(quick="--quick" in argv)
    print(f"{'command':<48} {'median s':>9} {'target':>7} {'met':>4} {'peak MB':>8} "
          f"{'floor s':>8} {'ratio':>6}")
    for r in rows:
        met = {True: "yes", False: "NO", None: "-"}[r["ok"]]
        print(f"{r['name']:<48} {_fmt(r['seconds']):>9} {_fmt(r['target_seconds'], '{:.1f}'):>7} "
              f"{met:>4} {_fmt(r['peak_mb'], '{:.0f}'):>8} {_fmt(r['baseline_seconds']):>8} "
              f"{_fmt(r['ratio'], '{:.1f}'):>6}")
        if r["error"]:
            print(f"    failed: {r['error']}")
    return 0 if all(r["error"] is None for r in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
