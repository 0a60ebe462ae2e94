"""Choosing which group goes to which viewing site on which night, under fleet and site limits.

The plan is a 0-1 integer program over (trip, night, site) triples, solved
exactly with HiGHS through ``scipy.optimize.milp``. Each chosen triple is one
excursion: one vehicle takes one group to one site for one night. The
objective is the total chance of the chosen outings minus their drive-time
cost, both in chance units (0..1 per outing).

The limits are those of the operator's week: outings booked per trip, one
outing per trip per night, vehicles per night, and the number of guests a
site holds per night (shared by every group sent there). Nights outside a
stay, blocked nights, closed sites and nights without darkness are excluded
by the caller through ``allowed``; a site too small for a group is excluded
here as well.

Structurally this is a generalised assignment problem with side constraints
(Martello & Toth 1990, ch. 7). For the sizes an operator has (hundreds of
sites, a week, a few dozen trips) HiGHS proves the optimum in tens of
milliseconds once dominated sites are dropped, so no heuristic is needed; a
greedy heuristic is kept only as the baseline in ``benchmarks/bench_planner.py``.
"""

import numpy as np

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
forecast can resolve, so the plan found is the optimum of the unscaled
problem to better than 1e-9.
"""

TIE_BUDGET = 1.0e-10
"""Largest total chance by which tie-breaking may move a plan off the optimum.

