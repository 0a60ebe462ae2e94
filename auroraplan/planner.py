"""Choosing which group goes to which viewing site on which night, fairly, within the fleet.

The plan is an integer program over (trip, night, site) triples, solved with
HiGHS through ``scipy.optimize.milp``. Each chosen triple is one excursion: a
group taken to one site for one night. The limits are those of the operator's
week: outings booked per trip, one outing per trip per night, the guests a
site holds per night (shared by every group sent there), and the fleet:
vehicles (with or without a known number of seats), guides, and the dates on
which either is unavailable.

Fairness comes first, then chance. The objective is lexicographic
(Ehrgott 2005, ch. 5), solved as three programs in turn, each keeping the
level reached by the one before:

1. **served**: the number of groups that get at least one outing, maximised;
2. **share**: the smallest share ``planned / wanted`` over the groups served,
   maximised (a max-min objective, Luss 1999), where ``wanted`` is the
   outings a group asked for, capped by the nights on which it has any site
   worth the drive;
3. **chance**: the total chance of the chosen outings minus their drive-time
   cost (chance units, 0..1 per outing), maximised.

So no group is left without an outing when any feasible plan gives it one
together with as many others, and no group is held far below the others'
share to raise the total. The third program stops at the relative gap of
`PlannerSettings` and the whole search at its time limit; the best plan found
so far is then used, and `PlanResult` says so and carries the objective, the
solver's bound and the gap.

Structurally this is a generalised assignment problem with side constraints
(Martello & Toth 1990, ch. 7).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import math
import os
import time
from dataclasses import dataclass

import numpy as np

from auroraplan import checks
from auroraplan.checks import setting

DRIVE_WEIGHT_PER_MIN = 0.001
"""Drive-time cost per minute of one-way drive, in chance units.

An outing 60 min from base must offer 0.06 more chance than one at the door
to be preferred. Common practice, no source: a weight an operator tunes.
"""


OBJECTIVE_SCALE = 1.0e6
"""The solver works in micro-chance units.

HiGHS stops when the absolute gap is below 1e-6 and treats reduced costs below
1e-7 as zero (HiGHS option defaults). Scaling the chance objective by 1e6
makes those tolerances 1e-12 and 1e-13 in chance, far below any difference a
forecast can resolve, so with a zero relative gap the plan found is the
optimum of the unscaled problem to better than 1e-9.
"""

TIE_BUDGET = 1.0e-10
"""Largest total chance by which tie-breaking may move a plan off the optimum.

Each variable gets a bonus that falls with its (trip, night, site) order, so
that among plans of equal chance the one using earlier trips, earlier nights
and lower site indices wins. The bonuses of any feasible plan add up to less
than this, so they only decide between plans whose chance differs by less.
"""

FAIRNESS = {
    "groups-first": "served groups, then the smallest share of wanted outings, then chance",
    "chance-only": "total chance minus drive cost only; a group may be left out",
}
"""The plan's objective, by name (see the module docstring)."""

@dataclass(frozen=True)
class PlannerSettings:
    """How the excursion plan is searched for (operator.toml ``[planner]``).

    The outing hours written in [planner] fill ``auroraplan.nights.OutingHours``.

    Attributes
    ----------
    drive_cost_per_min : float
        Chance units per minute of one-way drive (``DRIVE_WEIGHT_PER_MIN``).
    time_limit_s : float
        Wall-clock seconds for the whole search; the best plan found by then
        is used. Default 10 s: a week of 100 trips, 100 sites and the fleet
        they need reaches a 1 % gap within it on a 2-core machine
        (``benchmarks/bench_planner.py``).
    relative_gap : float
        The search for chance stops once ``(bound - objective) / bound`` is at
        most this; 0 asks for a proven optimum. Default 0.01 (1 %).
    fairness : str
        A key of `FAIRNESS`.
    """

    drive_cost_per_min: float = setting(
        DRIVE_WEIGHT_PER_MIN, checks.number(0, 0.1, "chance per minute"), "chance per minute",
        "cost of one minute of one-way drive; 0.1 would make a one-hour drive cost more "
        "than any chance (common practice, no source)")
    time_limit_s: float = setting(10.0, checks.positive(3600, "seconds"), "seconds",
                                  "wall-clock time for the whole search")
    relative_gap: float = setting(0.01, checks.number(0, 0.5, "(a fraction; 0.01 is 1 %)"),
                                  "fraction", "the search for chance stops within this gap")
    fairness: str = setting("groups-first", checks.choice(FAIRNESS), "name",
                            "the plan's objective (FAIRNESS)")


EXACT = PlannerSettings(time_limit_s=math.inf, relative_gap=0.0)
"""Settings that prove the optimum: no time limit, zero gap (tests, small weeks)."""


@dataclass(frozen=True)
class Vehicle:
    """One vehicle of the fleet.

    ``seats`` None means the vehicle takes exactly one group whatever its size
    (the plain ``vehicles = N`` of operator.toml); with seats, groups going to
    the same site may share it while their guests fit.
    """

    name: str
    seats: int | None = None
    unavailable: tuple[dt.date, ...] = ()


@dataclass(frozen=True)
class Guide:
    """One guide; every vehicle that goes out needs one (common practice, no source)."""

    name: str
    unavailable: tuple[dt.date, ...] = ()


@dataclass(frozen=True)
class Fleet:
    """The vehicles and guides of operator.toml ``[fleet]``.

    ``guides`` None means there is a guide for every vehicle.
    """

    vehicles: tuple[Vehicle, ...]
    guides: tuple[Guide, ...] | None = None

    @classmethod
    def of_count(cls, count: int, seats: int | None = None) -> Fleet:
        """``count`` interchangeable vehicles, named "vehicle 1", "vehicle 2", …"""
        return cls(tuple(Vehicle(f"vehicle {i + 1}", seats) for i in range(int(count))))

    def with_count(self, count: int) -> Fleet:
        """The first ``count`` vehicles, or more like the last one ("extra vehicle 1", …)."""
        vehicles = self.vehicles[:count]
        if count > len(vehicles):
            model = self.vehicles[-1] if self.vehicles else Vehicle("vehicle")
            vehicles += tuple(Vehicle(f"extra vehicle {i + 1}", model.seats)
                              for i in range(count - len(vehicles)))
        return Fleet(vehicles, self.guides)

    @property
    def seated(self) -> bool:
        """True when every vehicle's seats are known (groups may share)."""
        return bool(self.vehicles) and all(v.seats is not None for v in self.vehicles)

    def by_night(self, dates) -> FleetNights:
        """Vehicles per seat class and guides available on each night in ``dates``."""
        dates = list(dates)
        seats = sorted({v.seats for v in self.vehicles}) if self.seated else [None]
        counts = np.zeros((len(dates), len(seats)), int)
        for vehicle in self.vehicles:
            k = seats.index(vehicle.seats) if self.seated else 0
            for d, date in enumerate(dates):
                counts[d, k] += date not in vehicle.unavailable
        if self.guides is None:
            guides = np.full(len(dates), np.inf)
        else:
            guides = np.array([sum(date not in g.unavailable for g in self.guides)
                               for date in dates], float)
        return FleetNights(counts, np.array(seats, float) if self.seated else None, guides)


