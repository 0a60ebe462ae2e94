"""Kp needed versus MLT for 10,000 sites (target: 10 s or less), against a per-site loop.

Sites are random points 55-75 N across northern Europe and North America, a third of
them with a horizon mask. The baseline, run in the same process, is the same code
called one site at a time on a sample of 50 sites, scaled to the full count: the cost
of a per-site Python loop.
"""

import datetime as dt
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from auroraplan import view  # noqa: E402

TARGET_S = 10.0
WHEN = dt.datetime(2027, 1, 12)


def random_sites(n: int, seed: int = 7):
    """Random sites 55-75 N; every third one has a ridge of random height across the north."""
    rng = np.random.default_rng(seed)
    lat = rng.uniform(55.0, 75.0, n)
    lon = np.concatenate([rng.uniform(-160.0, -60.0, n // 2), rng.uniform(-25.0, 40.0, n - n // 2)])
    masks = [None] * n
    for i in range(0, n, 3):
        ridge = rng.uniform(2.0, 20.0)
        masks[i] = np.array([[0.0, ridge], [50.0, ridge], [90.0, 1.0], [180.0, 0.0],
                             [270.0, 1.0], [310.0, ridge]])
    return lat, lon, rng.uniform(0.0, 600.0, n), masks


def run(quick=False) -> dict:
    """Time the vectorised table for all sites and a scaled per-site loop.

    Returns
    -------
    dict
        ``name``, ``sites``, ``seconds``, ``baseline_seconds`` (per-site loop on a sample,
        scaled), ``ratio`` (seconds / baseline), ``target_seconds`` (scaled to the site
        count when quick) and ``ok``.
    """
    n = 1000 if quick else 10_000
    sample = 20 if quick else 50
    lat, lon, height, masks = random_sites(n)
    view.kp_needed_table(lat[:10], lon[:10], height[:10], masks[:10], when=WHEN)  # warm up

    start = time.perf_counter()
    table = view.kp_needed_table(lat, lon, height, masks, when=WHEN)
    seconds = time.perf_counter() - start

    start = time.perf_counter()
    for i in range(sample):
        alone = view.kp_needed_table(lat[i:i + 1], lon[i:i + 1], height[i:i + 1],
                                     masks[i:i + 1], when=WHEN)
        if not np.array_equal(alone.kp_horizon[0], table.kp_horizon[i]):
            raise AssertionError(f"site {i}: per-site and vectorised tables differ")
    baseline = (time.perf_counter() - start) * n / sample

    target = TARGET_S * n / 10_000
    return {
        "name": "view: Kp needed vs MLT",
        "sites": n,
        "seconds": seconds,
        "baseline_seconds": baseline,
        "ratio": seconds / baseline,
        "target_seconds": target,
        "ok": seconds <= target,
    }


def main() -> int:
    result = run(quick="--quick" in sys.argv)
    print(f"{result['name']}: {result['sites']} sites in {result['seconds']:.2f} s "
          f"(target {result['target_seconds']:.1f} s); per-site loop, scaled: "
          f"{result['baseline_seconds']:.1f} s; ratio {result['ratio']:.3f}")
    return 0 if result["ok"] else 1


if __name__ == "__main__":
    sys.exit(main())