Each variable gets a bonus that falls with its (trip, night, site) order, so
that among plans of equal chance the one using earlier trips, earlier nights
and lower site indices wins. The bonuses of any feasible plan add up to less
than this, so they only decide between plans whose chance differs by less.
"""


def plan_excursions(
    value,
    allowed,
    guests,
    outings,
    vehicles,
    capacity,
    drive_cost=None,
    drive_min=None,
    drive_weight=DRIVE_WEIGHT_PER_MIN,
    time_limit_s=None,
):
    """Choose the excursions that maximise total chance minus drive cost.

    Parameters
    ----------
    value : array_like, shape (R, D, S)
        Chance of a visible display for trip ``r`` on night ``d`` at site
        ``s``, 0..1. NaN is treated as "cannot be planned".
    allowed : array_like of bool, shape (R, D, S)
        False where the night is outside the stay, blocked for the trip, the
        site is closed or too small, or there is no darkness.
    guests : array_like of int, shape (R,)
        Guests in each trip's group.
    outings : array_like of int, shape (R,)
        Most outings booked for each trip over the planning window.
    vehicles : array_like of int, shape (D,)
        Vehicles available each night; one vehicle carries one group.
    capacity : array_like of int, shape (S,)
        Guests a site holds per night, shared by all groups sent there.
    drive_cost : array_like, shape (S,) or (R, D, S), optional
        Drive-time cost already in chance units, subtracted from ``value``.
    drive_min : array_like, shape (S,) or (R, D, S), optional
        One-way drive in minutes; adds ``drive_weight * drive_min`` to the
        cost. Use this or ``drive_cost``, not both.
    drive_weight : float, optional
        Chance units per minute of one-way drive, default
        ``DRIVE_WEIGHT_PER_MIN`` (0.001; common practice, no source).
    time_limit_s : float, optional
        Wall-clock limit handed to the solver; None for no limit.

    Returns
    -------
    list of (int, int, int)
        The chosen ``(trip, night, site)`` triples, sorted.

    Notes
    -----
    Only outings with a positive net value (chance minus drive cost) are
    candidates: a night drive to a site with no chance costs guests their
    sleep and the crew their hours for nothing.

    Only the best ``min(vehicles[d], trips)`` sites of each trip and night
    get a variable; the others can never improve on them (see
    `_within_reach`), which keeps 200 sites as fast as ten.

    Exact ties are broken towards earlier trips, earlier nights and lower
    site indices by bonuses whose total stays below ``TIE_BUDGET``; with the
    model built in a fixed order and HiGHS run deterministically, the same
    input always gives the same plan.

    Raises
    ------
    ValueError
        When array shapes disagree or counts are negative.
    RuntimeError
        When the solver does not prove an optimum (its message is included).

    References
    ----------
    Huangfu, Q. & Hall, J. A. J. (2018). Parallelizing the dual revised
    simplex method. Mathematical Programming Computation 10, 119-142 (HiGHS).
    Martello, S. & Toth, P. (1990). Knapsack Problems: Algorithms and
    Computer Implementations. Wiley, ch. 7 (generalised assignment).
    """
    net, ok, guests, outings, vehicles, capacity = _prepare(
        value, allowed, guests, outings, vehicles, capacity, drive_cost, drive_min, drive_weight
    )
    candidate = ok & (net > 0.0)
    rr, dd, ss = np.nonzero(candidate & _within_reach(net, candidate, vehicles))
    if rr.size == 0:
        return []
    return _solve(net[rr, dd, ss], rr, dd, ss, guests, outings, vehicles, capacity, time_limit_s)


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
        As for `plan_excursions`.
    plan : list of (int, int, int)
        The chosen ``(trip, night, site)`` triples.
    guests : array_like of int, shape (R,)
        Guests in each trip's group.
    capacity : array_like of int, shape (S,)
        Guests a site holds per night.
    drive_cost, drive_min, drive_weight
        As for `plan_excursions`.

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


def rank_sites(value, allowed, top=5):
    """Order the sites for each trip and night by chance, best first.

    Parameters
    ----------
    value : array_like, shape (R, D, S)
        Chance per (trip, night, site).
    allowed : array_like of bool, shape (R, D, S)
        Sites that may be used.
    top : int, optional
        How many sites to keep per (trip, night).

    Returns
    -------
    numpy.ndarray of int, shape (R, D, min(top, S))
        Site indices by falling chance, ties to the lower index; -1 fills the
        places beyond the last allowed site.
    """
    value = np.asarray(value, dtype=float)
    usable = np.asarray(allowed, dtype=bool) & ~np.isnan(value)
    order = np.argsort(np.where(usable, -value, np.inf), axis=-1, kind="stable")[..., :top]
    return np.where(np.take_along_axis(usable, order, axis=-1), order, -1)


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


def _within_reach(net, candidate, vehicles):
    """Sites that can be in some optimal plan: the best few per trip and night.

    On night ``d`` at most ``k = min(vehicles[d], trips)`` groups go out. If
    ``k`` candidate sites rank at or above site ``s`` for trip ``r`` (by net
    value, ties to the lower index), the other ``k - 1`` groups can occupy
    at most ``k - 1`` of them, so one is free and holds the group alone (a
    candidate fits the group). Moving the group there loses nothing and
    breaks no limit, so only the top ``k`` sites of each (trip, night) need a
    variable. This turns 200 sites into at most a handful per trip and night.
    """
    n_trips, _, n_sites = net.shape
    order = np.argsort(np.where(candidate, -net, np.inf), axis=-1, kind="stable")
    position = np.empty_like(order)
    np.put_along_axis(position, order, np.arange(n_sites), axis=-1)
    keep = np.minimum(vehicles, n_trips).astype(int)
    return position < keep[None, :, None]


def _tie_bonus(n_vars, n_pairs):
    """Bonus per variable, falling with its order; any plan's total < TIE_BUDGET.

    A plan holds at most one variable per (trip, night) pair, so ``n_pairs``
    bonuses of at most TIE_BUDGET / n_pairs each stay within the budget.
    """
    return TIE_BUDGET / n_pairs * (1.0 - np.arange(n_vars) / n_vars)


def _solve(net, rr, dd, ss, guests, outings, vehicles, capacity, time_limit_s):
    """Build the sparse model over the plannable triples and solve it."""
    from scipy.optimize import Bounds, LinearConstraint, milp
    from scipy.sparse import coo_array, vstack

    n_vars = net.size
    n_trips, n_nights, n_sites = outings.size, vehicles.size, capacity.size
    columns = np.arange(n_vars)
    ones = np.ones(n_vars)

    def rows(row_of_var, n_rows, weights):
        return coo_array((weights, (row_of_var, columns)), shape=(n_rows, n_vars))

    pair = rr * n_nights + dd
    blocks = {
        "outings per trip": (rows(rr, n_trips, ones), outings),
        "one outing per trip per night": (
            rows(pair, n_trips * n_nights, ones),
            np.ones(n_trips * n_nights),
        ),
        "vehicles per night": (rows(dd, n_nights, ones), vehicles),
        "guests per site per night": (
            rows(dd * n_sites + ss, n_nights * n_sites, guests[rr]),
            np.repeat(capacity[None, :], n_nights, axis=0).ravel(),
        ),
    }
    matrix = vstack([block[0] for block in blocks.values()]).tocsr()
    upper = np.concatenate([block[1] for block in blocks.values()])
    objective = -(net + _tie_bonus(n_vars, np.unique(pair).size)) * OBJECTIVE_SCALE
    options = {"mip_rel_gap": 0.0, "presolve": True, "disp": False}
    if time_limit_s is not None:
        options["time_limit"] = float(time_limit_s)
    result = milp(
        objective,
        constraints=LinearConstraint(matrix, -np.inf, upper),
        integrality=np.ones(n_vars),
        bounds=Bounds(0.0, 1.0),
        options=options,
    )
    if result.status != 0 or result.x is None:
        raise RuntimeError(f"excursion plan not solved: {result.message}")
    chosen = result.x > 0.5
    return sorted(zip(rr[chosen].tolist(), dd[chosen].tolist(), ss[chosen].tolist(), strict=True))