@dataclass(frozen=True)
class FleetNights:
    """The fleet as the solver sees it.

    Attributes
    ----------
    vehicles : numpy.ndarray of int, shape (D, K)
        Vehicles of each seat class available each night.
    seats : numpy.ndarray, shape (K,), or None
        Seats of each class; None when a vehicle takes one group (K = 1).
    guides : numpy.ndarray, shape (D,)
        Guides available each night; ``inf`` when not limited.
    """

    vehicles: np.ndarray
    seats: np.ndarray | None
    guides: np.ndarray

    @classmethod
    def one_group_each(cls, vehicles, guides=None) -> FleetNights:
        """``vehicles[d]`` vehicles on night d, each taking one group."""
        vehicles = np.asarray(vehicles, int).reshape(-1, 1)
        guides = np.full(len(vehicles), np.inf) if guides is None else np.asarray(guides, float)
        return cls(vehicles, None, guides)

    def out_limit(self) -> np.ndarray:
        """Most vehicles that can go out each night (vehicles and guides), shape (D,)."""
        return np.minimum(self.vehicles.sum(axis=1), self.guides)


class FixedOutingsDoNotFit(ValueError):
    """The outings the plan must keep cannot all go out with the fleet and sites given."""


@dataclass(frozen=True)
class PlanResult:
    """The plan and how good it is.

    Attributes
    ----------
    outings : list of (int, int, int)
        The chosen ``(trip, night, site)`` triples, sorted.
    objective : float
        Total chance minus drive cost of the plan, chance units.
    expected_sightings : float
        Total chance of the plan: the expected number of outings with a display seen.
    bound : float
        The solver's upper bound on ``objective`` under the fairness levels
        reached (`_Model.loose_bound` when the time limit came first).
    gap : float
        ``(bound - objective) / bound``; 0 for a proven optimum.
    time_limit_hit : bool
        True when the time limit stopped the search and the best plan so far is used.
    served, min_share : int, float
        The fairness levels reached: groups with an outing, smallest share of
        wanted outings among them.
    vehicles_out : numpy.ndarray of int, shape (D,)
        Vehicles used each night.
    seconds : float
        Wall-clock time of the search.
    """

    outings: list
    objective: float = 0.0
    expected_sightings: float = 0.0
    bound: float = 0.0
    gap: float = 0.0
    time_limit_hit: bool = False
    served: int = 0
    min_share: float = 1.0
    vehicles_out: np.ndarray | None = None
    seconds: float = 0.0


# ---------------------------------------------------------------------------------------
# the plan
# ---------------------------------------------------------------------------------------


def solve_plan(value, allowed, guests, outings, fleet, capacity, drive_cost=None,
               drive_min=None, fixed=(), settings=None) -> PlanResult:
    """Choose the excursions: groups served, then the least share, then chance.

    Parameters
    ----------
    value : array_like, shape (R, D, S)
        Chance of a display seen for trip ``r`` on night ``d`` at site ``s``,
        0..1. NaN is treated as "cannot be planned".
    allowed : array_like of bool, shape (R, D, S)
        False where the night is outside the stay, blocked for the trip, the
        site is closed or too small, or there is no darkness.
    guests : array_like of int, shape (R,)
        Guests in each trip's group.
    outings : array_like of int, shape (R,)
        Most outings booked for each trip over the planning window.
    fleet : FleetNights
        Vehicles per seat class, seats and guides per night.
    capacity : array_like of int, shape (S,)
        Guests a site holds per night, shared by all groups sent there.
    drive_cost : array_like, shape (S,) or (R, D, S), optional
        Drive-time cost already in chance units, subtracted from ``value``.
    drive_min : array_like, shape (S,) or (R, D, S), optional
        One-way drive in minutes; costs ``settings.drive_cost_per_min`` each.
    fixed : sequence of (int, int, int)
        Outings that must be in the plan whatever their value.
    settings : PlannerSettings, optional
        Time limit, relative gap and fairness rule.

    Returns
    -------
    PlanResult

    Notes
    -----
    Only outings with a positive net value (chance minus drive cost) are
    candidates: a night drive to a site with no chance costs guests their
    sleep and the crew their hours for nothing. A group's wanted outings are
    ``min(asked, nights with a candidate)``.

    Sites that can never improve a plan get no variable (`_within_reach`),
    which keeps 200 sites nearly as fast as ten.

    With a zero gap, exact ties are broken towards earlier trips, earlier
    nights and lower site indices by bonuses whose total stays below
    ``TIE_BUDGET``; with the model built in a fixed order and HiGHS run
    deterministically, the same input always gives the same plan.

    The solver never writes to stdout or stderr: file descriptors 1 and 2
    point at the null device while it runs.

    Raises
    ------
    ValueError
        When array shapes disagree or counts are negative.
    FixedOutingsDoNotFit
        When the fixed outings alone break a limit.
    RuntimeError
        When the solver stops without any plan (its message is included).

    References
    ----------
    Ehrgott, M. (2005). Multicriteria Optimization, 2nd ed. Springer, ch. 5
    (lexicographic optimality).
    Luss, H. (1999). On equitable resource allocation problems: a
    lexicographic minimax approach. Operations Research 47(3), 361-378.
    Huangfu, Q. & Hall, J. A. J. (2018). Parallelizing the dual revised
    simplex method. Mathematical Programming Computation 10, 119-142 (HiGHS).
    Martello, S. & Toth, P. (1990). Knapsack Problems: Algorithms and
    Computer Implementations. Wiley, ch. 7 (generalised assignment).
    """
    started = time.perf_counter()
    settings = settings or PlannerSettings()
    if settings.fairness not in FAIRNESS:
        raise ValueError(f"fairness {settings.fairness!r}; allowed: {', '.join(FAIRNESS)}")
    value = np.asarray(value, float)
    weight = settings.drive_cost_per_min
    net, ok, guests, outings, _, capacity = _prepare(
        value, allowed, guests, outings, None, capacity, drive_cost, drive_min, weight)
    _check_fleet(fleet, net.shape[1])
    candidate = ok & (net > 0.0)
    forced = np.zeros(net.shape, bool)
    for r, d, s in fixed:
        forced[r, d, s] = True
    wanted = np.minimum(outings, (candidate | forced).any(axis=2).sum(axis=1))
    keep = (candidate & _within_reach(net, candidate, ok, guests, capacity, fleet, forced)) | forced
    rr, dd, ss = np.nonzero(keep)
    if rr.size == 0:
        return PlanResult([], vehicles_out=np.zeros(net.shape[1], int),
                          seconds=time.perf_counter() - started)
    model = _Model(net[rr, dd, ss], rr, dd, ss, guests, outings, fleet, capacity,
                   forced[rr, dd, ss], wanted)
    result = model.solve(settings, started)
    chosen = result.pop("chosen")
    plan = sorted(zip(rr[chosen].tolist(), dd[chosen].tolist(), ss[chosen].tolist(),
                      strict=True))
    objective = float(net[rr, dd, ss][chosen].sum())
    bound = max(result.pop("bound"), objective)
    return PlanResult(
        outings=plan,
        objective=objective,
        expected_sightings=float(np.nan_to_num(value[rr, dd, ss][chosen]).sum()),
        bound=bound,
        gap=(bound - objective) / bound if bound > 0 else 0.0,
        vehicles_out=model.vehicles_out(chosen),
        seconds=time.perf_counter() - started,
        **result,
    )


