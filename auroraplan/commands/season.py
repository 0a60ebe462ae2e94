"""Long-range chance per night for a season, and the best start dates for a trip.

Beyond any Kp forecast: darkness and moon from the ephemeris, the Kp
climatology of the month and the solar-cycle phase, and each site's
clear-sky climatology. Every night is an outlook, never a forecast.
"""

from auroraplan.commands._common import int_range, iso_date, output_file

MAX_SEASON_DAYS = 731


def add_arguments(parser):
    parser.add_argument("workspace", help="folder with operator.toml and sites.geojson")
    parser.add_argument("--from", dest="first", type=iso_date, required=True,
                        help="first night, YYYY-MM-DD")
    parser.add_argument("--to", dest="last", type=iso_date, required=True,
                        help="last night, YYYY-MM-DD (at most 2 years after --from)")
    parser.add_argument("--trip-nights", type=int_range(1, 30), default=5,
                        help="length of the trip to find the best start dates for (default 5)")
    parser.add_argument("--png", metavar="FILE", type=output_file,
                        help="also write the season chart (PNG): a strip per month, a column per night with its dark hours, chance and the moon")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def run(args):
    from auroraplan import report
    from auroraplan.commands._common import print_json
    from auroraplan.commands._progress import progress_bar
    from auroraplan.errors import InputError
    from auroraplan.outfiles import check_output_path, write_bytes_atomic
    from auroraplan.store import protected_inputs
    from auroraplan.workspace import load_workspace

    if args.last < args.first:
        raise InputError(f"--to {args.last} is before --from {args.first}; give --to on or after --from")
    nights = (args.last - args.first).days + 1
    if nights > MAX_SEASON_DAYS:
        raise InputError(f"--from {args.first} to --to {args.last} spans {nights} nights; "
                         f"the most is {MAX_SEASON_DAYS} (2 years)")
    if args.trip_nights > nights:
        raise InputError(f"--trip-nights {args.trip_nights} is longer than the range ({nights} nights)")
    ws = load_workspace(args.workspace, forecasts=False)
    png = check_output_path(args.png, protected_inputs(ws)) if args.png else None
    if png:
        from auroraplan.render.charts import check_workspace_names

        check_workspace_names(ws)  # before the long computation
    with progress_bar(nights, "Season outlook (nights)", quiet=args.json) as bar:
        result = report.season_report(ws, args.first, args.last, args.trip_nights, progress=bar)
    if png:
        from auroraplan.render.charts import season_calendar_png

        write_bytes_atomic(png, season_calendar_png(report.season_chart(result)))
    if args.json:
        print_json(result)
    else:
        print_season(result)
        if png:
            print(f"wrote {png}")
    return 0


def print_season(result):
    from auroraplan.commands._common import console
    from auroraplan.commands._common import table as new_table
    from auroraplan.commands._text import chance_cell, print_notes
    from auroraplan.escape import markup as m

    out = console()
    out.print(f"[bold]Season outlook[/] · {m(result['base']['name'])} · "
              f"{result['from']} to {result['to']}")
    if not print_notes(out, result):
        return
    out.print(f"[dim]{result['method']}[/]")
    # One line per week: the mean of its nights, so a season fits a screen.
    weeks = new_table(title="Week by week (mean over nights)")
    for col in ("week from", "dark h", "chance, best site", "chance, base", "moon lit"):
        weeks.add_column(col, justify="right" if col != "week from" else "left")
    nights = result["nights"]
    for i in range(0, len(nights), 7):
        chunk = nights[i:i + 7]
        mean = lambda key, c=chunk: sum(n[key] or 0 for n in c) / len(c)  # noqa: E731
        weeks.add_row(chunk[0]["date"], f"{mean('dark_hours'):.1f}", chance_cell(mean("chance")),
                      chance_cell(mean("chance_base"), plain=True),
                      f"{100 * mean('moon_illumination'):.0f}%")
    out.print(weeks)
    best = new_table(title=f"Best start dates for {result['trip_nights']} nights")
    for col in ("start", "leave", "P(at least one night)", "expected nights"):
        best.add_column(col)
    for b in result["best_starts"]:
        best.add_row(b["start"], b["end"], chance_cell(b["chance_any"]), f"{b['expected_nights']:.1f}")
    if result.get("best_starts_note"):
        out.print(f"[bold]{result['best_starts_note']}[/]", soft_wrap=True)
    else:
        out.print(best)
    out.print(f"[dim]{result['notice']}[/]")
