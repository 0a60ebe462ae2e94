"""Option types and output helpers shared by the sub-commands (light imports only)."""

import argparse
import datetime as dt
import json
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


def print_json(obj) -> None:
    """Print a result as JSON on standard output."""
    json.dump(obj, sys.stdout, indent=2, ensure_ascii=False, default=_json_default)
    sys.stdout.write("\n")


def _json_default(value):
    if isinstance(value, dt.datetime | dt.date):
        return value.isoformat()
    if hasattr(value, "item"):  # numpy scalars
        return value.item()
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
