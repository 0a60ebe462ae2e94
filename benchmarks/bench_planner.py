"""How long the fair excursion plan takes and how good it is, against greedy and the LP bound.

The week is generated (invented data, like ``make_workspace.py``): one chance
per night and site shared by every group (as the week report gives it), trips
with stays of 3-7 nights inside the week, some nights blocked, 5 % of sites
closed, groups of 2-16 guests, site capacities 8-60, drive times 10-150 min and
the fleet ``make_workspace.vehicles_for`` gives (one vehicle per group).

Baselines, measured in the same run on the same inputs:

- **greedy**: the best remaining outing while every limit allows
  (`auroraplan.planner.greedy_plan`): time and total, no fairness;
- **LP bound**: the planner's own bound (the LP relaxation, or the solver's
  bound when it branched): no plan can beat it, so ``(bound - ours) / bound``
  is the gap stated to the operator.

Every figure is the median of the runs (5, or 3 with ``--quick``) with min and max.

Run ``python benchmarks/bench_planner.py`` (``--quick`` for 40 trips and 3 runs).
"""

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from make_workspace import vehicles_for  # noqa: E402
from timing import repeats_for, timed  # noqa: E402

from auroraplan.planner import (  # noqa: E402
    FleetNights,
    PlannerSettings,
    greedy_plan,
    net_value,
    solve_plan,
)

TRIPS, NIGHTS, SITES = 100, 7, 100


def generated_week(seed=2024, trips=TRIPS, nights=NIGHTS, sites=SITES):
    """An invented operator week of the size the benchmark is about."""
    rng = np.random.default_rng(seed)
    chance = rng.random((nights, sites)) * 0.9
    arrive = rng.integers(0, nights - 2, trips)
    length = rng.integers(3, 8, trips)
    night = np.arange(nights)
    in_stay = (night[None, :] >= arrive[:, None]) & (night[None, :] < (arrive + length)[:, None])
    blocked = rng.random((trips, nights)) < 0.1
    site_open = rng.random(sites) > 0.05
    allowed = (in_stay & ~blocked)[:, :, None] & site_open[None, None, :]
    guests = rng.integers(2, 17, trips)
    capacity = rng.integers(8, 61, sites)
    allowed &= guests[:, None, None] <= capacity[None, None, :]
    return dict(
        value=np.broadcast_to(chance, (trips, nights, sites)),
        allowed=allowed,
        guests=guests,
        outings=np.minimum(rng.integers(2, 6, trips), in_stay.sum(axis=1)),
        vehicles=np.full(nights, vehicles_for(trips)),
        capacity=capacity,
        drive_min=rng.uniform(10.0, 150.0, sites),
    )


def run(quick=False):
    """Time the fair plan (default settings) and the greedy baseline on the generated week.

    Returns
    -------
    dict
        ``name``, ``size``, ``seconds`` / ``min_s`` / ``max_s`` (the
        plan), ``baseline``, ``baseline_seconds`` (greedy, median, with its min and max),
        ``objective`` (total chance minus drive cost), ``bound``, ``gap``
        (relative, against the bound), ``baseline_objective`` and
        ``baseline_gap`` (greedy against the same bound), ``time_limit_hit``,
        ``target_seconds`` and ``met`` (gap within the setting and no time
        limit reached).
    """
    import scipy.optimize  # noqa: F401  (imported before timing, as in a running command)

    trips = 40 if quick else TRIPS
    repeats = 3 if quick else repeats_for(False)
    week = generated_week(trips=trips)
    settings = PlannerSettings()
    fleet = FleetNights.one_group_each(week["vehicles"])

    def fair():
        return solve_plan(week["value"], week["allowed"], week["guests"], week["outings"],
                          fleet, week["capacity"], drive_min=week["drive_min"],
                          settings=settings)

    def greedy():
        return greedy_plan(**week)

    ours, result = timed(fair, repeats)
    base, plan = timed(greedy, repeats)
    net = net_value(week["value"], drive_min=week["drive_min"])
    baseline_objective = float(sum(net[p] for p in plan))
    if result.objective < baseline_objective - 1e-9 and result.served == len(
            {r for r, _, _ in plan}):
        raise AssertionError(f"plan {result.objective:.4f} below greedy {baseline_objective:.4f}")
    return {
        "name": "planner (fair, default settings)",
        "size": f"{trips} trips x {NIGHTS} nights x {SITES} sites, "
                f"{int(week['vehicles'][0])} vehicles",
        **ours.fields(),
        "baseline": "greedy plan",
        **base.fields("baseline_"),
        "ratio": ours.median / base.median,
        "objective": result.objective,
        "bound": result.bound,
        "gap": result.gap,
        "baseline_objective": baseline_objective,
        "baseline_gap": (result.bound - baseline_objective) / result.bound,
        "served": result.served,
        "greedy_served": len({r for r, _, _ in plan}),
        "time_limit_hit": result.time_limit_hit,
        "outings": len(result.outings),
        "target_seconds": settings.time_limit_s,
        "met": bool(result.gap <= settings.relative_gap and not result.time_limit_hit),
    }


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    r = run(quick="--quick" in argv)
    print(f"planner, {r['size']}, {r['outings']} outings")
    print(f"  fair plan  {r['seconds']:7.2f} s (min {r['min_s']:.2f}, max "
          f"{r['max_s']:.2f})  total {r['objective']:.3f}  gap {r['gap'] * 100:.2f} % "
          f"to the bound {r['bound']:.3f}; {r['served']} groups out")
    print(f"  greedy     {r['baseline_seconds']:7.2f} s  total {r['baseline_objective']:.3f}  "
          f"gap {r['baseline_gap'] * 100:.2f} %; {r['greedy_served']} groups out")
    print(f"  time limit reached: {r['time_limit_hit']}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
