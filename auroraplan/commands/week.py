"""Rank nights and sites for every booked trip in a week, and plan the excursions.

Reads the workspace folder (operator.toml, sites.geojson, trips.csv,
activity.csv, clouds.csv) and prints, per trip, the best sites for each
night of its stay, then the plan that fits the fleet and the sites. The
stays of the trips in these nights are planned whole, around the plan of
record in the workspace database: confirmed outings stay where they are,
and the new proposal is saved and compared with the record (what moved,
was added or dropped, and why). Confirm outings with `auroraplan confirm`.
"""

from auroraplan import whatif
from auroraplan.commands._common import (
    add_record_options,
    add_weather_option,
    int_range,
    iso_date,
    output_file,
)


def add_week_arguments(parser):
    """The workspace and the nights to plan: shared by `week` and `publish`."""
    parser.add_argument("workspace", help="folder with operator.toml, sites.geojson, trips.csv ...")
    parser.add_argument("--start", type=iso_date, required=True,
                        help="first night, local date YYYY-MM-DD")
    parser.add_argument("--nights", type=int_range(1, 31), default=7,
                        help="number of nights (1 to 31, default 7)")


def add_arguments(parser):
    add_week_arguments(parser)
    add_weather_option(parser)
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    parser.add_argument("--no-record", action="store_true",
                        help="do not keep these chances in the workspace database "
                             "(they are kept by default, for `verify` and `calibrate`)")
    parser.add_argument("--csv", metavar="FILE", type=output_file, help="also write ranked nights × sites as CSV")
    parser.add_argument("--ics", metavar="FILE", type=output_file,
                        help="also write the planned outings as an iCalendar file")
    parser.add_argument("--png", metavar="FILE", type=output_file,
                        help="also write the chart of the chance per night and site (PNG)")
    add_record_options(parser, who=True)
    whatif.add_arguments(parser)


def run(args):
    import contextlib

    from auroraplan import record
    from auroraplan.archive import recorder
    from auroraplan.commands._common import open_record, print_json
    from auroraplan.commands._progress import working
    from auroraplan.outfiles import check_output_path
    from auroraplan.store import protected_inputs
    from auroraplan.weatherfiles import read_for_workspace
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace)
    ws.add_weather_files(args.weather)
    read_for_workspace(ws)  # a bad weather file stops the command before anything is written
    protected = protected_inputs(ws, args.database)
    outputs = {k: check_output_path(v, protected)
               for k, v in (("csv", args.csv), ("ics", args.ics), ("png", args.png)) if v}
    if "png" in outputs:
        from auroraplan.render.charts import check_workspace_names

        check_workspace_names(ws)  # before the plan is made and kept
    assumptions = whatif.from_args(args)
    ws, what_if = whatif.apply(ws, assumptions, *_evenings(ws, args.start, args.nights))
    with working(f"Planning {args.nights} nights for {len(ws.trips)} trips at {len(ws.sites)} sites",
                 quiet=args.json):
        # A what-if run reads the record but never creates or changes it.
        db = open_record(args, ws, create=not what_if)
        with db if db is not None else contextlib.nullcontext():
            result = record.propose_week(ws, args.start, args.nights, db, by=args.by,
                                         what_if=what_if, keep_chances=None if (
                                             args.no_record or what_if or db is None)
                                         else recorder(ws, "week", db=db))
    payloads = {}
    if "csv" in outputs:
        payloads["csv"] = week_csv(result).encode("utf-8")
    if "ics" in outputs:
        from auroraplan.render.calendar import plan_ics
        from auroraplan.runsheet import language

        payloads["ics"] = plan_ics(result, language(ws.settings))
    if "png" in outputs:
        from auroraplan.render.charts import week_heatmap_png

        payloads["png"] = week_heatmap_png(result["heatmap"])
    _write_all(outputs, payloads)
    if args.json:
        print_json({k: v for k, v in result.items() if k != "heatmap"})
    else:
        print_week(result)
        for path in outputs.values():
            print(f"wrote {path}")
    return 0


def _evenings(ws, start, nights):
    """First and last evening a week run may plan: the nights asked for and every stay."""
    import datetime as dt

    last = start + dt.timedelta(days=nights - 1)
    first = min([start] + [t.arrive for t in ws.trips])
    last = max([last] + [t.depart for t in ws.trips])
    return first, last


def _write_all(outputs, payloads):
    """Write the outputs as a set once all of them are made: all of them or none."""
    from auroraplan.outfiles import write_files

    write_files({path: payloads[key] for key, path in outputs.items()})


def week_csv(result) -> str:
    """Ranked nights × sites per trip as CSV (one row per trip, night and ranked site).

    A trip id or site name that a spreadsheet would read as a formula (starting with
    ``=``, ``+``, ``-``, ``@``, a tab or a line break) is written with a leading single
    quote (``auroraplan.escape.spreadsheet_text``).
    """
    from auroraplan.escape import spreadsheet_text

    planned = {(p["trip"], p["date"], p["site"]) for p in result["plan"]}
    rows = [[trip["trip"], night["date"], rank, item["site"], item["chance"], night["kind"],
             int(night["blocked"]), int((trip["trip"], night["date"], item["site"]) in planned)]
            for trip in result["trips"] for night in trip["nights"]
            for rank, item in enumerate(night["ranked"], start=1)]
    return spreadsheet_text(["trip", "date", "rank", "site", "chance", "kind", "blocked",
                             "planned"], rows)


