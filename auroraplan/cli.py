"""The auroraplan command line: one sub-command per job, heavy imports only when used."""

import argparse
import importlib
import os
import signal
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


INPUT_OPTIONS = ("database", "weather", "logbook", "history", "solarwind")
"""Options naming a file the command reads or keeps, refused as an output even before it
exists (every other option naming an existing path is protected when it exists)."""


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


class Terminated(KeyboardInterrupt):
    """SIGTERM, handled as Ctrl-C: the same clean-up, one line, exit code 143."""


def main(argv=None) -> int:
    """Run one command; return its exit code (0 done, 1 internal error, 2 bad input,
    130 Ctrl-C, 143 SIGTERM)."""
    from auroraplan import outfiles

    command = None
    outfiles.reset()
    _plain_streams()
    _matplotlib_config_dir()
    previous = _on_sigterm()
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        command = getattr(args, "command", None)
        if not command:
            parser.print_help()
            return 2
        return _run(args)
    except KeyboardInterrupt as exc:
        # Outputs are written whole to temporary files and renamed as a set (outfiles.py),
        # so an interrupted run leaves every output whole or untouched.
        done = outfiles.written
        what = (f"; written whole before that: {', '.join(str(p) for p in done)}; "
                "no other output was touched" if done else "; no output was written")
        how = "stopped (SIGTERM)" if isinstance(exc, Terminated) else "interrupted"
        sys.stderr.write(f"auroraplan{' ' + command if command else ''}: {how}{what}\n")
        return 143 if isinstance(exc, Terminated) else 130
    except BrokenPipeError:
        # The reader of our output went away (e.g. `| head`): stop quietly.
        _silence_stdout()
        return 0
    finally:
        _restore_sigterm(previous)


def _on_sigterm():
    def stop(signum, frame):
        raise Terminated()

    try:
        return signal.signal(signal.SIGTERM, stop)
    except ValueError:  # not the main thread: leave signals alone
        return None


def _restore_sigterm(previous) -> None:
    if previous is not None:
        signal.signal(signal.SIGTERM, previous)


def _run(args) -> int:
    try:
        check_paths(args)
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


def check_paths(args) -> None:
    """Before any work: every input a command names is registered as protected, and every
    output option is checked (not empty, not an input, not twice, a writable place).

    Output options are those whose type is ``_common.output_file`` or ``output_folder``;
    every other option naming an existing file or folder is an input (a workspace folder
    brings every file it reads, see ``outfiles.workspace_inputs``).
    """
    from auroraplan import outfiles
    from auroraplan.commands._common import OutputFile, OutputFolder

    files, folders = [], []
    for dest, value in _flat_options(vars(args)):
        if isinstance(value, OutputFile):
            files.append((_option(dest), value))
        elif isinstance(value, OutputFolder):
            folders.append((_option(dest), value))
        elif isinstance(value, str) and value and dest not in ("command",) and _exists(value):
            outfiles.protect(value)
        elif isinstance(value, str) and value and dest in INPUT_OPTIONS:
            outfiles.protect_missing(value)  # made by this run (a new database): still an input
    outfiles.check_distinct(files)
    for option, value in files:
        _with_option(option, value, outfiles.check_output_path)
    for option, value in folders:
        _with_option(option, value, outfiles.check_output_folder)


def _flat_options(options: dict):
    """(dest, value) pairs, a repeatable option's values one by one (``--weather A --weather B``)."""
    for dest, value in options.items():
        for item in value if isinstance(value, list) else [value]:
            yield dest, item


def _option(dest: str) -> str:
    return "--" + dest.replace("_", "-")


def _exists(value: str) -> bool:
    try:
        return os.path.lexists(os.path.expanduser(value))
    except (ValueError, OSError):
        return False


def _with_option(option, value, check) -> None:
    """Run a path check; name the option in its error line when the line does not."""
    try:
        check(value)
    except InputError as exc:
        raise InputError([p if p.startswith("--") else f"{option} {p}" for p in exc.problems]) from None


def _plain_streams() -> None:
    """Standard output and error that never fail on a character the terminal's encoding
    lacks (PYTHONIOENCODING=ascii, a C locale): such characters are written as their
    nearest plain letters (see auroraplan.plaintext)."""
    from auroraplan.plaintext import ERROR_HANDLER, register

    register()
    for stream in (sys.stdout, sys.stderr):
        try:
            if stream.errors == "strict":
                stream.reconfigure(errors=ERROR_HANDLER)
        except (AttributeError, ValueError, OSError):
            pass


def _matplotlib_config_dir() -> None:
    """Point matplotlib at a private, writable cache folder when the home folder's is not
    writable (a read-only HOME): otherwise it warns on every run that it made a temporary one."""
    if os.environ.get("MPLCONFIGDIR"):
        return
    home = os.path.expanduser("~")
    config = os.path.join(os.environ.get("XDG_CONFIG_HOME") or os.path.join(home, ".config"),
                          "matplotlib")
    try:
        os.makedirs(config, exist_ok=True)
        if os.access(config, os.W_OK):
            return
    except OSError:
        pass
    import tempfile

    private = os.path.join(tempfile.gettempdir(), f"auroraplan-matplotlib-{os.getuid()}")
    try:
        os.makedirs(private, mode=0o700, exist_ok=True)
    except OSError:
        return
    os.environ["MPLCONFIGDIR"] = private


def _silence_stdout() -> None:
    """Point stdout at /dev/null so that Python's flush at exit does not fail again."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


if __name__ == "__main__":
    sys.exit(main())
