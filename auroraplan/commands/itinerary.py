"""Write the printable PDF itinerary of a booked trip, or of every trip into a folder.

Reads the trip's outings from the plan of record in the workspace database, the
same outings `week` and the calendar show; a trip not yet planned is planned
around the record first and its proposal saved. Lays out, for the group: each evening's outing, site, pick-up and return times,
chance in words, the backup site, what to wear and bring, and the safety cautions.
"""

from auroraplan.commands._common import add_record_options, output_file, output_folder

PAPERS = {"a4": "A4", "letter": "Letter"}


def add_arguments(parser):
    parser.add_argument("workspace", help="folder with operator.toml, sites.geojson, trips.csv ...")
    which = parser.add_mutually_exclusive_group(required=True)
    which.add_argument("--trip", metavar="ID", help="the trip to print (its id in trips.csv)")
    which.add_argument("--all", metavar="DIR", type=output_folder,
                       help="write one PDF per trip into this existing folder "
                            "(named itinerary-<trip>.pdf)")
    parser.add_argument("--pdf", metavar="FILE", type=output_file, help="where to write the PDF (with --trip)")
    parser.add_argument("--paper", type=str.lower, choices=sorted(PAPERS), default="a4",
                        help="paper size: a4 (default) or letter")
    add_record_options(parser)


ITINERARY_FILE = "itinerary-{}.pdf"


def itinerary_file_name(trip_id: str) -> str:
    """The itinerary file name of one trip (``auroraplan.names.safe_name``)."""
    from auroraplan.names import safe_name

    return ITINERARY_FILE.format(safe_name(trip_id, "trip"))


def itinerary_file_names(trip_ids) -> dict:
    """trip id -> its itinerary's file name inside a folder (``auroraplan.names.file_names``)."""
    from auroraplan.names import file_names

    return file_names(trip_ids, ITINERARY_FILE)


def run(args):
    from pathlib import Path

    from auroraplan.commands._progress import working
    from auroraplan.errors import InputError
    from auroraplan.outfiles import check_output_path, write_files
    from auroraplan.store import protected_inputs
    from auroraplan.workspace import load_workspace

    if args.trip is not None and not args.pdf:
        raise InputError("--trip needs --pdf FILE: say where to write the itinerary")
    if args.all is not None and args.pdf:
        raise InputError("--pdf goes with --trip; with --all the files are named "
                         "itinerary-<trip>.pdf inside the folder")
    ws = load_workspace(args.workspace)
    protected = protected_inputs(ws, args.database)
    trips = _chosen_trips(ws, args.trip)
    if args.all is not None:
        folder = Path(args.all).expanduser()
        if not folder.is_dir():
            raise InputError(f"{folder}: no such folder; create it first or give another --all")
        targets = _all_targets(folder, trips, protected)
    else:
        targets = {trips[0].trip: check_output_path(args.pdf, protected)}

    fonts = itinerary_fonts(ws, trips)  # before the work: every name can be printed
    with working(f"Planning and laying out {len(trips)} itinerar{'y' if len(trips) == 1 else 'ies'}"):
        pdfs = _render_all(ws, trips, PAPERS[args.paper], args, fonts)
    # Written as a set once every PDF is made: all of them or none.
    for path in write_files({path: pdfs[trip_id] for trip_id, path in targets.items()}):
        print(f"wrote {path}")
    return 0


def _chosen_trips(ws, trip_id):
    from auroraplan.errors import InputError

    if not ws.trips:
        raise InputError(f"{ws.path}: trips.csv has no trips; add the booked groups first")
    if trip_id is None:
        return list(ws.trips)
    for trip in ws.trips:
        if str(trip.trip) == str(trip_id):
            return [trip]
    known = ", ".join(str(t.trip) for t in ws.trips)
    raise InputError(f"--trip {trip_id!r} is not in trips.csv; known trips: {known}")


def _all_targets(folder, trips, protected):
    from auroraplan.outfiles import check_output_path

    names = itinerary_file_names([trip.trip for trip in trips])
    return {trip_id: check_output_path(folder / name, protected) for trip_id, name in names.items()}


def itinerary_fonts(ws, trips):
    """The fonts for the itineraries of ``trips``, after checking they print every name."""
    from auroraplan.pdffonts import check_coverage, itinerary_texts, pdf_fonts, workspace_font

    fonts = pdf_fonts(*workspace_font(ws))
    check_coverage(fonts, itinerary_texts(ws, trips))
    return fonts


def _render_all(ws, trips, paper, args, fonts=None):
    """One PDF per trip, all from the plan of record over every booked stay, so that the
    itineraries agree with each other, with `week` and with the fleet."""
    from auroraplan.commands._common import open_record
    from auroraplan.record import bookings_plan
    from auroraplan.render.itinerary_pdf import itinerary_pdf

    with open_record(args, ws, create=True) as db:
        report = bookings_plan(ws, db)
    pdfs = {}
    for trip in trips:
        pdfs[trip.trip] = itinerary_pdf(report, trip.trip, paper=paper,
                                       operator_settings=ws.settings, fonts=fonts)
    return pdfs
