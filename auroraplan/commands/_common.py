"""Option types and output helpers shared by the sub-commands (light imports only)."""

import argparse
import datetime as dt
import json
import math
import sys

FIRST_DATE = dt.date(1900, 1, 1)
LAST_DATE = dt.date(2052, 12, 31)
"""Dates the commands can compute: auroraplan.sky.FIRST_NIGHT to LAST_NIGHT, the span of the
JPL DE421 ephemeris with a margin (repeated here so that option parsing stays light)."""

SHOWN_CHARS = 40
"""Longest piece of a bad option value quoted back in an error line."""


def quoted(text) -> str:
    """``repr`` of an option value for an error line, cut to SHOWN_CHARS characters."""
    shown = repr(text)
    return shown if len(shown) <= SHOWN_CHARS else shown[: SHOWN_CHARS - 3] + "..."


def number_range(low: float, high: float, what: str):
    """An option type for a decimal number from ``low`` to ``high``; ``what`` names it in errors."""

    def parse(text: str) -> float:
        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"{quoted(text)} is not a number; give {what} from {low:g} to {high:g}") from None
        if not low <= value <= high:  # also false for nan; 1e400 reads as inf
            raise argparse.ArgumentTypeError(
                f"{quoted(text)} is outside {low:g} to {high:g}; give {what} from {low:g} to {high:g}")
        return value

    return parse


latitude = number_range(-90.0, 90.0, "a latitude in degrees")
longitude = number_range(-180.0, 180.0, "a longitude in degrees (east positive)")


def iso_date(text: str) -> dt.date:
    """A calendar date as YYYY-MM-DD, from FIRST_DATE to LAST_DATE."""
    try:
        value = dt.date.fromisoformat(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{quoted(text)} is not a date; give YYYY-MM-DD, for example 2027-01-12"
        ) from None
    if not FIRST_DATE <= value <= LAST_DATE:
        raise argparse.ArgumentTypeError(
            f"{value} is outside the span of the JPL DE421 ephemeris the sky is computed from; "
            f"give a date from {FIRST_DATE} to {LAST_DATE}"
        )
    return value


