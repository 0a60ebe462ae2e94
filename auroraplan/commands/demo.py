"""Run the main job on the bundled demo workspace and write every output to one folder.

The week plan, tonight's phone page for the storm night, one PDF itinerary
per trip, the calendar of outings, the charts, and an index page that links
them. All data in the demo workspace is invented.
"""

import datetime as dt
from pathlib import Path

DEMO_WEEK_START = dt.date(2027, 1, 11)
DEMO_TONIGHT = dt.date(2027, 1, 12)


def demo_workspace() -> Path:
    """The demo workspace folder shipped beside the package in a checkout."""
    return Path(__file__).resolve().parents[2] / "demo_sites"


def add_arguments(parser):
    parser.add_argument("--out", default="demo_out", help="output folder (default demo_out)")
    parser.add_argument("--workspace", default=None,
                        help="workspace to use instead of the bundled demo_sites/")


def run(args):
    from auroraplan.commands._progress import progress_bar
    from auroraplan.errors import InputError
    from auroraplan.workspace import load_workspace

    ws_path = Path(args.workspace) if args.workspace else demo_workspace()
    if not ws_path.is_dir():
        raise InputError(f"{ws_path}: demo workspace not found; pass --workspace FOLDER")
    ws = load_workspace(ws_path)
    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: is a file; give a folder")
    if out.resolve() == ws_path.resolve():
        raise InputError(f"--out {out}: is the workspace itself; choose another folder")
    out.mkdir(parents=True, exist_ok=True)
    steps = build_steps(ws, out)
    made = []
    with progress_bar(len(steps), "Demo outputs") as bar:
        for step in steps:
            made.extend(step())
            bar.advance()
    # People first: the phone page, itineraries and charts; the data files last.
    order = {".html": 0, ".pdf": 1, ".png": 2, ".ics": 3, ".csv": 4, ".json": 5}
    made.sort(key=lambda e: order.get(Path(e["href"]).suffix, 9))
    _write_index(ws, out, made)
    print(f"Demo outputs for {ws.operator.name} (invented scenario) written to {out.resolve()}/")
    for entry in made:
        print(f"  {entry['href']:<32} {entry['title']}")
    print(f"Open {out.resolve() / 'index.html'} in a browser.")
    return 0


