"""Tonight's shortlist of viewing sites, ranked by the chance of seeing the aurora.

Each site gets its best window in local time, what limits it, where to look,
cloud, moon and drive time. With --html, the same shortlist as a
self-contained page for a guide's phone (works offline once saved); with
--trip as well, that page opens with the group's run sheet: pick-up, site,
backup, window, where to look, and whether to go, wait or swap to the backup.
"""

from auroraplan import whatif
from auroraplan.commands._common import (
    add_record_options,
    add_weather_option,
    int_range,
    iso_date,
    output_file,
    sky_report,
)


def add_arguments(parser):
    parser.add_argument("workspace", help="folder with operator.toml, sites.geojson ...")
    parser.add_argument("--date", type=iso_date,
                        help="the night's evening date, YYYY-MM-DD (default: tonight at the base)")
    parser.add_argument("--top", type=int_range(1, 1000), default=8,
                        help="how many sites to list (default 8)")
    parser.add_argument("--trip", metavar="ID",
                        help="the group's run sheet: its planned outing tonight first "
                             "(the trip's id in trips.csv)")
    add_weather_option(parser)
    parser.add_argument("--sky", metavar="SITE=PCT", action="append", default=[], type=sky_report,
                        help="cloud seen now at a site, percent (repeatable; SITE=PCT@HH:MM "
                             "for another local time tonight): the weather models that "
                             "match it count more at nearby sites for the next hours")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    parser.add_argument("--no-record", action="store_true",
                        help="do not keep these chances in the workspace database (they are "
                             "kept by default once it exists, for `verify` and `calibrate`)")
    parser.add_argument("--html", metavar="FILE", type=output_file, help="also write the phone page to FILE")
    parser.add_argument("--png", metavar="FILE", type=output_file,
                        help="also write the night timeline chart of the best site (or, with "
                             "--trip, of the group's site) to FILE")
    add_record_options(parser)
    parser.add_argument("--solarwind", metavar="FILE",
                        help="upstream solar-wind measurements (CSV) for the next hours "
                             "(default: the workspace's solarwind.csv when present)")
    whatif.add_arguments(parser, fleet=False)


def run(args):
    from auroraplan import report
    from auroraplan.archive import recorder
    from auroraplan.commands._common import open_record, print_json
    from auroraplan.commands._progress import working
    from auroraplan.nights import tonight
    from auroraplan.outfiles import check_output_path, write_files
    from auroraplan.store import protected_inputs
    from auroraplan.weatherfiles import read_for_workspace
    from auroraplan.workspace import load_workspace, solar_wind_for

    ws = load_workspace(args.workspace)
    ws.add_weather_files(args.weather)
    read_for_workspace(ws)  # a bad weather file stops the command before anything is written
    solar_wind = solar_wind_for(ws, args.solarwind)
    protected = (protected_inputs(ws, args.database)
                 + ([solar_wind.path] if solar_wind else []))
    outputs = {k: check_output_path(v, protected)
               for k, v in (("html", args.html), ("png", args.png)) if v}
    if "png" in outputs:
        from auroraplan.render.charts import check_workspace_names

        check_workspace_names(ws)  # before tonight's chances are made and kept
    date = args.date or tonight(ws.operator.timezone)
    assumed = whatif.from_args(args)
    ws, what_if = whatif.apply(ws, assumed, date, date)
    if solar_wind is not None and (assumed.kp is not None or assumed.kp_shift is not None):
        # An assumed Kp stands for every hour; measured solar wind would overrule it.
        solar_wind = None
        what_if = [*what_if, "solar-wind estimate set aside for the assumed Kp"]
    ws.sky_reports = sky_reports(ws, date, args.sky)
    sheet = None
    # A what-if run's chances rest on assumptions, not on the forecast: they are not kept.
    keep = None if args.no_record or what_if else recorder(
        ws, "tonight", open_db=lambda: open_record(args, ws, create=False))
    with working(f"Ranking {len(ws.sites)} sites for the night of {date}", quiet=args.json):
        if args.trip is not None:
            from auroraplan import runsheet

            runsheet.find_trip({"trips": [{"trip": t.trip} for t in ws.trips]}, args.trip)
            result = report.tonight_report(ws, date, solar_wind=solar_wind,
                                          keep_chances=keep)
            from auroraplan.commands._common import open_record

            db = open_record(args, ws, create=False)  # read only: never created here
            try:
                plan = report.bookings_report(ws, db=db)
            finally:
                if db is not None:
                    db.close()
            sheet = runsheet.run_sheet(result, plan, args.trip, ws.settings)
        else:
            result = report.tonight_report(ws, date, top=args.top, solar_wind=solar_wind,
                                          keep_chances=keep)
        if what_if:
            result = result.replace(what_if=tuple(what_if))
        payloads = {}
        if "html" in outputs:
            payloads["html"] = page_for(ws, result, sheet).encode("utf-8")
        if "png" in outputs:
            payloads["png"] = timeline_png(ws, result, date, sheet)
    write_files({path: payloads[key] for key, path in outputs.items()})  # all or none
    if args.json:
        print_json(dict(result.to_json(), run_sheet=sheet) if sheet else result)
    else:
        if sheet:
            print_run_sheet(sheet)
        print_tonight(result)
        for path in outputs.values():
            print(f"wrote {path}")
    return 0


