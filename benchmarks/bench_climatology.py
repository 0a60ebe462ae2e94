"""Time to read the bundled Kp history and build the climatology (target: 3 s or less).

Each run starts from empty caches. The baseline, run in the same process, is reading
the same file's bytes and splitting its lines: the least any reader must do.
"""

import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from auroraplan import climatology  # noqa: E402

TARGET_S = 3.0


def _baseline() -> float:
    start = time.perf_counter()
    climatology.bundled_history_path().read_bytes().split(b"\n")
    return time.perf_counter() - start


def _load_and_build() -> float:
    climatology._load_history_cached.cache_clear()
    climatology.bundled_climatology.cache_clear()
    start = time.perf_counter()
    climatology.bundled_climatology()
    return time.perf_counter() - start


def run(quick=False) -> dict:
    """Median of 3 runs (1 when quick) of loading the history and building the climatology.

    Returns
    -------
    dict
        ``name``, ``seconds`` (median), ``baseline_seconds`` (reading and splitting the
        file), ``ratio`` (seconds / baseline), ``target_seconds`` and ``ok``.
    """
    repeats = 1 if quick else 3
    seconds = statistics.median(_load_and_build() for _ in range(repeats))
    baseline = statistics.median(_baseline() for _ in range(repeats))
    return {
        "name": "climatology: load Kp history + build",
        "seconds": round(seconds, 4),
        "baseline_seconds": round(baseline, 4),
        "ratio": round(seconds / baseline, 1),
        "target_seconds": TARGET_S,
        "ok": seconds <= TARGET_S,
    }


if __name__ == "__main__":
    print(run(quick="--quick" in sys.argv))
