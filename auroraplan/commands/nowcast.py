"""The next hours at every site, with Kp estimated from upstream solar-wind measurements.

Reads the workspace's solarwind.csv (or --solarwind FILE): field and plasma measured at
the L1 point, carried to the Earth by their own speed. Prints what the solar wind says,
until when it says it, whether activity is rising, and the chance in each of the next
hours at every open site with where to look.
"""

from auroraplan.commands._common import int_range, utc_time


def add_arguments(parser):
    parser.add_argument("workspace", help="folder with operator.toml, sites.geojson ...")
    parser.add_argument("--solarwind", metavar="FILE",
                        help="solar-wind measurements (CSV; default: the workspace's "
                             "solarwind.csv)")
    parser.add_argument("--at", metavar="TIME", type=utc_time,
                        help="count the hours from this time, ISO 8601 (UTC unless an "
                             "offset is given; default: now, or the file's last measurement "
                             "when the file is older than 3 hours)")
    parser.add_argument("--hours", type=int_range(1, 6), default=2,
                        help="how many hours ahead, 1 to 6 (default 2)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def run(args):
    from auroraplan import report
    from auroraplan.commands._common import present
    from auroraplan.errors import InputError
    from auroraplan.workspace import SOLARWIND_FILE, load_workspace, solar_wind_for

    ws = load_workspace(args.workspace)
    solar_wind = solar_wind_for(ws, args.solarwind)
    if solar_wind is None:
        raise InputError(f"{ws.path / SOLARWIND_FILE}: not found; give upstream measurements "
                         "in that file or with --solarwind FILE")
    result = report.nowcast_report(ws, solar_wind, hours=args.hours, at=args.at)
    return present(result, args.json, print_next_hours)


def print_next_hours(result):
    """The nowcast as a few lines and a table of sites."""
    from rich.markup import escape

    from auroraplan.commands._common import console
    from auroraplan.commands._common import table as new_table
    from auroraplan.commands._text import chance_cell, clock
    from auroraplan.commands.tonight import print_nowcast

    out = console()
    out.print(f"[bold]Next {len(result['hours'])} h from {clock(result['start'])}[/] · "
              f"{escape(result['base']['name'])} · times in {result['base']['timezone']}")
    print_nowcast(out, result["nowcast"])
    for note in result["notes"]:
        out.print(f"[yellow]note:[/] {escape(note)}", soft_wrap=True)
    kp_line = " · ".join(
        f"{clock(h['from'])} Kp {h['kp']:.1f} ± {h['kp_sd']:.1f} ({h['kp_from']})"
        if h["kp"] is not None else f"{clock(h['from'])} no Kp" for h in result["hours"])
    out.print(kp_line, soft_wrap=True)
    if result["closed_note"]:
        out.print(f"[bold]{escape(result['closed_note'])}[/]", soft_wrap=True)
        return
    table = new_table()
    table.add_column("site", no_wrap=False, min_width=12)
    for h in result["hours"]:
        table.add_column(f"{clock(h['from'])}–{clock(h['to'])}", justify="right")
    table.add_column("look")
    for s in result["sites"]:
        look = "overhead, whole sky" if s["overhead"] else (s["look_words"] or "—")
        cells = [chance_cell(c) if s["dark"] or c else "light" for c in s["chance_in_hour"]]
        table.add_row(escape(s["name"]), *cells, look)
    out.print(table)
    out.print(f"[dim]each hour: the {result['chance_terms']['chance_in_hour']}[/]")
    out.print(f"[dim]{escape(result['notice'])}[/]")