def choose_backups(
    value,
    allowed,
    plan,
    guests,
    capacity,
    drive_cost=None,
    drive_min=None,
    drive_weight=DRIVE_WEIGHT_PER_MIN,
):
    """Pick a second site for each planned outing, in case the first is clouded in.

    Parameters
    ----------
    value, allowed : array_like, shape (R, D, S)
        As for `solve_plan`.
    plan : list of (int, int, int)
        The chosen ``(trip, night, site)`` triples.
    guests : array_like of int, shape (R,)
        Guests in each trip's group.
    capacity : array_like of int, shape (S,)
        Guests a site holds per night.
    drive_cost, drive_min, drive_weight
        As for `net_value`.

    Returns
    -------
    list of int or None
        For each entry of ``plan`` in its order, the allowed site other than
        the chosen one with the highest net value (ties to the lower index)
        that still holds the group beside the groups planned there that
        night; None when no such site has a positive net value.
    """
    net, ok, guests, _, _, capacity = _prepare(
        value, allowed, guests, None, None, capacity, drive_cost, drive_min, drive_weight
    )
    if len(plan) == 0:
        return []
    rr, dd, ss = (np.asarray(column, dtype=int) for column in zip(*plan, strict=True))
    n_sites = net.shape[2]
    load = np.zeros((net.shape[1], n_sites))
    np.add.at(load, (dd, ss), guests[rr])
    fits = guests[rr, None] + load[dd, :] <= capacity[None, :]
    other = np.arange(n_sites)[None, :] != ss[:, None]
    candidate = ok[rr, dd, :] & fits & other & (net[rr, dd, :] > 0.0)
    score = np.where(candidate, net[rr, dd, :], -np.inf)
    best = np.argmax(score, axis=1)
    found = candidate[np.arange(rr.size), best]
    return [int(s) if f else None for s, f in zip(best, found, strict=True)]


def net_value(value, drive_cost=None, drive_min=None, drive_weight=DRIVE_WEIGHT_PER_MIN):
    """Chance of an outing minus its drive-time cost, in chance units.

    Parameters
    ----------
    value : array_like, shape (R, D, S)
        Chance per (trip, night, site).
    drive_cost : array_like, shape (S,) or (R, D, S), optional
        Cost in chance units.
    drive_min : array_like, shape (S,) or (R, D, S), optional
        One-way drive in minutes, weighted by ``drive_weight``.
    drive_weight : float, optional
        Chance units per minute (``DRIVE_WEIGHT_PER_MIN``; common practice,
        no source).

    Returns
    -------
    numpy.ndarray, shape (R, D, S)
    """
    value = np.asarray(value, dtype=float)
    if drive_cost is not None and drive_min is not None:
        raise ValueError("give drive_cost or drive_min, not both")
    cost = 0.0
    if drive_cost is not None:
        cost = np.asarray(drive_cost, dtype=float)
    elif drive_min is not None:
        cost = float(drive_weight) * np.asarray(drive_min, dtype=float)
    return value - np.broadcast_to(cost, value.shape)


def greedy_plan(value, allowed, guests, outings, vehicles, capacity, drive_min=None,
                drive_weight=DRIVE_WEIGHT_PER_MIN):
    """Take the best remaining outing while the limits allow it (one vehicle per group).

    The baseline the exact plan is measured against in ``benchmarks/``: no
    fairness, no look-ahead.
    """
    net = net_value(value, drive_min=drive_min, drive_weight=drive_weight)
    guests, capacity = np.asarray(guests, int), np.asarray(capacity, int)
    ok = np.asarray(allowed, bool) & (net > 0.0) & (guests[:, None, None] <= capacity)
    candidates = np.flatnonzero(ok)
    order = candidates[np.argsort(-net.ravel()[candidates], kind="stable")]
    left_outings = np.asarray(outings, int).copy()
    left_vehicles = np.asarray(vehicles, int).copy()
    room = np.repeat(capacity[None, :], net.shape[1], axis=0)
    out_that_night = np.zeros(net.shape[:2], bool)
    plan = []
    for r, d, s in zip(*np.unravel_index(order, net.shape), strict=True):
        if left_outings[r] and left_vehicles[d] and not out_that_night[r, d]:
            if guests[r] <= room[d, s]:
                left_outings[r] -= 1
                left_vehicles[d] -= 1
                out_that_night[r, d] = True
                room[d, s] -= guests[r]
                plan.append((int(r), int(d), int(s)))
    return sorted(plan)


# ---------------------------------------------------------------------------------------
# the model
# ---------------------------------------------------------------------------------------


