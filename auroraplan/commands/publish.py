"""Write every output for your own workspace and dates into one folder, with an index page.

The week plan (JSON, CSV), the calendar of outings, one run sheet per planned outing
(the guide's phone page for that group and night), tonight's page for each night, one
PDF itinerary per trip, the week heat map and the first night's timeline chart, and an
index page that links them. Plans as `week` does, around the plan of record in the
workspace database. Every file is made before any is written, so a failure leaves the
folder as it was.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

from auroraplan.commands._common import add_record_options, output_folder
from auroraplan.commands._outputs import (
    OutputSet,
    check_names,
    check_out_folder,
    run_sheet_file_name,
)

__all__ = ["OutputSet", "add_arguments", "check_names", "check_out_folder", "run",
           "run_sheet_file_name"]


def add_arguments(parser):
    from auroraplan.commands.week import add_week_arguments

    add_week_arguments(parser)
    parser.add_argument("--out", required=True, metavar="DIR", type=output_folder,
                        help="folder for the outputs (made if missing; not the workspace)")
    add_record_options(parser, who=True)
    parser.add_argument("--no-record", action="store_true",
                        help="do not keep the week's chances in the workspace database "
                             "(they are kept by default, for `verify` and `calibrate`)")


def run(args):
    from auroraplan.commands._common import open_record
    from auroraplan.commands._progress import progress_bar
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace)
    out = check_out_folder(Path(args.out), ws)
    fonts = check_names(ws)
    with open_record(args, ws, create=True) as db:
        from auroraplan.archive import recorder

        builder = OutputSet(ws, db, by=args.by,
                            keep=None if args.no_record else recorder(ws, "publish", db=db))
        builder.fonts = fonts
        steps = builder.steps(args.start, args.nights)
        with progress_bar(len(steps), "Making the outputs") as bar:
            for step in steps:
                step()
                bar.advance()
    first, last = args.start, args.start + dt.timedelta(days=args.nights - 1)
    builder.write(out, f"{ws.operator.name}: outputs for the nights {first} to {last}")
    builder.print_summary(out, f"Outputs for {ws.operator.name}")
    return 0
