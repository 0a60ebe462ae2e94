"""What-if runs: plan or rank as if the fleet, the sites, the bookings or the Kp forecast differed.

An assumption changes the workspace read into memory for one run only. The
files and the plan of record are never changed by it: `week` does not save a
proposal while an assumption is in force, and every output names the
assumptions it was made under.
"""

from __future__ import annotations

import dataclasses
import datetime as dt

from auroraplan.errors import InputError

KP_RANGE = (0.0, 9.0)
"""The Kp scale (Bartels 1949): a shifted forecast is clipped to it."""

SHOWN_NAMES = 12
"""Most known names listed after an unknown site or trip."""


@dataclasses.dataclass(frozen=True)
class Assumptions:
    """The what-ifs of one run; the empty record assumes nothing."""

    vehicles: int | None = None
    closed: tuple[str, ...] = ()
    without: tuple[str, ...] = ()
    kp_shift: float | None = None
    kp: float | None = None

    def any(self) -> bool:
        return self != Assumptions()


def _kp_value(text: str) -> float:
    import argparse

    from auroraplan.activity import parse_kp

    try:
        return parse_kp(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(f"{text!r}: {exc}") from None


def add_arguments(parser, fleet: bool = True) -> None:
    """The what-if options; ``fleet`` adds those that only planning uses (vehicles, trips)."""
    from auroraplan.commands._common import int_range, number_range

    group = parser.add_argument_group(
        "what-if (this run only; files and the plan of record stay as they are)")
    if fleet:
        group.add_argument("--assume-vehicles", type=int_range(0, 1000), metavar="N",
                           help="plan as if N vehicles were available each night")
        group.add_argument("--assume-without", action="append", default=[], metavar="TRIP",
                           help="plan as if this trip were not booked (repeatable)")
    group.add_argument("--assume-closed", action="append", default=[], metavar="SITE",
                       help="as if this site were closed (repeatable)")
    group.add_argument("--assume-kp-shift", type=number_range(-9.0, 9.0, "a Kp shift"),
                       metavar="DELTA",
                       help="as if every Kp in activity.csv were DELTA higher (or lower)")
    group.add_argument("--assume-kp", type=_kp_value, metavar="KP",
                       help="as if the Kp forecast were KP (e.g. 5, 4+, G2) in every "
                            "3-hour block of the nights")


def from_args(args) -> Assumptions:
    return Assumptions(
        vehicles=getattr(args, "assume_vehicles", None),
        closed=tuple(dict.fromkeys(getattr(args, "assume_closed", []) or [])),
        without=tuple(dict.fromkeys(getattr(args, "assume_without", []) or [])),
        kp_shift=getattr(args, "assume_kp_shift", None),
        kp=getattr(args, "assume_kp", None),
    )


def _known(names) -> str:
    names = sorted(names)
    return ", ".join(names[:SHOWN_NAMES]) + (", ..." if len(names) > SHOWN_NAMES else "")


def apply(ws, assumptions: Assumptions, first: dt.date, last: dt.date):
    """The workspace as the assumptions have it, and one line per assumption in force.

    Parameters
    ----------
    ws : Workspace
        As read from the files; it is not changed.
    assumptions : Assumptions
    first, last : datetime.date
        The evenings the run may look at; a replaced Kp forecast covers them, a day
        either side.

    Raises
    ------
    InputError
        A site or trip name that the workspace does not have (one line naming the
        option and the known names); ``--assume-kp-shift`` and ``--assume-kp`` together.
    """
    a = assumptions
    if not a.any():
        return ws, []
    if a.kp is not None and a.kp_shift is not None:
        raise InputError("--assume-kp replaces the forecast and --assume-kp-shift shifts it; "
                         "give one of them")
    labels = []
    sites = {s.name for s in ws.sites}
    for name in a.closed:
        if name not in sites:
            raise InputError(f"--assume-closed {name!r}: no such site in the workspace; known "
                             f"sites: {_known(sites)}")
    trips = {t.trip for t in ws.trips}
    for trip in a.without:
        if trip not in trips:
            raise InputError(f"--assume-without {trip!r}: no such trip in trips.csv; known "
                             f"trips: {_known(trips)}")
    changes = {}
    if a.vehicles is not None:
        fleet = ws.operator.fleet
        changes["operator"] = dataclasses.replace(
            ws.operator, vehicles=a.vehicles,
            fleet=None if fleet is None else fleet.with_count(a.vehicles))
        labels.append(f"{a.vehicles} vehicle{'s' if a.vehicles != 1 else ''} instead of "
                      f"{ws.operator.vehicles}")
    if a.closed:
        changes["sites"] = [dataclasses.replace(s, closed=True) if s.name in a.closed else s
                            for s in ws.sites]
        labels.extend(f"site closed: {name}" for name in a.closed)
    if a.without:
        changes["trips"] = [t for t in ws.trips if t.trip not in a.without]
        labels.extend(f"trip left out: {trip}" for trip in a.without)
    if a.kp_shift is not None:
        import numpy as np

        kp = np.clip(np.asarray(ws.activity["kp"], dtype=float) + a.kp_shift, *KP_RANGE)
        changes["activity"] = ws.activity.replace(kp=kp)
        labels.append(f"Kp forecast shifted by {a.kp_shift:+g} (within 0 to 9)")
    if a.kp is not None:
        changes["activity"] = constant_kp(a.kp, first - dt.timedelta(days=1),
                                          last + dt.timedelta(days=2))
        labels.append(f"Kp {a.kp:g} in every 3-hour block from {first} to {last}")
    return dataclasses.replace(ws, **changes), labels


def constant_kp(kp: float, first: dt.date, end: dt.date):
    """An activity table with the same Kp in every 3-hour UT block from ``first`` to ``end``."""
    import numpy as np

    from auroraplan.csvcolumns import ActivityTable

    starts = np.arange(np.datetime64(first, "s"), np.datetime64(end, "s"),
                       np.timedelta64(3 * 3600, "s"))
    return ActivityTable(start_utc=starts, kp=np.full(len(starts), float(kp)),
                         kp_sd=np.full(len(starts), np.nan))
