"""Release outings of the plan of record (confirmed or proposed), so the next plan may move them.

Name what to release with --trip and/or --night, or give --everything. The
outings stay in the database's history, marked released, with who and when.
"""

from auroraplan.commands._common import add_record_options
from auroraplan.commands.confirm import add_selection_arguments


def add_arguments(parser):
    add_selection_arguments(parser, "release")
    parser.add_argument("--everything", action="store_true",
                        help="release every outing of the record (all trips, all nights)")
    parser.add_argument("--note", default="", help="a short note kept with the change")
    add_record_options(parser, who=True)
    parser.add_argument("--json", action="store_true", help="print the changed outings as JSON")


def run(args):
    from auroraplan.commands.confirm import change_state
    from auroraplan.errors import InputError

    if not (args.trip or args.night or args.everything):
        raise InputError("say what to release: --trip ID, --night YYYY-MM-DD, or --everything")
    if args.everything and (args.trip or args.night):
        raise InputError("--everything releases all outings; leave out --trip and --night, "
                         "or drop --everything")
    return change_state(args, "released", ("proposed", "confirmed"), "release")
