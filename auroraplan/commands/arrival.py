"""Arrival window of a coronal mass ejection at Earth (drag-based model) and the nights it touches.

Give the time the CME front was at about 20 solar radii and its speed there. Arrival
times from this model are uncertain by many hours: published mean absolute errors are
14–17 h, beyond the window the parameter ranges span.
"""

from auroraplan.commands._common import console, print_json, time_zone, utc_time

REMINDER = (
    "Arrival times are uncertain by many hours: the drag-based model's published mean "
    "absolute error is about 14 h (Dumbović et al. 2018) to 17 h (Čalogović et al. 2021), "
    "and an arrival is no promise of aurora."
)


def add_arguments(parser):
    parser.add_argument(
        "--launch",
        required=True,
        type=utc_time,
        metavar="TIME",
        help="ISO 8601 time the CME front was at about 20 solar radii (UTC if no zone)",
    )
    parser.add_argument(
        "--speed", required=True, type=float, metavar="KM_S", help="CME speed there, km/s"
    )
    parser.add_argument(
        "--workspace", metavar="DIR", help="operator workspace: local nights and darkness at base"
    )
    parser.add_argument(
        "--tz", type=time_zone, metavar="ZONE", help="IANA zone for local nights (no workspace)"
    )
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def run(args) -> int:
    from auroraplan.arrival import arrival_window, check_speed, nights_touched

    check_speed(args.speed)
    base = _base(args.workspace) if args.workspace else None
    tz = base["timezone"] if base else (args.tz or "UTC")
    window = arrival_window(args.launch, args.speed)
    darkness = _darkness(base, window) if base else None
    report = {
        "launch": window["launch"],
        "speed_km_s": window["speed_km_s"],
        "arrival": window["arrival"],
        "earliest": window["earliest"],
        "latest": window["latest"],
        "transit_hours": window["transit_hours"],
        "earliest_hours": window["earliest_hours"],
        "latest_hours": window["latest_hours"],
        "impact_speed_km_s": window["impact_speed_km_s"],
        "model": window["model"],
        "timezone": tz,
        "nights": nights_touched(window["earliest"], window["latest"], tz, darkness),
        "note": REMINDER,
    }
    if base:
        report["base"] = base["name"]
    if args.json:
        print_json(report)
    else:
        _show(report)
    return 0


def _base(folder) -> dict:
    from auroraplan.workspace import load_workspace

    ws = load_workspace(folder, forecasts=False)
    operator = ws.operator
    return {
        "name": operator.base_name,
        "lat": operator.base_lat,
        "lon": operator.base_lon,
        "timezone": operator.timezone,
        "darkness": ws.settings.viewing.darkness,
    }


def _darkness(base, window):
    from auroraplan.nights import night_of
    from auroraplan.sky import darkness_windows

    first = night_of(window["earliest"], base["timezone"])
    last = night_of(window["latest"], base["timezone"])
    return darkness_windows(
        base["lat"], base["lon"], first, (last - first).days + 1, base["timezone"],
        level=base["darkness"],
    )


def _show(report) -> None:
    import zoneinfo

    from rich.table import Table

    from auroraplan.escape import markup

    zone = zoneinfo.ZoneInfo(report["timezone"])

    def local(t):
        return t.astimezone(zone).strftime("%a %Y-%m-%d %H:%M %Z")

    out = console()
    where = f" at {markup(report['base'])}" if "base" in report else ""
    out.print(
        f"CME at 20 solar radii {local(report['launch'])}, {report['speed_km_s']:g} km/s{where}"
    )
    out.print(f"  likely arrival  {local(report['arrival'])}  ({report['transit_hours']:.0f} h)")
    out.print(
        f"  window          {local(report['earliest'])} to {local(report['latest'])}"
        f"  ({report['earliest_hours']:.0f}–{report['latest_hours']:.0f} h)"
    )
    table = Table(title=f"Nights the window touches ({report['timezone']})")
    table.add_column("night of")
    table.add_column("window h", justify="right")
    with_dark = any("dark_overlap_hours" in n for n in report["nights"])
    if with_dark:
        table.add_column("dark")
        table.add_column("dark in window h", justify="right")
    for night in report["nights"]:
        row = [night["date"], f"{night['window_hours']:.1f}"]
        if with_dark:
            span = (
                f"{night['dark_start'][11:16]}–{night['dark_end'][11:16]}"
                if night["dark_start"]
                else "no darkness"
            )
            row += [span, f"{night['dark_overlap_hours']:.1f}"]
        table.add_row(*row)
    out.print(table)
    model = report["model"]
    out.print(
        f"Model: {model['citation']}; γ {model['gamma_per_km']:.1e} km⁻¹ "
        f"(range {model['gamma_range_per_km'][0]:.1e}–{model['gamma_range_per_km'][1]:.1e}), "
        f"w {model['wind_km_s']:g} km/s (range {model['wind_range_km_s'][0]:g}–"
        f"{model['wind_range_km_s'][1]:g})."
    )
    out.print(report["note"])