def build_steps(ws, out: Path):
    """The demo's outputs as a list of functions, each returning index entries.

    The demo's plan of record is kept in ``OUT/auroraplan.sqlite``, not in the demo
    workspace, so the bundled folder stays as shipped.
    """
    from auroraplan import record, report, store
    from auroraplan.outfiles import write_bytes_atomic, write_text_atomic

    state = {}

    def week():
        from auroraplan.commands.week import week_csv
        from auroraplan.render.calendar import plan_ics
        from auroraplan.runsheet import language

        with store.open_store(out / store.DATABASE_NAME) as db:
            state["week"] = record.propose_week(ws, DEMO_WEEK_START, 7, db, command="demo")
            state["season_week"] = record.bookings_plan(ws, db, command="demo")
        write_text_atomic(out / "week.json", _json(state["week"]))
        write_text_atomic(out / "week.csv", week_csv(state["week"]))
        write_bytes_atomic(out / "excursions.ics", plan_ics(state["season_week"], language(ws.operator.settings)))
        return [
            {"title": "Week plan from 11 January (JSON)", "href": "week.json",
             "description": "ranked nights and sites per trip and the excursion plan"},
            {"title": "Week plan (CSV)", "href": "week.csv",
             "description": "one row per trip, night and ranked site"},
            {"title": "Calendar of all planned outings", "href": "excursions.ics",
             "description": "iCalendar file for the office calendar"},
        ]

    def tonight():
        from auroraplan import runsheet
        from auroraplan.commands.tonight import page_for
        from auroraplan.workspace import solar_wind_for

        state["tonight"] = report.tonight_report(ws, DEMO_TONIGHT, solar_wind=solar_wind_for(ws))
        write_text_atomic(out / "tonight.html", page_for(ws, state["tonight"]))
        entries = [{"title": f"Guide's phone page for the night of {DEMO_TONIGHT}",
                    "href": "tonight.html", "description": "works offline once saved on the phone"}]
        for outing in state["season_week"]["plan"]:
            if outing["date"] != DEMO_TONIGHT.isoformat():
                continue
            sheet = runsheet.run_sheet(state["tonight"], state["season_week"], outing["trip"],
                                       ws.operator.settings)
            name = run_sheet_file_name(outing["trip"], outing["date"])
            write_text_atomic(out / name, page_for(ws, state["tonight"], sheet))
            entries.append({"title": f"Run sheet {outing['trip']}: {outing['group']}",
                            "href": name,
                            "description": "pick-up, site, where to look, go / wait / swap"})
        return entries

    def itineraries():
        from auroraplan.render.itinerary_pdf import itinerary_pdf

        entries = []
        for trip in ws.trips:
            name = f"itinerary-{trip.trip}.pdf"
            write_bytes_atomic(out / name, itinerary_pdf(state["season_week"], trip.trip,
                                                                operator_settings=ws.operator.settings))
            entries.append({"title": f"Itinerary {trip.trip}: {trip.group}", "href": name,
                            "description": f"{trip.guests} guests, {trip.arrive} to {trip.depart}"})
        return entries

    def charts():
        from auroraplan.render import charts

        top = state["tonight"]["sites"][0]["name"]
        timeline = report.site_timeline(ws, DEMO_TONIGHT, top)
        write_bytes_atomic(out / "night-timeline.png", charts.night_timeline_png(timeline))
        write_bytes_atomic(out / "week-heatmap.png", charts.week_heatmap_png(state["week"]["heatmap"]))
        write_bytes_atomic(out / "oval-map.png", charts.oval_map_png(report.oval_map_data(ws, 6.0, DEMO_TONIGHT)))
        return [
            {"title": f"Night timeline at {top}, {DEMO_TONIGHT}", "href": "night-timeline.png",
             "description": "sun and moon, darkness, Kp needed against forecast Kp, cloud, chance"},
            {"title": "Week heatmap", "href": "week-heatmap.png",
             "description": "chance per night and site"},
            {"title": "Oval band around the base at Kp 6", "href": "oval-map.png",
             "description": "where the aurora band lies at local midnight, with the sites"},
        ]

    def season():
        from auroraplan.commands.season import season_chart_data
        from auroraplan.render.charts import season_calendar_png

        result = report.season_report(ws, dt.date(2026, 9, 1), dt.date(2027, 4, 15), 5)
        write_text_atomic(out / "season.json", _json(result))
        write_bytes_atomic(out / "season-calendar.png", season_calendar_png(season_chart_data(result)))
        return [{"title": "Season outlook, September to mid-April", "href": "season-calendar.png",
                 "description": "long-range chance per night from climatology (outlook)"},
                {"title": "Season outlook (JSON)", "href": "season.json",
                 "description": "chance per night and the best start dates for 5 nights"}]

    return [week, tonight, itineraries, charts, season]


def run_sheet_file_name(trip_id: str, date: str) -> str:
    """run-sheet-<date>-<trip>.html with only [A-Za-z0-9._-] from the trip id."""
    from auroraplan.commands.itinerary import itinerary_file_name

    safe = itinerary_file_name(trip_id)[len("itinerary-"):-len(".pdf")]
    return f"run-sheet-{date}-{safe}.html"


def _json(obj) -> str:
    import json

    from auroraplan.commands._common import _json_default

    return json.dumps(obj, indent=2, ensure_ascii=False, default=_json_default) + "\n"


def _write_index(ws, out, entries):
    from auroraplan.outfiles import write_text_atomic
    from auroraplan.render.index_page import index_html
    from auroraplan.report import made_at

    write_text_atomic(out / "index.html", index_html(
        f"{ws.operator.name}: demo outputs (invented scenario)",
        made_at(ws.operator.timezone), entries))
