"""Kp needed versus MLT for 10,000 sites (target: 10 s or less), against a measured floor.

Sites are random points 55-75 N across northern Europe and North America, a third of
them with a horizon mask. The floor, run in the same process, is the part of the work no
method of this kind can leave out: the sites' AACGM-v2 coordinates and the geographic
points of the magnetic meridian through each site that the band can reach (one
``aacgmv2`` conversion per site and latitude of the grid). Median of five runs each, with
the fastest and slowest. A sample of sites is also computed one at a time and must give
the same table (the vectorised code is the per-site code).
"""

import datetime as dt
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from auroraplan import magnetic, view  # noqa: E402

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


def floor(lat, lon, table) -> None:
    """The magnetic coordinates the table cannot do without (see the module docstring)."""
    mlat, mlon = magnetic.geo_to_aacgm(lat, lon, 110.0, WHEN)
    grid = table.clearance.lat_grid_deg
    hemi = np.where(mlat < 0, -1.0, 1.0)
    magnetic.aacgm_to_geo(hemi[:, None] * grid[None, :], mlon[:, None] + 0 * grid[None, :],
                          110.0, WHEN)


def run(quick=False) -> dict:
    """Time the vectorised table for all sites against the measured floor.

    Returns
    -------
    dict
        ``name``, ``sites``, ``seconds`` (median), ``min_s``, ``max_s``,
        ``baseline_seconds`` (the floor's median, with its min and max), ``ratio``
        (seconds / floor), ``target_seconds`` (scaled to the site count when quick), ``ok``.
    """
    import statistics

    n = 1000 if quick else 10_000
    sample = 20 if quick else 50
    repeats = 1 if quick else 5
    lat, lon, height, masks = random_sites(n)
    view.kp_needed_table(lat[:10], lon[:10], height[:10], masks[:10], when=WHEN)  # warm up

    ours, floors = [], []
    for _ in range(repeats):
        start = time.perf_counter()
        table = view.kp_needed_table(lat, lon, height, masks, when=WHEN)
        ours.append(time.perf_counter() - start)
        start = time.perf_counter()
        floor(lat, lon, table)
        floors.append(time.perf_counter() - start)
    seconds, baseline = statistics.median(ours), statistics.median(floors)

    for i in range(sample):
        alone = view.kp_needed_table(lat[i:i + 1], lon[i:i + 1], height[i:i + 1],
                                     masks[i:i + 1], when=WHEN)
        if not np.array_equal(alone.kp_horizon[0], table.kp_horizon[i]):
            raise AssertionError(f"site {i}: per-site and vectorised tables differ")

    target = TARGET_S * n / 10_000
    return {
        "name": "view: Kp needed vs MLT",
        "sites": n,
        "seconds": seconds,
        "min_s": min(ours),
        "max_s": max(ours),
        "baseline": "floor: AACGM-v2 of sites and meridians",
        "baseline_seconds": baseline,
        "baseline_min_s": min(floors),
        "baseline_max_s": max(floors),
        "repeats": repeats,
        "ratio": seconds / baseline,
        "target_seconds": target,
        "ok": seconds <= target,
    }


def main() -> int:
    result = run(quick="--quick" in sys.argv)
    print(f"{result['name']}: {result['sites']} sites in {result['seconds']:.2f} s "
          f"(target {result['target_seconds']:.1f} s); floor: "
          f"{result['baseline_seconds']:.1f} s; ratio {result['ratio']:.3f}")
    return 0 if result["ok"] else 1


if __name__ == "__main__":
    sys.exit(main())