class _Model:
    """The sparse constraint rows over the kept triples, and the three programs in turn."""

    def __init__(self, net, rr, dd, ss, guests, outings, fleet, capacity, forced, wanted):
        from scipy.sparse import coo_array

        self.net, self.rr, self.dd, self.ss = net, rr, dd, ss
        self.guests_x = guests[rr]
        self.outings_left, self.capacity = outings.copy(), capacity
        self.fleet, self.forced, self.wanted = fleet, forced, wanted
        n_x = net.size
        n_trips, n_nights, n_sites = outings.size, fleet.vehicles.shape[0], capacity.size
        self.n_trips = n_trips
        # Vehicle variables (seated fleets): one integer per (night, site used, seat class).
        if fleet.seats is not None:
            pair = np.unique(dd * n_sites + ss)
            k_count = fleet.seats.size
            self.v_night = np.repeat(pair // n_sites, k_count)
            v_site_pair = np.repeat(np.arange(pair.size), k_count)
            self.v_site = np.repeat(pair % n_sites, k_count)
            self.v_class = np.tile(np.arange(k_count), pair.size)
            self.v_upper = fleet.vehicles[self.v_night, self.v_class].astype(float)
            x_pair = np.searchsorted(pair, dd * n_sites + ss)
        else:
            self.v_night = self.v_class = self.v_site = np.zeros(0, int)
            self.v_upper = np.zeros(0)
        n_v = self.v_night.size
        self.n_x, self.n_v = n_x, n_v
        self.n_vars = n_x + n_v
        x_cols = np.arange(n_x)
        v_cols = n_x + np.arange(n_v)

        blocks = []  # (rows over x and v, upper bound)

        def rows(index, n_rows, weights, cols):
            return coo_array((weights, (index, cols)), shape=(n_rows, self.n_vars))

        ones = np.ones(n_x)
        blocks.append((rows(rr, n_trips, ones, x_cols), outings))
        trip_night = rr * n_nights + dd
        blocks.append((rows(trip_night, n_trips * n_nights, ones, x_cols),
                       np.ones(n_trips * n_nights)))
        blocks.append((rows(dd * n_sites + ss, n_nights * n_sites, guests[rr].astype(float),
                            x_cols), np.repeat(capacity[None, :], n_nights, axis=0).ravel()))
        if fleet.seats is None:
            blocks.append((rows(dd, n_nights, ones, x_cols), fleet.out_limit()))
        else:
            seats = fleet.seats[self.v_class]
            load = coo_array(
                (np.concatenate([guests[rr].astype(float), -seats]),
                 (np.concatenate([x_pair, v_site_pair]), np.concatenate([x_cols, v_cols]))),
                shape=(pair.size, self.n_vars))
            blocks.append((load, np.zeros(pair.size)))
            blocks.append((rows(self.v_night * k_count + self.v_class, n_nights * k_count,
                                np.ones(n_v), v_cols), fleet.vehicles.ravel().astype(float)))
            guides = np.where(np.isfinite(fleet.guides), fleet.guides, 1e9)
            blocks.append((rows(self.v_night, n_nights, np.ones(n_v), v_cols), guides))
        self.blocks = blocks
        self.planned_rows = rows(rr, n_trips, ones, x_cols).tocsr()
        self.tie = _tie_bonus(n_x, np.unique(trip_night).size)

    def vehicles_out(self, chosen) -> np.ndarray:
        """Vehicles needed each night by the chosen outings (seated: least by seats)."""
        n_nights = self.fleet.vehicles.shape[0]
        if self.fleet.seats is None:
            return np.bincount(self.dd[chosen], minlength=n_nights)
        out = np.zeros(n_nights, int)
        loads = {}
        for d, s, g in zip(self.dd[chosen], self.ss[chosen], self.guests_x[chosen],
                           strict=True):
            loads[(d, s)] = loads.get((d, s), 0) + g
        left = self.fleet.vehicles.copy()
        for (d, _), load in sorted(loads.items()):
            out[d] += _fewest_vehicles(load, self.fleet.seats, left[d])
        return out

    def solve(self, settings, started):
        """Run the programs the fairness rule asks for; return the chosen mask and quality.

        When every group that can go out can be served together (the usual
        week), the least share is found by bisection over the shares the
        groups can have (``k / wanted``), each a feasibility question with
        per-group floors; otherwise by the max-min program with a served flag
        per group. The chance program first tries the LP relaxation, rounded
        in order of the relaxed values: when that plan is within the relative
        gap of the relaxation's bound, no branching is needed.
        """
        deadline = started + settings.time_limit_s
        hit = False
        served, share = 0, 1.0
        levels = None
        floors = None
        eligible = np.flatnonzero(self.wanted > 0)
        x = self.greedy()  # a feasible plan to fall back on if time runs out at once
        if settings.fairness == "groups-first" and eligible.size:
            ones = np.zeros(self.n_trips, int)
            ones[eligible] = 1
            found, hit = self._with_floors(ones, deadline)
            if found is not None:
                x, served = found, eligible.size
                x, floors, hit_b = self._highest_floors(x, eligible, deadline)
                hit = hit or hit_b
            else:
                x, hit_a, _ = self._run("served", eligible, None, settings, deadline, 0.25, x)
                planned = self._planned(x)
                served = int(np.count_nonzero(planned[eligible] >= 1))
                x, hit_b, _ = self._run("share", eligible, (served, None), settings, deadline,
                                        0.34, x)
                planned = self._planned(x)
                share = _least_share(planned[eligible], self.wanted[eligible])
                levels = (served, np.ceil(share * self.wanted[eligible] - 1e-9).astype(int))
                hit = hit or hit_a or hit_b
        bound, rounded, hit_c = None, None, False
        if levels is None:
            rounded, bound = self._rounded(floors, deadline)
            if floors is not None:
                levels = (served, floors[eligible])
        if self.fleet.seats is None:
            # The plan that met the fairness levels, improved where the levels allow: no
            # group served loses its outing or drops below its floor.
            keep = None
            if settings.fairness == "groups-first" and isinstance(levels, tuple):
                keep = np.zeros(self.n_trips, int)
                keep[eligible] = np.where(self._planned(x)[eligible] >= 1,
                                          np.maximum(levels[1], 1), 0)
            polished = self.polish(x, keep)
            if polished is not None and (rounded is None
                                         or self.value_of(polished) > self.value_of(rounded)):
                rounded = polished
        if rounded is not None and bound is not None and (
                bound - self.value_of(rounded) <= settings.relative_gap * bound
                or bound - self.value_of(rounded) <= 1e-12):
            x = rounded
        else:
            start = x if rounded is None else rounded
            x, hit_c, bound_milp = self._run("chance", eligible, levels, settings, deadline,
                                             1.0, start)
            if rounded is not None and self.value_of(rounded) > self.value_of(x):
                x = rounded
            if bound_milp is not None:
                bound = bound_milp if bound is None else min(bound, bound_milp)
        chosen = x[: self.n_x] > 0.5
        planned = self._planned(x)
        if eligible.size:
            served = int(np.count_nonzero(planned[eligible] >= 1))
            share = _least_share(planned[eligible], self.wanted[eligible])
        if bound is None:
            bound = self.loose_bound()
        return {"chosen": chosen, "bound": bound, "time_limit_hit": hit or hit_c,
                "served": served, "min_share": share}

    def _highest_floors(self, x, eligible, deadline):
        """Raise the least share by bisection over the shares the groups can reach.

        Returns the plan, the floors (planned outings each group must keep)
        and whether the time limit cut a feasibility check short (a check cut
        short counts as "no", so the share found is still reached).
        """
        wanted = self.wanted[eligible]
        shares = np.unique(np.concatenate([np.arange(1, w + 1) / w for w in wanted]))
        current = _least_share(self._planned(x)[eligible], wanted)
        shares = shares[shares > current + 1e-12]
        best = np.zeros(self.n_trips, int)
        best[eligible] = np.ceil(current * wanted - 1e-9)
        hit = False
        low, high = 0, shares.size - 1
        while low <= high:
            middle = (low + high) // 2
            floors = np.zeros(self.n_trips, int)
            floors[eligible] = np.ceil(shares[middle] * wanted - 1e-9)
            found, cut = self._with_floors(floors, deadline)
            hit = hit or cut
            if found is None:
                high = middle - 1
            else:
                x, best, low = found, floors, middle + 1
        return x, best, hit

    def _with_floors(self, floors, deadline):
        """A plan giving every group at least ``floors`` outings, or None; and limit hit.

        The relaxation answers "no" when it is infeasible; its rounding often
        answers "yes"; otherwise the integer program decides.
        """
        if self.fleet.seats is None:
            quick = self.polish(self.greedy(), floors)
            if quick is not None:
                return quick, False
        rounded, bound = self._rounded(floors, deadline)
        if rounded is not None:
            return rounded, False
        if bound is None and self._relaxation_infeasible:
            return None, False
        eligible = np.flatnonzero(floors > 0)
        feasibility = PlannerSettings(time_limit_s=math.inf, relative_gap=1.0)
        x, hit, _ = self._run("floors", eligible, (eligible.size, floors[eligible]),
                              feasibility, deadline, 0.5, None)
        return x, hit

    def _rounded(self, floors, deadline):
        """The LP relaxation's bound and its rounding (None when it misses the floors).

        Variables are taken in order of their relaxed value, then of chance,
        first for the groups below their floor, then for the rest, while every
        limit allows (`greedy`).
        """
        from scipy.optimize import linprog
        from scipy.sparse import vstack

        self._relaxation_infeasible = False
        matrix = vstack([b[0] for b in self.blocks]).tocsr()
        upper = np.concatenate([b[1] for b in self.blocks])
        if floors is not None and np.any(floors > 0):
            rows = np.flatnonzero(floors > 0)
            matrix = vstack([matrix, -self.planned_rows[rows]]).tocsr()
            upper = np.concatenate([upper, -floors[rows].astype(float)])
        cost = np.zeros(self.n_vars)
        cost[: self.n_x] = -(self.net + self.tie) * OBJECTIVE_SCALE
        lower = np.zeros(self.n_vars)
        lower[: self.n_x] = self.forced
        bounds = np.column_stack([lower, np.concatenate([np.ones(self.n_x), self.v_upper])])
        options = {"presolve": True, "disp": False}
        left = deadline - time.perf_counter()
        if math.isfinite(left):
            options["time_limit"] = max(0.05, left / 2)
        with _quiet_output():
            result = linprog(cost, A_ub=matrix, b_ub=upper, bounds=bounds, method="highs",
                             options=options)
        if result.status == 2:
            self._relaxation_infeasible = True
            return None, None
        if result.x is None or result.status != 0:
            return None, None
        order = np.lexsort((np.arange(self.n_x), -self.net, -np.round(result.x[: self.n_x], 6)))
        bound = -float(result.fun) / OBJECTIVE_SCALE
        relaxed = result.x[: self.n_x]
        x = self._settle(relaxed, floors, deadline)
        if x is not None:
            return (self.polish(x, floors) if self.fleet.seats is None else x), bound
        order = np.lexsort((np.arange(self.n_x), -self.net, -np.round(relaxed, 6)))
        if self.fleet.seats is None:
            return self.polish(self.greedy(order), floors), bound
        x, met = self.greedy(order), True
        if floors is not None:
            met = bool(np.all(self._planned(x) >= floors))
            if not met:
                x, met = self.greedy(order, floors)
        return (x if met else None), bound

    SETTLE_MAX_FREE = 3000
    """Most undecided outings for which `_settle` solves the rest exactly."""

    def _settle(self, relaxed, floors, deadline):
        """Keep the outings the relaxation decided (0 or 1) and solve for the rest.

        Relaxation-induced neighbourhood search (Danna, Rothberg & Le Pape 2005,
        Math. Program. 102, 71-90) with the LP solution alone: the integer
        program over the few fractional outings is small. None when too many
        are fractional or the rest has no plan.
        """
        decided = (relaxed < 1e-6) | (relaxed > 1 - 1e-6)
        free = np.count_nonzero(~decided)
        if free > self.SETTLE_MAX_FREE:
            return None
        eligible = np.flatnonzero(floors > 0) if floors is not None else np.zeros(0, int)
        levels = (eligible.size, floors[eligible]) if eligible.size else None
        quick = PlannerSettings(time_limit_s=math.inf, relative_gap=1e-4)
        # The relaxation's 0s and 1s kept; if that leaves no plan, only its 1s.
        for settled in (np.where(decided, np.round(relaxed), np.nan),
                        np.where(relaxed > 1 - 1e-6, 1.0, np.nan)):
            try:
                x, _, _ = self._run("chance", eligible, levels, quick, deadline, 0.25, None,
                                    settled=settled)
            except (FixedOutingsDoNotFit, RuntimeError):
                continue
            if x is not None:
                return x
        return None

    def polish(self, x, floors=None, rounds=20):
        """Meet the floors by swaps, then improve by moves that keep every limit (one group per vehicle).

        Repair: a group below its floor takes a night it is free by a vehicle
        left over, or from the lowest-valued outing that night of a group above
        its own floor (the swap that loses least goes first). Improvement,
        repeated while anything changes: an outing moves to a better site with
        room the same night or on another night of the group with a vehicle free;
        an outing gives its vehicle to a better one of a
        group with outings left, when its own group stays at or above its floor.
        Returns None when the floors cannot be met this way.
        """
        n_nights = self.fleet.vehicles.shape[0]
        floors = np.zeros(self.n_trips, int) if floors is None else np.asarray(floors, int)
        chosen = set(np.flatnonzero(x[: self.n_x] > 0.5).tolist())
        planned = np.zeros(self.n_trips, int)
        used = np.zeros(n_nights, int)
        load = {}
        at = {}  # (trip, night) -> chosen index
        for i in chosen:
            planned[self.rr[i]] += 1
            used[self.dd[i]] += 1
            key = (self.dd[i], self.ss[i])
            load[key] = load.get(key, 0) + self.guests_x[i]
            at[(self.rr[i], self.dd[i])] = i
        limit = self.fleet.out_limit()
        pairs = self._pairs()

        def room(i, leaving=None):
            key = (self.dd[i], self.ss[i])
            free = self.capacity[self.ss[i]] - load.get(key, 0)
            if leaving is not None and (self.dd[leaving], self.ss[leaving]) == key:
                free += self.guests_x[leaving]
            return free >= self.guests_x[i]

        def drop(j):
            chosen.discard(j)
            planned[self.rr[j]] -= 1
            used[self.dd[j]] -= 1
            load[(self.dd[j], self.ss[j])] -= self.guests_x[j]
            del at[(self.rr[j], self.dd[j])]

        def take(i):
            chosen.add(i)
            planned[self.rr[i]] += 1
            used[self.dd[i]] += 1
            key = (self.dd[i], self.ss[i])
            load[key] = load.get(key, 0) + self.guests_x[i]
            at[(self.rr[i], self.dd[i])] = i

        def best_site(r, d, leaving=None):
            for i in pairs.get((r, d), ()):
                if room(i, leaving):
                    return i
            return None

        def spare(d, but=None):
            """The lowest-valued outing on night d whose group may lose one."""
            options = [j for j in chosen if self.dd[j] == d and not self.forced[j]
                       and planned[self.rr[j]] > floors[self.rr[j]] and j != but]
            return min(options, key=lambda j: (self.net[j], -j)) if options else None

        while np.any(planned < floors):
            r = int(np.flatnonzero(planned < floors)[0])
            best = None
            for d in range(n_nights):
                if (r, d) in at or (r, d) not in pairs:
                    continue
                if used[d] < limit[d]:
                    i = best_site(r, d)
                    if i is not None and (best is None or -self.net[i] < best[0]):
                        best = (-self.net[i], None, i)
                    continue
                j = spare(d)
                if j is None:
                    continue
                i = best_site(r, d, leaving=j)
                if i is not None and (best is None or self.net[j] - self.net[i] < best[0]):
                    best = (self.net[j] - self.net[i], j, i)
            if best is None:
                return None
            if best[1] is not None:
                drop(best[1])
            take(best[2])
        nights_of = {}
        for r, d in pairs:
            nights_of.setdefault(r, []).append(d)
        for _ in range(rounds):
            changed = False
            for j in sorted(chosen):
                if self.forced[j] or j not in chosen:
                    continue
                r, d = self.rr[j], self.dd[j]
                best = best_site(r, d, leaving=j)
                for other in nights_of.get(r, ()):  # the same group on a better night
                    if (r, other) in at or used[other] >= limit[other]:
                        continue
                    i = best_site(r, other)
                    if i is not None and (best is None or self.net[i] > self.net[best]):
                        best = i
                if best is not None and self.net[best] > self.net[j] + 1e-12:
                    drop(j)
                    take(best)
                    changed = True
            for r, d in list(pairs):
                if (r, d) in at or planned[r] >= self.outings_left[r]:
                    continue
                if used[d] < limit[d]:
                    i = best_site(r, d)
                    if i is not None:
                        take(i)
                        changed = True
                    continue
                j = spare(d)
                if j is None:
                    continue
                i = best_site(r, d, leaving=j)
                if i is not None and self.net[i] > self.net[j] + 1e-12:
                    drop(j)
                    take(i)
                    changed = True
            if not changed:
                break
        out = np.zeros(self.n_vars)
        out[list(chosen)] = 1
        return out

    def _pairs(self):
        """(trip, night) -> candidate indices, best net value first (built once)."""
        if not hasattr(self, "_pair_index"):
            order = np.lexsort((np.arange(self.n_x), -self.net, self.dd, self.rr))
            index = {}
            for i in order.tolist():
                if self.net[i] > 0 or self.forced[i]:
                    index.setdefault((int(self.rr[i]), int(self.dd[i])), []).append(i)
            self._pair_index = index
        return self._pair_index

    def value_of(self, x):
        """Total chance minus drive cost of a plan."""
        return float(self.net @ x[: self.n_x])

    def _planned(self, x):
        return self.planned_rows @ np.round(x[: self.n_vars])

    def loose_bound(self):
        """An upper bound on the chance objective that ignores the fleet and the sites' room.

        Each trip takes its best site on each of its best nights, up to its
        outings. Used when the time limit ended the search before the solver
        had a bound of its own.
        """
        n_nights = self.fleet.vehicles.shape[0]
        best = np.zeros((self.n_trips, n_nights))
        np.maximum.at(best, (self.rr, self.dd), np.maximum(self.net, 0.0))
        best = -np.sort(-best, axis=1)
        take = np.arange(n_nights)[None, :] < self.outings_left[:, None]
        return float((best * take).sum())

    def greedy(self, order=None, floors=None):
        """A feasible plan: fixed outings, then outings in ``order`` while every limit allows.

        ``order`` defaults to falling chance. With ``floors`` (outings per
        trip), a first pass takes only outings of groups still below their
        floor. Returns the plan, and with ``floors`` also whether every floor
        was met.
        """
        fleet, n_nights = self.fleet, self.fleet.vehicles.shape[0]
        x = np.zeros(self.n_vars)
        left = self.outings_left.copy()
        out = np.zeros((self.n_trips, n_nights), bool)
        room = {}
        free_seats = {}
        vehicles = fleet.vehicles.copy()
        guides = fleet.guides.copy()
        if order is None:
            order = np.lexsort((np.arange(self.n_x), -self.net))
        forced = np.flatnonzero(self.forced)
        passes = [forced, order] if floors is None else [forced, order, order]
        planned = np.zeros(self.n_trips, int)
        for number, i in ((n, i) for n, indices in enumerate(passes) for i in indices):
            r, d, s, g = self.rr[i], self.dd[i], self.ss[i], self.guests_x[i]
            if number and (self.net[i] <= 0 or left[r] < 1 or x[i]):
                continue
            if number == 1 and floors is not None and planned[r] >= floors[r]:
                continue
            if out[r, d] or room.get((d, s), self.capacity[s]) < g:
                continue
            if fleet.seats is None:
                if min(vehicles[d, 0], guides[d]) < 1:
                    continue
                vehicles[d, 0] -= 1
                guides[d] -= 1
            else:
                need = g - free_seats.get((d, s), 0.0)
                taken = self._take_vehicles(need, vehicles[d], guides[d])
                if taken is None:
                    continue
                for k, n in taken.items():
                    vehicles[d, k] -= n
                    guides[d] -= n
                    column = np.flatnonzero((self.v_night == d) & (self.v_class == k)
                                            & (self.v_site == s))
                    x[self.n_x + column] += n
                    need -= n * fleet.seats[k]
                free_seats[(d, s)] = -need
            x[i] = 1
            left[r] -= 1
            planned[r] += 1
            out[r, d] = True
            room[(d, s)] = room.get((d, s), self.capacity[s]) - g
        if floors is None:
            return x
        return x, bool(np.all(planned >= floors))

    def _take_vehicles(self, need, vehicles, guides):
        """Vehicles (largest first) whose seats cover ``need``; None when the fleet cannot."""
        taken = {}
        for k in np.argsort(-self.fleet.seats, kind="stable"):
            while need > 0 and vehicles[k] - taken.get(k, 0) > 0 and sum(taken.values()) < guides:
                taken[k] = taken.get(k, 0) + 1
                need -= self.fleet.seats[k]
        return taken if need <= 0 else None

    def _run(self, stage, eligible, levels, settings, deadline, share_of, fallback,
             settled=None):
        """One program: ``served``, ``share`` or ``chance``; returns (x, limit hit, bound).

        ``fallback`` (a plan meeting every level so far) is returned when the
        time limit ends the program before it has a plan of its own.
        """
        from scipy.optimize import Bounds, LinearConstraint, milp
        from scipy.sparse import coo_array, hstack, vstack

        n_e = eligible.size
        extra = {"served": n_e, "share": n_e + 1}.get(stage, n_e if levels else 0)
        n_all = self.n_vars + extra
        matrices = [b[0] for b in self.blocks]
        upper = [b[1] for b in self.blocks]
        lower = [np.full(b[1].shape, -np.inf) for b in self.blocks]
        if extra:
            y_cols = self.n_vars + np.arange(n_e)
            planned_e = self.planned_rows[eligible]
            # y_r <= planned_r: a group counts as served only with an outing.
            served_rows = hstack([-planned_e, coo_array(np.eye(n_e)),
                                  coo_array((n_e, extra - n_e))])
            matrices = [hstack([m, coo_array((m.shape[0], extra))]) for m in matrices]
            matrices.append(served_rows)
            upper.append(np.zeros(n_e))
            lower.append(np.full(n_e, -np.inf))
            if levels is not None:
                # At least as many groups served as the first program reached.
                matrices.append(coo_array((np.ones(n_e), (np.zeros(n_e, int), y_cols)),
                                          shape=(1, n_all)))
                upper.append(np.array([np.inf]))
                lower.append(np.array([float(levels[0])]))
            wanted = self.wanted[eligible].astype(float)
            if stage == "share":
                # planned_r >= t * wanted_r for each served group r (t in the last column).
                matrices.append(hstack([
                    planned_e, coo_array(-wanted[:, None] * np.eye(n_e)),
                    coo_array(-wanted[:, None]),
                ]))
                upper.append(np.full(n_e, np.inf))
                lower.append(-wanted)
            elif stage in ("chance", "floors") and levels is not None:
                floors = levels[1].astype(float)
                # planned_r >= floor_r * y_r: the least share stays where the second put it.
                matrices.append(hstack([planned_e, coo_array(-floors[:, None] * np.eye(n_e))]))
                upper.append(np.full(n_e, np.inf))
                lower.append(np.zeros(n_e))
        matrix = vstack(matrices).tocsr()
        objective = np.zeros(n_all)
        if stage == "served":
            objective[self.n_vars:] = -1.0
        elif stage == "share":
            objective[-1] = -1.0
        elif stage == "chance":
            objective[: self.n_x] = -(self.net + self.tie) * OBJECTIVE_SCALE
        lo = np.zeros(n_all)
        lo[: self.n_x] = self.forced
        hi = np.concatenate([np.ones(self.n_x), self.v_upper, np.ones(extra)])
        if settled is not None:  # outings decided already (0 or 1), the rest free
            decided = ~np.isnan(settled)
            lo[: self.n_x][decided] = np.maximum(lo[: self.n_x][decided], settled[decided])
            hi[: self.n_x][decided] = settled[decided]
        integrality = np.ones(n_all)
        if stage == "share":
            integrality[-1] = 0
        options = {"presolve": True, "disp": False,
                   "mip_rel_gap": settings.relative_gap if stage == "chance" else 0.0}
        left = deadline - time.perf_counter()
        if math.isfinite(left):
            options["time_limit"] = max(0.05, left * share_of)
        with _quiet_output():
            result = milp(objective, constraints=LinearConstraint(
                matrix, np.concatenate(lower), np.concatenate(upper)),
                          integrality=integrality, bounds=Bounds(lo, hi), options=options)
        if result.x is None and stage == "floors":
            return None, result.status == 1, None
        if result.x is None and result.status == 1:
            dual = getattr(result, "mip_dual_bound", None)
            bound = -float(dual) / OBJECTIVE_SCALE if dual is not None and np.isfinite(dual) \
                else None
            return fallback, True, bound
        if result.x is None:
            if result.status == 2:
                raise FixedOutingsDoNotFit(
                    "the outings to keep alone need more vehicles, guides or room at a site "
                    "than there is; release some of them or add to the fleet")
            raise RuntimeError(f"excursion plan not solved: {result.message}")
        bound = None
        if stage == "chance":
            dual = getattr(result, "mip_dual_bound", None)
            if dual is not None and np.isfinite(dual):
                bound = -float(dual) / OBJECTIVE_SCALE
            else:
                bound = -float(result.fun) / OBJECTIVE_SCALE
        return np.round(result.x[: self.n_vars]), result.status == 1, bound


def _fewest_vehicles(load, seats, available):
    """Fewest vehicles (largest seats first) whose seats hold ``load``; uses them up."""
    count = 0
    for k in np.argsort(-seats, kind="stable"):
        while load > 0 and available[k] > 0:
            load -= seats[k]
            available[k] -= 1
            count += 1
    return count


def _least_share(planned, wanted) -> float:
    """Smallest ``planned / wanted`` over the groups with an outing (1.0 when none)."""
    served = planned >= 1
    if not np.any(served):
        return 1.0
    return float(np.min(planned[served] / wanted[served]))


@contextlib.contextmanager
def _quiet_output():
    """Point file descriptors 1 and 2 at the null device while the solver runs.

    HiGHS writes from C++ straight to the descriptors, past ``sys.stdout``;
    ``week --json`` must stay valid JSON, so the descriptors themselves are
    swapped and restored however the block ends.
    """
    import sys

    for stream in (sys.stdout, sys.stderr):
        with contextlib.suppress(Exception):
            stream.flush()
    saved = []
    null = os.open(os.devnull, os.O_WRONLY)
    try:
        for fd in (1, 2):
            try:
                saved.append((fd, os.dup(fd)))
            except OSError:
                continue
            os.dup2(null, fd)
        yield
    finally:
        for fd, copy in saved:
            os.dup2(copy, fd)
            os.close(copy)
        os.close(null)


# ---------------------------------------------------------------------------------------
# checks, pruning, reasons
# ---------------------------------------------------------------------------------------


def _prepare(value, allowed, guests, outings, vehicles, capacity, drive_cost, drive_min, weight):
    """Check shapes and return the net value and the plannable mask."""
    net = net_value(value, drive_cost, drive_min, weight)
    if net.ndim != 3:
        raise ValueError(f"value must be (trips, nights, sites), got shape {net.shape}")
    n_trips, n_nights, n_sites = net.shape
    allowed = np.asarray(allowed, dtype=bool)
    if allowed.shape != net.shape:
        raise ValueError(f"allowed has shape {allowed.shape}, value has {net.shape}")
    guests = _counts("guests", guests, n_trips)
    capacity = _counts("capacity", capacity, n_sites)
    outings = None if outings is None else _counts("outings", outings, n_trips)
    vehicles = None if vehicles is None else _counts("vehicles", vehicles, n_nights)
    ok = allowed & ~np.isnan(net) & (guests[:, None, None] <= capacity[None, None, :])
    return net, ok, guests, outings, vehicles, capacity


def _counts(name, counts, length):
    counts = np.asarray(counts)
    if counts.shape != (length,):
        raise ValueError(f"{name} must have shape ({length},), got {counts.shape}")
    if np.any(counts < 0):
        raise ValueError(f"{name} must not be negative")
    return counts.astype(float)


def _check_fleet(fleet, n_nights):
    if fleet.vehicles.ndim != 2 or fleet.vehicles.shape[0] != n_nights:
        raise ValueError(f"vehicles must have shape ({n_nights}, classes), "
                         f"got {fleet.vehicles.shape}")
    if np.any(fleet.vehicles < 0) or np.any(fleet.guides < 0):
        raise ValueError("vehicles and guides must not be negative")


def _within_reach(net, candidate, ok, guests, capacity, fleet, forced):
    """Triples that can be in some optimal plan; the others need no variable.

    On night ``d`` at most ``k = min(vehicles out, groups with a candidate
    that night)`` sites are in use, since every site in use has a vehicle and
    a group of its own.

    One group per vehicle: if ``k`` candidate sites rank at or above site
    ``s`` for trip ``r`` (by net value, ties to the lower index), the other
    ``k - 1`` groups occupy at most ``k - 1`` of them, so one is free and
    holds the group alone. Moving the group there loses nothing and breaks no
    limit, so only the top ``k`` sites of each (trip, night) need a variable.

    Seated vehicles (groups share): a group cannot always move alone, but
    everyone at site ``s`` can move, with their vehicles, to a free site
    ``s'`` that is at least as good for every trip, allowed wherever ``s`` is
    and at least as large. When ``k`` sites dominate ``s`` so on night ``d``,
    one of them is free and ``s`` is dropped for that night. The dominance
    test is made when the chance and the allowed mask do not depend on the
    trip beyond the group's size (the week's case); otherwise every site is
    kept. A site with a fixed outing on a night is kept for every trip.

    Either way the fairness levels are unchanged (the same groups go out on
    the same nights), so the lexicographic optimum is kept.
    """
    n_trips, n_nights, n_sites = net.shape
    going = (candidate | forced).any(axis=2).sum(axis=0)  # groups that can go out each night
    k = np.minimum(fleet.out_limit(), going)
    if fleet.seats is None:
        order = np.argsort(np.where(candidate, -net, np.inf), axis=-1, kind="stable")
        position = np.empty_like(order)
        np.put_along_axis(position, order, np.arange(n_sites), axis=-1)
        return position < k[None, :, None]
    if not _separable(net, ok, guests, capacity):
        return np.ones(net.shape, bool)
    keep = forced.any(axis=0)
    site_net = np.where(candidate.any(axis=0), net.max(axis=0), -np.inf)  # (D, S)
    for d in range(n_nights):
        keep[d] |= _undominated(site_net[d], capacity, int(min(k[d], n_sites)))
    return np.broadcast_to(keep[None], net.shape)


def _separable(net, ok, guests, capacity):
    """True when net depends only on (night, site) where allowed, and allowed factorises.

    The factors are the trip's nights, the night's open sites with darkness
    and ``guests <= capacity``; they are rebuilt from the margins of ``ok``
    and compared with it, so a larger site is allowed wherever a smaller one is.
    """
    if ok.size == 0:
        return True
    spread = np.where(ok, net, np.nan)
    with _ignore_all_nan():
        top, low = np.nanmax(spread, axis=0), np.nanmin(spread, axis=0)
    if np.any(np.isfinite(top) & (top != low)):
        return False
    fits = guests[:, None] <= capacity[None, :]
    rebuilt = ok.any(axis=2)[:, :, None] & ok.any(axis=0)[None] & fits[:, None, :]
    return bool(np.array_equal(rebuilt, ok))


@contextlib.contextmanager
def _ignore_all_nan():
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        yield


def _undominated(site_net, capacity, k):
    """Sites with fewer than ``k`` others at least as good and as large (ties to lower index)."""
    n_sites = site_net.size
    import bisect

    order = np.lexsort((np.arange(n_sites), -capacity, -site_net))
    keep = np.zeros(n_sites, bool)
    seen = []  # capacities of sites earlier in the order, kept sorted
    for s in order:
        if not np.isfinite(site_net[s]):
            continue
        dominators = len(seen) - bisect.bisect_left(seen, capacity[s])
        keep[s] = dominators < k
        bisect.insort(seen, capacity[s])
    return keep


def _tie_bonus(n_vars, n_pairs):
    """Bonus per variable, falling with its order; any plan's total < TIE_BUDGET.

    A plan holds at most one variable per (trip, night) pair, so ``n_pairs``
    bonuses of at most TIE_BUDGET / n_pairs each stay within the budget.
    """
    return TIE_BUDGET / n_pairs * (1.0 - np.arange(n_vars) / n_vars)