def utc_time(text: str) -> dt.datetime:
    """An ISO 8601 time read by auroraplan.checks.parse_utc; without a zone it is UTC."""
    from auroraplan.checks import parse_utc

    try:
        return parse_utc(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def int_range(low: int, high: int):
    """An option type for a whole number from ``low`` to ``high``."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"{quoted(text)} is not a whole number; give {low} to {high}") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"{quoted(text)} is outside {low} to {high}")
        return value

    return parse


def time_zone(text: str) -> str:
    """An IANA time-zone name such as Europe/Oslo."""
    import zoneinfo

    try:
        zoneinfo.ZoneInfo(text)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
        # OSError: a folder of the zone database ("Europe") or a name too long for a path
        raise argparse.ArgumentTypeError(
            f"{quoted(text)} is not a known IANA time zone; give a name such as Europe/Oslo"
        ) from None
    return text


def sky_report(text: str) -> tuple:
    """``--sky SITE=PCT`` or ``SITE=PCT@HH:MM``: (site name, cloud percent, "HH:MM" or None)."""
    allowed = "give SITE=PCT, e.g. 'Delta Flats=30', or SITE=PCT@HH:MM for a local time"
    name, sep, rest = text.rpartition("=")
    if not sep or not name.strip():
        raise argparse.ArgumentTypeError(f"{quoted(text)} is not SITE=PCT; {allowed}")
    value, _, clock = rest.partition("@")
    pct = number_range(0.0, 100.0, "cloud cover in percent")(value.strip().rstrip("%").strip())
    if clock:
        try:
            hours, minutes = (int(p) for p in clock.strip().split(":"))
            if not (0 <= hours < 24 and 0 <= minutes < 60):
                raise ValueError
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"{quoted(text)}: {quoted(clock)} is not a clock time; {allowed}") from None
        clock = f"{hours:02d}:{minutes:02d}"
    return name.strip(), pct, clock or None


def add_weather_option(parser) -> None:
    """The repeatable ``--weather FILE`` option of the commands that read cloud."""
    parser.add_argument("--weather", metavar="FILE", action="append", default=[],
                        help="also read this GRIB or NetCDF weather-model file (repeatable); "
                             "files in WORKSPACE/weather/ are always read")


class OutputFile(str):
    """An option value naming a file this command writes (checked by the CLI before the work)."""


class OutputFolder(str):
    """An option value naming a folder this command writes files into."""


def output_file(text: str) -> OutputFile:
    """An option type for an output file: not empty (see auroraplan.outfiles for the rest)."""
    if not text.strip():
        raise argparse.ArgumentTypeError("is empty; give the path of the file to write")
    return OutputFile(text)


def output_folder(text: str) -> OutputFolder:
    """An option type for an output folder: not empty."""
    if not text.strip():
        raise argparse.ArgumentTypeError("is empty; give the folder to write into")
    return OutputFolder(text)


def print_json(obj) -> None:
    """Print a result as strict JSON (RFC 8259) on standard output.

    Non-finite numbers (NaN, infinity), which JSON cannot hold, are written as null.
    Where standard output cannot encode every character (PYTHONIOENCODING=ascii), text
    is written with \\u escapes, which is the same JSON.
    """
    sys.stdout.write(json_text(obj, ascii_only=not _can_encode(sys.stdout, "\u00e9\u2014\u0416")))


def present(result, as_json: bool, printer) -> int:
    """Show a result: strict JSON with ``--json``, else ``printer(result)`` for the
    terminal; the command's exit code (0)."""
    if as_json:
        print_json(result)
    else:
        printer(result)
    return 0


def json_text(obj, ascii_only: bool = False) -> str:
    """``obj`` as strict JSON text with a final line break (see :func:`print_json`)."""
    return json.dumps(_finite(obj), indent=2, ensure_ascii=ascii_only, allow_nan=False,
                      default=_json_default) + "\n"


def _finite(value):
    """``value`` with every non-finite float (and numpy float) replaced by None."""
    from auroraplan.plans import Record

    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, Record):
        return _finite(value.to_json())
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_finite(v) for v in value]
    if hasattr(value, "item") and hasattr(value, "dtype"):  # numpy scalars and 0-d arrays
        return _finite(value.item()) if getattr(value, "ndim", 0) == 0 else _finite(value.tolist())
    return value


def _can_encode(stream, sample: str) -> bool:
    try:
        sample.encode(getattr(stream, "encoding", None) or "utf-8")
    except (UnicodeEncodeError, LookupError):
        return False
    return True


def _json_default(value):
    if isinstance(value, dt.datetime | dt.date):
        return value.isoformat()
    if hasattr(value, "item"):  # numpy scalars
        return _finite(value.item())
    raise TypeError(f"cannot write {type(value).__name__} as JSON")


def table(**kwargs):
    """A compact rich table in the project's terminal style (fits 80 columns)."""
    from rich import box
    from rich.table import Table

    kwargs.setdefault("title_justify", "left")
    return Table(box=box.SIMPLE_HEAD, pad_edge=False, **kwargs)


def console():
    """A rich console for tables; honours NO_COLOR and plain pipes."""
    from rich.console import Console

    return Console(highlight=False)


def add_record_options(parser, who: bool = False) -> None:
    """``--database FILE`` (the plan of record; default WORKSPACE/auroraplan.sqlite) and,
    for commands that change the record, ``--by NAME``."""
    parser.add_argument("--database", metavar="FILE",
                        help="the workspace database holding the plan of record "
                             "(default: auroraplan.sqlite in the workspace folder)")
    if who:
        parser.add_argument("--by", metavar="NAME",
                            help="who makes this change, kept in the record "
                                 "(default: your login name)")


def open_record(args, ws, create: bool):
    """The workspace database named by ``--database`` (or the workspace's own), or None
    when it does not exist and ``create`` is false."""
    from pathlib import Path

    from auroraplan import store

    path = Path(args.database).expanduser() if getattr(args, "database", None) \
        else store.database_path(ws.path)
    return store.open_store(path, create=create)
