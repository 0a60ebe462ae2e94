"""Time to read the bundled Kp history and build the climatology (target: 3 s or less).

Two figures: building it from the history file (the user cache emptied before each run)
and loading the copy kept in the user cache, as every command after the first does. The
baseline, run in the same process, is reading the same file's bytes and splitting its
lines: the least any reader must do.
"""

import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from timing import Runs, repeats_for  # noqa: E402

from auroraplan import climatology  # noqa: E402

TARGET_S = 3.0


def _baseline() -> float:
    start = time.perf_counter()
    climatology.bundled_history_path().read_bytes().split(b"\n")
    return time.perf_counter() - start


def _load_and_build(kept: bool) -> float:
    """Seconds to have the climatology: built from the history file (``kept`` False: the
    user cache emptied first) or loaded from the kept copy."""
    climatology._load_history_cached.cache_clear()
    climatology.bundled_climatology.cache_clear()
    if not kept:
        shutil.rmtree(Path(os.environ["AURORAPLAN_CACHE"]) / "climatology", ignore_errors=True)
    start = time.perf_counter()
    climatology.bundled_climatology()
    return time.perf_counter() - start


def run(quick=False) -> list:
    """Median of 5 runs (1 when quick) of building the climatology from the history file and
    of loading the copy kept in the user cache (a scratch cache folder), each run followed
    by the baseline.

    Returns
    -------
    list of dict
        Per figure: ``name``, ``seconds`` (median) with ``min_s``/``max_s``,
        ``baseline_seconds`` (reading and splitting the file) with its min and max,
        ``ratio`` (seconds / baseline), ``target_seconds`` and ``ok``.
    """
    rows = []
    with tempfile.TemporaryDirectory() as scratch:
        os.environ["AURORAPLAN_CACHE"] = scratch
        for kept, name in ((False, "climatology: load Kp history + build"),
                           (True, "climatology: load the copy kept in the user cache")):
            ours, base = [], []
            for _ in range(repeats_for(quick)):
                ours.append(_load_and_build(kept))
                base.append(_baseline())
            ours, base = Runs(tuple(ours)), Runs(tuple(base))
            rows.append({"name": name, **ours.fields(), **base.fields("baseline_"),
                         "ratio": ours.median / base.median, "target_seconds": TARGET_S,
                         "ok": ours.median <= TARGET_S})
    return rows


if __name__ == "__main__":
    for row in run(quick="--quick" in sys.argv):
        print(row)
