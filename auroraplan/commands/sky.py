"""Darkness window and moonlight for each night at one place, in local time."""

import sys

from auroraplan.commands._common import (
    console,
    int_range,
    iso_date,
    latitude,
    longitude,
    print_json,
    time_zone,
)

MAX_NIGHTS = 366


def add_arguments(parser):
    from auroraplan.sky import DARKNESS_DEG

    parser.add_argument("--lat", type=latitude, required=True, help="latitude, degrees north")
    parser.add_argument("--lon", type=longitude, required=True, help="longitude, degrees east")
    parser.add_argument(
        "--date", type=iso_date, required=True, help="local date of the first evening, YYYY-MM-DD"
    )
    parser.add_argument(
        "--nights",
        type=int_range(1, MAX_NIGHTS),
        default=1,
        help=f"number of nights, 1 to {MAX_NIGHTS} (default 1)",
    )
    parser.add_argument(
        "--darkness",
        choices=tuple(DARKNESS_DEG),
        default="nautical",
        help="how far below the horizon the sun must be: "
        + ", ".join(f"{name} {deg:g}°" for name, deg in DARKNESS_DEG.items())
        + " (default nautical)",
    )
    parser.add_argument(
        "--tz",
        type=time_zone,
        help="IANA time zone for local times (default: looked up from the coordinates)",
    )
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def zone_for(lat: float, lon: float) -> tuple[str, str | None]:
    """The IANA zone at a point, looked up offline, and a note when it is only a sea zone.

    Over open sea there is no civil zone; timezonefinder then gives the nautical
    zone Etc/GMT±h. Where it gives nothing, the nautical zone is worked out from
    the longitude (15° per hour; the sign of Etc/GMT names is reversed by the
    tz database's POSIX convention).
    """
    from timezonefinder import TimezoneFinder

    zone = TimezoneFinder().timezone_at(lng=lon, lat=lat)
    if zone is None:
        hours = int(round(lon / 15.0))
        zone = "Etc/GMT" if hours == 0 else f"Etc/GMT{-hours:+d}"
    if zone.startswith("Etc/"):
        return zone, (
            f"no civil time zone at {lat:.4f}, {lon:.4f}; times are in {zone} "
            "(sea time by longitude); give --tz to choose another"
        )
    return zone, None


def run(args):
    from auroraplan.sky import DARKNESS_DEG, darkness_windows

    zone, note = (args.tz, None) if args.tz else zone_for(args.lat, args.lon)
    if note:
        sys.stderr.write(f"auroraplan sky: note: {note}\n")
    nights = darkness_windows(args.lat, args.lon, args.date, args.nights, zone, args.darkness)
    result = {
        "place": {"lat": args.lat, "lon": args.lon},
        "timezone": zone,
        "darkness": args.darkness,
        "sun_below_deg": DARKNESS_DEG[args.darkness],
        "nights": nights,
    }
    if args.json:
        print_json(result)
    else:
        _print_table(result)
    return 0


def _clock(iso: str | None) -> str:
    """'2027-01-10T16:07+01:00' -> '01-10 16:07'; a missing time shows as a dash."""
    return "–" if iso is None else f"{iso[5:10]} {iso[11:16]}"


def _print_table(result: dict) -> None:
    from rich.table import Table

    place = result["place"]
    table = Table(
        title=(
            f"Dark time at {place['lat']:.2f}°, {place['lon']:.2f}° "
            f"(sun below {result['sun_below_deg']:.0f}°, {result['darkness']}; "
            f"local time {result['timezone']})"
        ),
        title_justify="left",
    )
    for heading in ("evening of", "dark from", "dark until", "dark h"):
        table.add_column(heading, justify="right" if heading == "dark h" else "left")
    table.add_column("moon lit", justify="right")
    table.add_column("moon up h", justify="right")
    for night in result["nights"]:
        table.add_row(
            night["date"],
            _clock(night["dark_start"]),
            _clock(night["dark_end"]),
            f"{night['dark_hours']:.1f}",
            f"{100 * night['moon_illumination']:.0f} %",
            f"{night['moon_up_dark_hours']:.1f}",
        )
    out = console()
    out.print(table)
    if all(n["dark_hours"] == 0 for n in result["nights"]):
        out.print("The sun does not go that far below the horizon on these nights.")
