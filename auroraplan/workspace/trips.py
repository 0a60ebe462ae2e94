"""trips.csv: the booked groups and their stays."""

from __future__ import annotations

import datetime as dt

from auroraplan import checks
from auroraplan.errors import ProblemList
from auroraplan.workspace.files import _check_field, _read_csv_rows, _read_text, _unique
from auroraplan.workspace.model import Trip

MAX_STAY_NIGHTS = 366

"""A stay longer than a year in trips.csv is a typo in a date (common practice, no source)."""


TRIP_DATES = (dt.date(1900, 1, 1), dt.date(2053, 1, 1))

"""Arrive and depart dates allowed in trips.csv: nights from sky.FIRST_NIGHT to
sky.LAST_NIGHT, inside the span of the JPL DE421 ephemeris (Skyfield reports de421.bsp
as covering 1899-07-29 to 2053-10-09)."""


_TRIP_DATE = checks.date_within(*TRIP_DATES)


def _trip_from_row(line, row, label, largest, problems: ProblemList) -> Trip | None:
    where = f"{label} line {line}"
    before = len(problems)
    trip = _check_field(problems, where, "trip", checks.name, row["trip"])
    group = _check_field(problems, where, "group", checks.name, row["group"])
    high = largest[0] if largest else 1000
    guests = _check_field(problems, where, "guests", checks.cell_whole(1, 1000, "guests"), row["guests"])
    if guests is not None and largest and guests > largest[0]:
        problems.add(
            f"{where}, guests: {guests} is more than any site holds (largest: {high} at "
            f"{largest[1]}); split the group into smaller trips"
        )
    arrive = _check_field(problems, where, "arrive", _TRIP_DATE, row["arrive"])
    depart = _check_field(problems, where, "depart", _TRIP_DATE, row["depart"])
    outings = _check_field(problems, where, "outings", checks.cell_whole(1, 60, "outings"), row["outings"])
    blocked = _check_field(problems, where, "blocked", checks.date_cells, row.get("blocked", ""))
    if arrive and depart and depart <= arrive:
        problems.add(f"{where}, depart: {depart} is not after arrive {arrive}; give a later date")
    elif arrive and depart and outings and outings > (depart - arrive).days:
        nights = (depart - arrive).days
        problems.add(f"{where}, outings: {outings} outings in a stay of {nights} night"
                     f"{'s' if nights != 1 else ''} ({arrive} to {depart}); at most one outing "
                     f"a night, give {nights} or fewer or check the dates")
    elif arrive and depart and (depart - arrive).days > MAX_STAY_NIGHTS:
        problems.add(
            f"{where}, depart: a stay of {(depart - arrive).days} nights from {arrive}; "
            f"stays are at most {MAX_STAY_NIGHTS} nights, check the dates"
        )
    elif arrive and depart and blocked:
        for night in blocked:
            if not arrive <= night < depart:
                problems.add(
                    f"{where}, blocked: {night} is not an evening of the stay "
                    f"({arrive} to {depart - dt.timedelta(days=1)})"
                )
    if len(problems) > before:
        return None
    return Trip(trip=trip, group=group, guests=guests, arrive=arrive, depart=depart,
                outings=outings, blocked=tuple(sorted(blocked)))


def _load_trips(path, label, sites, problems: ProblemList, warnings: list) -> list[Trip] | None:
    text = _read_text(path, label, problems)
    if text is None:
        return None
    open_sites = [s for s in (sites or []) if not s.closed] or list(sites or [])
    biggest = max(open_sites, key=lambda s: s.capacity, default=None)
    largest = (biggest.capacity, biggest.name) if biggest else None
    trips = []
    made = ((line, _trip_from_row(line, row, label, largest, problems))
            for line, row in _read_csv_rows(text, label, "trips", problems))
    for line, trip in _unique(made, lambda trip: trip.trip, problems,
                              lambda line, trip: f"{label} line {line}, trip: {trip.trip!r} "
                                                 "is also on line {first}; trip ids must be "
                                                 "unique"):
        free = len(trip.nights()) - len(set(trip.blocked))
        if trip.outings > free:
            warnings.append(
                f"{label} line {line}: trip {trip.trip} wants {trip.outings} outings but has "
                f"{free} free evenings; at most {free} can be planned"
            )
        trips.append(trip)
    return None if problems else trips