def print_week(result):
    """Readable terminal tables: per trip nights × best sites, then the plan."""
    from auroraplan.commands._common import console
    from auroraplan.commands._common import table as new_table
    from auroraplan.commands._text import (
        chance_cell,
        clock,
        kind_mark,
        outing_words,
        print_notes,
        short_date,
        span,
    )
    from auroraplan.escape import markup as m

    out = console()
    out.print(f"[bold]{m(result['operator'])}[/] · base {m(result['base']['name'])} · "
              f"nights from {result['start']} ({result['nights']}) · "
              f"{outing_words(result.get('outing_hours'))}times in {result['base']['timezone']}")
    if not print_notes(out, result):
        return
    planned = {(p["trip"], p["date"]): p for p in result["plan"]}
    away = [t["trip"] for t in result["trips"] if not t["nights"]]
    for trip in (t for t in result["trips"] if t["nights"]):
        table = new_table(title=f"{m(trip['trip'])} · {m(trip['group'])} · {trip['guests']} guests · "
                            f"{trip['outings']} outings wanted")
        table.add_column("night", no_wrap=True)
        table.add_column("best site")
        table.add_column("chance", justify="right", no_wrap=True)
        table.add_column("window", no_wrap=True)
        table.add_column("limited by")
        table.add_column("plan")
        for night in trip["nights"]:
            p = planned.get((trip["trip"], night["date"]))
            table.add_row(
                short_date(night["date"]) + kind_mark(night["kind"]),
                m(night["site"] or "—"),
                chance_cell(night["chance"]),
                span(night['window_start'], night['window_end'])
                if night["window_start"] else "—",
                night["limiting"] or "—",
                "blocked" if night["blocked"] else (f"→ {m(p['site'])}" if p else ""),
            )
        out.print(table)
    if away:
        out.print(f"[dim]No nights of their stay in these dates: {m(', '.join(away))}[/]")
    plan = new_table(title="Excursion plan")
    for col in ("night", "trip", "site", "chance", "pick-up", "return", "backup"):
        plan.add_column(col, no_wrap=col in ("night", "chance", "pick-up", "return"))
    plan.add_column("state", no_wrap=True)
    for p in sorted(result["plan"], key=lambda p: (p["date"], p["trip"])):
        plan.add_row(short_date(p["date"]) + kind_mark(p["kind"]), m(p["trip"]), m(p["site"]),
                     chance_cell(p["chance"]), clock(p["pickup"]),
                     clock(p["return"]) + (" late" if p.get("back_after_hours") else ""),
                     m(p["backup"] or "—"), p.get("state") or "proposed")
    out.print(plan if result["plan"] else "[bold]No outings planned[/] for these dates.")
    if result.get("solver"):
        out.print(solver_line(result["solver"]))
    out.print("[dim]* outlook: beyond the Kp forecast, from climatology. "
              "Chances are forecasts, not promises.[/]")
    print_record(out, result)
    for w in result.get("warnings", []):
        label = ("[bold yellow]late:[/]" if w.get("reason") == "back after hours"
                 else "[bold yellow]short:[/]" if w.get("trip") else "[yellow]note:[/]")
        out.print(f"{label} {m(w['message'])}")


def print_record(out, result):
    """The what-ifs in force, the changes against the plan of record, and where it is kept."""
    from auroraplan.commands._text import short_date
    from auroraplan.escape import markup as m

    changes = result.get("changes", [])
    if changes:
        out.print("[bold]Changes against the plan of record[/]")
    first = [c["trip"] for c in changes if c["reasons"] == ["first plan for this trip"]]
    if first:
        out.print(f"  first plan for {m(', '.join(dict.fromkeys(first)))}")
    for c in (c for c in changes if c["trip"] not in first):
        old = f"{short_date(c['from_night'])} {c['from_site']}" if c["from_night"] else ""
        new = f"{short_date(c['to_night'])} {c['to_site']}" if c["to_night"] else ""
        what = {"moved": f"{old} → {new}", "added": new, "dropped": old}[c["change"]]
        out.print(m(f"  {c['trip']} {c['change']}: {what} ({'; '.join(c['reasons'])})"))
    rec = result.get("record") or {}
    if rec.get("saved"):
        out.print(f"[dim]Saved as proposal {rec['plan_id']} in {m(rec['database'])}; confirm "
                  "outings with: auroraplan confirm WORKSPACE [--trip ID] [--night DATE][/]")


def solver_line(solver) -> str:
    """One line on how good the plan is: its total, the bound, the gap, a time limit hit."""
    gap = solver["gap"] or 0.0
    text = (f"[dim]plan total {solver['expected_sightings']:.2f} expected sightings; "
            f"net of driving {solver['objective']:.2f}, at most {solver['bound']:.2f} possible "
            f"(gap {gap * 100:.1f} %)[/]")
    if solver["time_limit_hit"]:
        text += ("\n[yellow]note:[/] the planner's time limit was reached; this is the best "
                 "plan found so far ([planner] time_limit_s)")
    return text
