"""How long the exact excursion plan takes, against a greedy plan built in the same run.

The instance is generated: 20 trips, 7 nights, 200 sites, random chances,
4 vehicles a night, site capacities 8-50 guests, groups of 2-16 guests and
drive times of 5-120 min. The greedy baseline takes the best remaining
(trip, night, site) by net value while every limit still allows it; the exact
plan's total must be at least the greedy one.

Run ``python benchmarks/bench_planner.py`` (``--quick`` for one repeat).
"""

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from auroraplan.planner import net_value, plan_excursions  # noqa: E402

TRIPS, NIGHTS, SITES = 20, 7, 200


def generated_week(seed=2024, trips=TRIPS, nights=NIGHTS, sites=SITES):
    """An invented operator week of the size the benchmark is about."""
    rng = np.random.default_rng(seed)
    shape = (trips, nights, sites)
    return dict(
        value=rng.random(shape),
        allowed=rng.random(shape) > 0.2,
        guests=rng.integers(2, 17, trips),
        outings=rng.integers(2, 5, trips),
        vehicles=np.full(nights, 4),
        capacity=rng.integers(8, 51, sites),
        drive_min=rng.uniform(5.0, 120.0, sites),
    )


def greedy_plan(value, allowed, guests, outings, vehicles, capacity, drive_min):
    """Take the best remaining outing while the limits allow it (the baseline)."""
    net = net_value(value, drive_min=drive_min)
    ok = allowed & (net > 0.0) & (guests[:, None, None] <= capacity[None, None, :])
    candidates = np.flatnonzero(ok)
    order = candidates[np.argsort(-net.ravel()[candidates], kind="stable")]
    left_outings = outings.astype(int).copy()
    left_vehicles = vehicles.astype(int).copy()
    room = np.repeat(capacity[None, :], value.shape[1], axis=0).astype(int)
    out_that_night = np.zeros(value.shape[:2], bool)
    plan = []
    for r, d, s in zip(*np.unravel_index(order, value.shape), strict=True):
        if left_outings[r] and left_vehicles[d] and not out_that_night[r, d]:
            if guests[r] <= room[d, s]:
                left_outings[r] -= 1
                left_vehicles[d] -= 1
                out_that_night[r, d] = True
                room[d, s] -= guests[r]
                plan.append((int(r), int(d), int(s)))
    return sorted(plan)


def _median_time(function, week, repeats):
    times, plan = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        plan = function(**week)
        times.append(time.perf_counter() - start)
    return float(np.median(times)), plan


def run(quick=False):
    """Time the exact plan and the greedy baseline on the generated week.

    Returns
    -------
    dict
        ``name``, ``size``, ``seconds`` (exact plan, median), ``baseline``,
        ``baseline_seconds`` (greedy, median), ``ratio`` (exact / greedy),
        ``objective``, ``baseline_objective`` and ``gap`` (exact − greedy,
        in chance units, never negative).
    """
    import scipy.optimize  # noqa: F401  (imported once before timing, as in a running command)

    week = generated_week()
    repeats = 1 if quick else 3
    seconds, plan = _median_time(plan_excursions, week, repeats)
    baseline_seconds, greedy = _median_time(greedy_plan, week, repeats)
    net = net_value(week["value"], drive_min=week["drive_min"])
    objective = float(sum(net[p] for p in plan))
    baseline_objective = float(sum(net[p] for p in greedy))
    if objective < baseline_objective - 1e-9:
        raise AssertionError(f"exact plan {objective:.6f} below greedy {baseline_objective:.6f}")
    return {
        "name": "planner",
        "size": f"{TRIPS} trips x {NIGHTS} nights x {SITES} sites",
        "seconds": seconds,
        "baseline": "greedy",
        "baseline_seconds": baseline_seconds,
        "ratio": seconds / baseline_seconds,
        "objective": objective,
        "baseline_objective": baseline_objective,
        "gap": objective - baseline_objective,
        "outings": len(plan),
    }


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    result = run(quick="--quick" in argv)
    print(f"planner, {result['size']}, {result['outings']} outings")
    print(f"  milp    {result['seconds']:8.3f} s   total chance {result['objective']:.4f}")
    print(
        f"  greedy  {result['baseline_seconds']:8.3f} s   "
        f"total chance {result['baseline_objective']:.4f}"
    )
    print(f"  ratio milp/greedy {result['ratio']:.1f}x, gap {result['gap']:+.4f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
