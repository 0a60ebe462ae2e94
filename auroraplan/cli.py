"""The auroraplan command line: one sub-command per job, heavy imports only when used."""

import argparse
import importlib
import sys

from auroraplan.errors import InputError

# name -> (module under auroraplan.commands, one-line help)
COMMANDS = {
    "demo": ("demo", "run the main job on the bundled demo workspace and write every output"),
    "sky": ("sky", "darkness windows and moonlight per night at one place"),
    "oval": ("oval", "auroral oval boundary latitudes by magnetic local time for a Kp"),
    "sites": ("sites", "each site's magnetic latitude and the Kp it needs"),
    "week": ("week", "ranked nights and sites per trip, and the excursion plan"),
    "confirm": ("confirm", "confirm proposed outings in the plan of record"),
    "release": ("release", "release outings of the plan of record so they may move"),
    "tonight": ("tonight", "tonight's shortlist of sites; the guide's phone page"),
    "nowcast": ("nowcast", "the next hours at every site from upstream solar-wind measurements"),
    "itinerary": ("itinerary", "printable PDF itinerary for a trip"),
    "publish": ("publish", "every output for your workspace and dates, with an index page"),
    "season": ("season", "long-range chance per night and the best trip start dates"),
    "arrival": ("arrival", "arrival window of a coronal mass ejection and the nights it touches"),
    "logbook": ("logbook", "add or import what the guides saw (aurora, cloud) per site and night"),
    "verify": ("verify", "how good the issued chances have been against the logbook"),
    "calibrate": ("calibrate", "fit the [chance] settings to the logbook; writes a suggestion to review"),
}


class OneLineParser(argparse.ArgumentParser):
    """An argument parser whose errors are one line and exit code 2."""

    def error(self, message):
        sys.stderr.write(f"{self.prog}: error: {message}\n")
        sys.exit(2)


def build_parser() -> argparse.ArgumentParser:
    parser = OneLineParser(
        prog="auroraplan",
        description="Plan aurora-viewing excursions: ranked nights and sites per trip.",
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks of internal errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=OneLineParser)
    for name, (module_name, help_text) in COMMANDS.items():
        module = importlib.import_module(f"auroraplan.commands.{module_name}")
        p = sub.add_parser(name, help=help_text, description=module.__doc__)
        p.add_argument("--debug", action="store_true", help="show tracebacks of internal errors")
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def main(argv=None) -> int:
    """Run one command; return its exit code (0 done, 1 internal error, 2 bad input, 130 Ctrl-C)."""
    command = None
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        command = getattr(args, "command", None)
        if not command:
            parser.print_help()
            return 2
        return _run(args)
    except KeyboardInterrupt:
        # Outputs are written to a temporary file and renamed (outfiles.py), so an
        # interrupted run leaves either the whole file or none of it.
        sys.stderr.write(f"auroraplan{' ' + command if command else ''}: interrupted; "
                         "no partly written file was left\n")
        return 130
    except BrokenPipeError:
        # The reader of our output went away (e.g. `| head`): stop quietly.
        _silence_stdout()
        return 0


def _run(args) -> int:
    try:
        return int(args._run(args) or 0)
    except InputError as exc:
        for problem in exc.problems:
            sys.stderr.write(f"auroraplan {args.command}: {problem}\n")
        return 2
    except (KeyboardInterrupt, BrokenPipeError):
        raise
    except Exception as exc:  # internal error: keep the traceback behind --debug
        if args.debug:
            raise
        sys.stderr.write(
            f"auroraplan {args.command}: internal error: {type(exc).__name__}: {exc} "
            "(run again with --debug for the traceback)\n"
        )
        return 1


def _silence_stdout() -> None:
    """Point stdout at /dev/null so that Python's flush at exit does not fail again."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


if __name__ == "__main__":
    sys.exit(main())
