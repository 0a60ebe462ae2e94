"""Tonight's shortlist of viewing sites, ranked by the chance of seeing the aurora.

Each site gets its best window in local time, what limits it, where to look,
cloud, moon and drive time. With --html, the same shortlist as a
self-contained page for a guide's phone (works offline once saved).
"""

from auroraplan.commands._common import int_range, iso_date


def add_arguments(parser):
    parser.add_argument("workspace", help="folder with operator.toml, sites.geojson ...")
    parser.add_argument("--date", type=iso_date,
                        help="the night's evening date, YYYY-MM-DD (default: tonight at the base)")
    parser.add_argument("--top", type=int_range(1, 1000), default=8,
                        help="how many sites to list (default 8)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    parser.add_argument("--html", metavar="FILE", help="also write the phone page to FILE")


def tonight_date(tz: str):
    """The evening date of the night in progress or coming at the base: before local noon,
    the night that began yesterday evening."""
    import datetime as dt
    from zoneinfo import ZoneInfo

    now = dt.datetime.now(ZoneInfo(tz))
    return now.date() - dt.timedelta(days=1) if now.hour < 12 else now.date()


def run(args):
    from auroraplan import report
    from auroraplan.commands._common import print_json
    from auroraplan.commands._progress import working
    from auroraplan.outfiles import check_output_path, write_text_atomic
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace)
    html_path = check_output_path(args.html, list(ws.files.values())) if args.html else None
    date = args.date or tonight_date(ws.operator.timezone)
    with working(f"Ranking {len(ws.sites)} sites for the night of {date}", quiet=args.json):
        result = report.tonight_report(ws, date, top=args.top)
    if html_path:
        from auroraplan.render.phone import phone_page_html

        write_text_atomic(html_path, phone_page_html(result))
    if args.json:
        print_json(result)
    else:
        print_tonight(result)
        if html_path:
            print(f"wrote {html_path}")
    return 0


def print_tonight(result):
    """The shortlist as a terminal table."""
    from auroraplan.commands._common import console
    from auroraplan.commands._common import table as new_table
    from auroraplan.commands._text import chance_cell, print_notes, span

    out = console()
    dark = (f"dark {span(result['dark_start'], result['dark_end'])}"
            if result["dark_start"] else "no darkness")
    out.print(f"[bold]Night of {result['date']}[/] · {result['base']['name']} · {dark} "
              f"({result['darkness_level']}) · moon {100 * result['moon_illumination']:.0f}% lit · "
              f"times in {result['base']['timezone']}")
    if not print_notes(out, result):
        return
    table = new_table()
    for col, justify in (("#", "right"), ("site", "left"), ("chance", "right"), ("window", "left"),
                         ("drive", "right"), ("look", "left"), ("limit", "left"),
                         ("cloud", "right"), ("Kp", "right")):
        table.add_column(col, justify=justify, no_wrap=col != "site",
                         min_width=14 if col == "site" else None)
    for s in result["sites"]:
        look = (f"{s['look_compass']} {s['look_azimuth']:.0f}°" if s["look_azimuth"] is not None
                else "—")
        table.add_row(
            str(s["rank"]), s["name"], chance_cell(s["chance"]),
            span(s['window_start'], s['window_end']) if s["window_start"] else "—",
            f"{s['drive_min']:.0f}′", look, s["limiting"] or "—",
            f"{s['cloud_pct']:.0f}%" if s["cloud_pct"] is not None else "clim.",
            f"{s['kp_needed']:.1f}" if s["kp_needed"] is not None else "> 9",
        )
    out.print(table)
    out.print(f"[dim]{result['notice']}[/]")
    for w in result.get("warnings", []):
        out.print(f"[yellow]note:[/] {w}")