def sky_reports(ws, date, given, now=None) -> list:
    """weather.SkyReport for each ``--sky``; a report without a clock time is for now, so
    it needs tonight's date."""
    import datetime as dt
    from zoneinfo import ZoneInfo

    import numpy as np

    from auroraplan.errors import InputError
    from auroraplan.nights import tonight
    from auroraplan.weather import SkyReport

    sites = {s.name: s for s in ws.sites}
    zone = ZoneInfo(ws.operator.timezone)
    now = now or dt.datetime.now(dt.UTC)
    reports, problems = [], []
    for name, pct, clock in given:
        if name not in sites:
            problems.append(f"--sky {name!r}: no site of that name in the sites file; known "
                            f"sites: {', '.join(sorted(sites)[:12])}")
            continue
        if clock is None:
            if date != tonight(ws.operator.timezone):
                problems.append(f"--sky {name!r}: a sky seen now is for tonight only; drop "
                                "--date, or give the local time as SITE=PCT@HH:MM")
                continue
            when = now
        else:
            hours, minutes = (int(p) for p in clock.split(":"))
            day = date if hours >= 12 else date + dt.timedelta(days=1)
            when = dt.datetime.combine(day, dt.time(hours, minutes), zone)
        utc = np.datetime64(when.astimezone(dt.UTC).replace(tzinfo=None), "s")
        site = sites[name]
        reports.append(SkyReport(site=name, cloud_pct=pct, time_utc=utc, lat=site.lat,
                                 lon=site.lon))
    if problems:
        raise InputError(problems)
    return reports


def page_for(ws, result, sheet=None) -> str:
    """The guide's phone page: the run sheet when there is one, else tonight's list."""
    from auroraplan.render.phone import phone_page_html, run_sheet_html
    from auroraplan.runsheet import language

    lang = language(ws.settings)
    return run_sheet_html(sheet, result, lang) if sheet else phone_page_html(result, lang)


def timeline_png(ws, result, date, sheet=None) -> bytes:
    """The night timeline chart of the group's site, or of tonight's best site."""
    from auroraplan import report
    from auroraplan.render.charts import night_timeline_png

    name = (sheet or {}).get("site_name") or (
        result["sites"][0]["name"] if result["sites"] else None)
    if name is None:
        from auroraplan.errors import InputError

        raise InputError("--png: no open site to draw tonight; open a site in the sites file")
    return night_timeline_png(report.site_timeline(ws, date, name))


def print_run_sheet(sheet):
    """The group's outing and tonight's call, above the site table."""
    from rich.markup import escape

    from auroraplan.commands._common import console
    from auroraplan.commands._text import clock, span
    from auroraplan.i18n import Words
    from auroraplan.runsheet import call_words, notice_sentences

    out = console()
    w = Words()
    out.print(escape(f"{sheet['trip']} · {sheet['group']} · {sheet['guests']} guests"),
              style="bold")
    verdict, reason = call_words(sheet, w)
    out.print(f"[bold]{escape(verdict)}[/] {escape(reason)}")
    if sheet["decision"] is not None:
        out.print(escape(f"pick-up {clock(sheet['pickup'])} at {sheet['pickup_place']['name']} · "
                         f"{sheet['site_name']} · backup {sheet['backup_name'] or '—'} · "
                         f"window {span(sheet['window_start'], sheet['window_end'])}"))
    for text in notice_sentences(sheet, w):
        out.print(f"[bold yellow]{escape(text)}[/]")


