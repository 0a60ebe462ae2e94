"""Confirm proposed outings: the plan of record keeps them in every later plan.

Without --trip or --night every proposed outing is confirmed (the whole
proposal); with them, only the outings of those trips and nights. Each
change is kept with who made it and when.
"""

from auroraplan.commands._common import add_record_options, iso_date


def add_arguments(parser):
    add_selection_arguments(parser, "confirm")
    parser.add_argument("--note", default="", help="a short note kept with the change")
    add_record_options(parser, who=True)
    parser.add_argument("--json", action="store_true", help="print the changed outings as JSON")


def add_selection_arguments(parser, verb: str) -> None:
    """The workspace and the --trip / --night choice shared by confirm and release."""
    parser.add_argument("workspace", help="folder with operator.toml, sites.geojson, trips.csv ...")
    parser.add_argument("--trip", action="append", default=[], metavar="ID",
                        help=f"{verb} only this trip's outings (repeat for more trips)")
    parser.add_argument("--night", action="append", default=[], type=iso_date,
                        metavar="DATE",
                        help=f"{verb} only the outings on this evening, YYYY-MM-DD (repeatable)")


def run(args):
    return change_state(args, "confirmed", ("proposed",), "confirm")


def change_state(args, new_state: str, from_states: tuple, verb: str) -> int:
    """Move the chosen outings of the record to ``new_state``; one clear line when none match."""
    from auroraplan import record
    from auroraplan.commands._common import open_record, print_json
    from auroraplan.errors import InputError
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace, forecasts=False)
    known = {t.trip for t in ws.trips}
    for trip in args.trip:
        if trip not in known:
            raise InputError(f"--trip {trip!r} is not in trips.csv; known trips: "
                             f"{', '.join(sorted(known))}")
    nights = [n.isoformat() for n in args.night]
    db = open_record(args, ws, create=False)
    if db is None:
        raise InputError(f"{ws.path}: no plan of record yet; run `auroraplan week "
                         f"{ws.path} --start DATE` first to propose one")
    with db:
        changed = record.set_state(db, new_state, from_states, args.trip, nights,
                                   by=args.by or record.who(), note=args.note)
    if not changed:
        which = " and ".join(x for x in (
            f"trip {', '.join(args.trip)}" if args.trip else "",
            f"night {', '.join(nights)}" if nights else "") if x) or "any trip"
        raise InputError(f"no {' or '.join(from_states)} outing for {which} in the plan of "
                         f"record; nothing to {verb} (see `auroraplan week` for the plan)")
    if args.json:
        print_json([{"trip": o.trip, "night": o.night, "site": o.site, "state": new_state}
                    for o in changed])
    else:
        for o in changed:
            print(f"{new_state} {o.night} {o.trip} → {o.site}")
    return 0
