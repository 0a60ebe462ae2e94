"""Keeping score: what recording the chances adds to `tonight`, and how often calibration's
95 % intervals hold the true settings.

1. `tonight` on the demo workspace (a copy) as a whole command, as the guide runs it: with
   the chances kept in the workspace database against `--no-record` (the baseline, run
   alternately in the same benchmark). Target: at most 10 % slower. (In one process the
   report alone takes about 0.16 s and keeping adds about 0.03 s, nearly all of it
   SQLite's durable commit and checkpoint.)
2. Parameter recovery: outcomes simulated from the chance model with chosen settings
   (invented factor parts, tests/test_calibrate.simulated_parts); the share of
   simulations whose bootstrap 95 % interval holds the true value, per setting.
   Target: at least 90 of 100.
"""

import datetime as dt
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from timing import alternately, repeats_for  # noqa: E402

TARGET_RATIO = 1.10
NIGHT = dt.date(2027, 1, 12)


def _tonight_overhead(quick: bool) -> dict:
    import subprocess

    from auroraplan import store

    folder = Path(tempfile.mkdtemp()) / "ws"
    shutil.copytree(ROOT / "demo_sites", folder, ignore=shutil.ignore_patterns("auroraplan.sqlite*"))
    store.open_store(store.database_path(folder)).close()
    command = [sys.executable, "-m", "auroraplan.cli", "tonight", str(folder), "--date",
               NIGHT.isoformat(), "--json"]

    def run_with(extra):
        return lambda: subprocess.run(command + extra, check=True, capture_output=True)

    run_with([])()  # warm the file cache
    without, with_keep = alternately(run_with(["--no-record"]), run_with([]),
                                     repeats_for(quick, 9))
    shutil.rmtree(folder.parent, ignore_errors=True)
    ratio = with_keep.median / without.median
    return {"name": "tonight demo_sites (whole command), chances kept", **with_keep.fields(),
            "baseline": "tonight --no-record", **without.fields("baseline_"),
            "ratio": ratio, "ok": ratio <= TARGET_RATIO}


def _recovery(quick: bool) -> dict:
    import numpy as np
    from test_calibrate import CURRENT, simulated_parts

    from auroraplan import calibrate

    truth = {"display_quiet": 0.2, "display_active": 0.55, "moon_beta": 0.9,
             "decorrelation_min": 120.0}
    sims = 10 if quick else 100
    inside = {name: 0 for name in calibrate.FITTED}
    start = time.perf_counter()
    for seed in range(sims):
        rng = np.random.default_rng(1000 + seed)
        factors, nights = simulated_parts(rng)
        p = calibrate.night_chances(calibrate.prepare(factors, 10.0), truth)
        y = (rng.random(p.size) < p).astype(float)
        result = calibrate.calibrate(y, nights, p, factors, 10.0, CURRENT,
                                     n_boot=50 if quick else 200, seed=seed)
        for row in result["settings"]:
            inside[row["name"]] += row["low"] <= truth[row["name"]] <= row["high"]
    seconds = time.perf_counter() - start
    share = {k: v / sims for k, v in inside.items()}
    return {"name": f"calibrate: truth inside 95 % interval, {sims} simulations "
                    + ", ".join(f"{k} {v:.0%}" for k, v in share.items()),
            "seconds": round(seconds / sims, 3), "baseline": "-", "baseline_seconds": None,
            "ok": min(share.values()) >= 0.9}


def run(quick=False) -> list[dict]:
    """Both figures (see the module's notes)."""
    return [_tonight_overhead(quick), _recovery(quick)]


if __name__ == "__main__":
    for row in run(quick="--quick" in sys.argv):
        print(row)