# Terminal layout. Site, chance and window are never dropped; the other columns go in
# DROP_ORDER when the terminal is too narrow, and when even the three do not fit (or
# below STACK_BELOW columns) each site becomes a short block of lines.
COLUMNS = ("#", "site", "chance", "window", "drive", "look", "limit", "cloud", "Kp")
DROP_ORDER = ("Kp", "#", "cloud", "limit", "drive", "look")
STACK_BELOW = 60


def _cells(s) -> dict:
    from auroraplan.commands._text import chance_cell, span
    from auroraplan.escape import markup

    look = "—"
    if s.get("overhead"):
        look = "overhead, whole sky"
    elif s["look_azimuth"] is not None:
        look = f"{s['look_compass']} {s['look_azimuth']:.0f}°"
        if s.get("look_elevation") is not None:
            look += f", {s['look_elevation']:.0f}° up"
    return {
        "#": str(s["rank"]), "site": markup(s["name"]), "chance": chance_cell(s["chance"]),
        "window": span(s["window_start"], s["window_end"]) if s["window_start"] else "—",
        "drive": f"{s['drive_min']:.0f}′", "look": look, "limit": s["limiting"] or "—",
        "cloud": cloud_cell(s),
        "Kp": f"{s['kp_needed']:.1f}" if s["kp_needed"] is not None else "> 9",
    }


def cloud_cell(site) -> str:
    """The cloud figure, with the weather models' range when there are two or more."""
    if site["cloud_pct"] is None:
        return "clim."
    values = list((site.get("cloud_models") or {}).values())
    span = f" ({min(values):.0f}–{max(values):.0f})" if len(values) > 1 else ""
    return f"{site['cloud_pct']:.0f}%{span}"


def _table(columns, rows):
    from auroraplan.commands._common import table as new_table

    table = new_table()
    right = {"#", "chance", "drive", "cloud", "Kp"}
    for col in columns:
        table.add_column(col, justify="right" if col in right else "left", no_wrap=True)
    for r in rows:
        table.add_row(*(r[c] for c in columns))
    return table


def fitting_columns(out, rows: list[dict]) -> list[str] | None:
    """The columns of COLUMNS whose table fits the terminal unwrapped, or None to stack."""
    from rich.measure import Measurement

    if out.width < STACK_BELOW:
        return None
    wide = out.options.update(width=10_000, max_width=10_000)
    chosen, drop = list(COLUMNS), list(DROP_ORDER)
    while Measurement.get(out, wide, _table(chosen, rows)).maximum > out.width:
        if not drop:
            return None
        chosen.remove(drop.pop(0))
    return chosen


def print_tonight(result):
    """The shortlist as a terminal table, or one block per site on a narrow terminal."""
    from auroraplan.commands._common import console
    from auroraplan.commands._text import outing_words, print_notes, span
    from auroraplan.escape import markup as m

    out = console()
    dark = (f"dark {span(result['dark_start'], result['dark_end'])}"
            if result["dark_start"] else "no darkness")
    out.print(f"[bold]Night of {result['date']}[/] · {m(result['base']['name'])} · {dark} "
              f"({result['darkness_level']}) · moon {100 * result['moon_illumination']:.0f}% lit · "
              f"{outing_words(result.get('outing_hours'))}times in {result['base']['timezone']}")
    if not print_notes(out, result):
        return
    print_nowcast(out, result.get("nowcast"))
    rows = [_cells(s) for s in result["sites"]]
    columns = fitting_columns(out, rows)
    if columns is None:
        for r in rows:
            out.print(f"{r['#']}. [bold]{r['site']}[/]")
            out.print(f"   {r['chance']} · {r['window']}")
            out.print(f"   look {r['look']} · drive {r['drive']}")
            out.print(f"   cloud {r['cloud']} · limit {r['limit']} · Kp {r['Kp']}")
    else:
        out.print(_table(columns, rows))
    out.print(f"[dim]{result['notice']}[/]")
    for w in result.get("warnings", []):
        out.print(f"[yellow]note:[/] {m(w)}")


def print_nowcast(out, nowcast):
    """The solar-wind line under a heading: what it says, until when, what to expect."""
    if not nowcast:
        return
    from rich.markup import escape

    out.print(f"[bold]{escape(nowcast['note'])}[/]", soft_wrap=True)
    if nowcast.get("expect"):
        out.print(escape(nowcast["expect"]), soft_wrap=True)
    for line in nowcast.get("left_out", [])[:3]:
        out.print(f"[dim]{escape(line)}[/]", soft_wrap=True)
    if len(nowcast.get("left_out", [])) > 3:
        out.print(f"[dim]... and {len(nowcast['left_out']) - 3} more rows not used[/]")
