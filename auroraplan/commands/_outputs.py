"""The output set shared by `publish` and `demo`: every file made in memory, then written
whole, with an index page that links them."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

# People first on the index page: pages, itineraries, charts; the data files last.
KIND_ORDER = {".html": 0, ".pdf": 1, ".png": 2, ".ics": 3, ".csv": 4, ".json": 5}


def check_out_folder(out: Path, ws) -> Path:
    """The output folder: not a file, not the workspace, not inside it."""
    from auroraplan.errors import InputError

    out = out.expanduser()
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: is a file; give a folder")
    resolved, home = out.resolve(), Path(ws.path).resolve()
    if resolved == home or home in resolved.parents:
        raise InputError(f"--out {out}: is the workspace or inside it; choose a folder outside "
                         "it so that your input files are never mixed with outputs")
    return out


def run_sheet_file_name(trip_id: str, date: str) -> str:
    """run-sheet-<date>-<trip>.html, the trip id cleaned by ``auroraplan.names.safe_name``."""
    from auroraplan.names import safe_name

    return f"run-sheet-{date}-{safe_name(trip_id, 'trip')}.html"


def check_names(ws):
    """Before any work (and before the database is opened): refuse trip ids that would
    share a file once cleaned, and names the itinerary or chart fonts cannot show; return
    the itinerary fonts."""
    from auroraplan.commands.itinerary import ITINERARY_FILE, itinerary_fonts
    from auroraplan.names import file_names
    from auroraplan.render.charts import check_workspace_names

    file_names([t.trip for t in ws.trips], ITINERARY_FILE)
    fonts = itinerary_fonts(ws, ws.trips)
    check_workspace_names(ws)
    return fonts


class OutputSet:
    """The outputs of one run, made in memory (file name -> bytes) and written at the end.

    Each step adds files and index entries; :meth:`write` writes them all, then the
    index page.
    """

    def __init__(self, ws, db, by: str | None = None, keep=None):
        self.ws, self.db, self.by = ws, db, by
        self.keep = keep  # the forecast archive's callback (archive.recorder), or None
        self.files: dict[str, bytes] = {}
        self.entries: list[dict] = []
        self.state: dict = {}
        self.tonight_reports: dict[str, dict] = {}
        self.fonts = None

    def add(self, name: str, data: bytes | str, title: str, description: str = "") -> None:
        from auroraplan.errors import InputError

        if name in self.files:
            raise InputError(f"two outputs would both be written to {name}; give trips ids "
                             "that differ in letters or digits")
        self.files[name] = data.encode("utf-8") if isinstance(data, str) else data
        self.entries.append({"title": title, "href": name, "description": description})

    def tonight(self, date: dt.date) -> dict:
        """Tonight's report of a night (every open site), made once per night."""
        from auroraplan import report
        from auroraplan.workspace import solar_wind_for

        key = date.isoformat()
        if key not in self.tonight_reports:
            self.tonight_reports[key] = report.tonight_report(
                self.ws, date, solar_wind=solar_wind_for(self.ws))
        return self.tonight_reports[key]

    def steps(self, start: dt.date, nights: int, plan=None) -> list:
        """The steps for a week of nights from ``start``; ``plan`` (a week report) is made
        from the plan of record when not given."""
        ws = self.ws
        fonts = self.fonts or check_names(ws)

        def week():
            from auroraplan import record
            from auroraplan.commands._common import json_text
            from auroraplan.commands.week import week_csv
            from auroraplan.render.calendar import plan_ics
            from auroraplan.runsheet import language

            week = plan or record.propose_week(ws, start, nights, self.db, by=self.by,
                                               keep_chances=self.keep)
            self.state["week"] = week
            self.add("week.json", json_text(week), f"Week plan from {start} (JSON)",
                     "ranked nights and sites per trip and the excursion plan")
            self.add("week.csv", week_csv(week), "Week plan (CSV)",
                     "one row per trip, night and ranked site")
            self.add("excursions.ics", plan_ics(week, language(ws.settings)),
                     "Calendar of the planned outings", "iCalendar file for the office calendar")

        def pages():
            from auroraplan import runsheet
            from auroraplan.commands.tonight import page_for

            week = self.state["week"]
            dates = [start + dt.timedelta(days=d) for d in range(nights)]
            for date in dates:
                night = self.tonight(date)
                self.add(f"tonight-{date}.html", page_for(ws, night),
                         f"Guide's phone page for the night of {date}",
                         "every site ranked; works offline once saved on the phone")
                for outing in (p for p in week["plan"] if p["date"] == date.isoformat()):
                    sheet = runsheet.run_sheet(night, week, outing["trip"], ws.settings)
                    self.add(run_sheet_file_name(outing["trip"], outing["date"]),
                             page_for(ws, night, sheet),
                             f"Run sheet {outing['date']} {outing['trip']}: {outing['group']}",
                             "pick-up, site, where to look, go / wait / swap")

        def itineraries():
            from auroraplan.commands.itinerary import itinerary_file_name
            from auroraplan.render.itinerary_pdf import itinerary_pdf

            week = self.state["week"]
            for trip in (t for t in week["trips"] if t["nights"]):
                self.add(itinerary_file_name(trip["trip"]),
                         itinerary_pdf(week, trip["trip"], operator_settings=ws.settings,
                                       fonts=fonts),
                         f"Itinerary {trip['trip']}: {trip['group']}",
                         f"{trip['guests']} guests, {trip['arrive']} to {trip['depart']}")

        def charts():
            from auroraplan import report
            from auroraplan.render import charts

            self.add("week-heatmap.png", charts.week_heatmap_png(self.state["week"]["heatmap"]),
                     "Chance per night and site", "the week at a glance, sites by nights")
            night = self.tonight(start)
            if night["sites"]:
                top = night["sites"][0]["name"]
                self.add(f"night-timeline-{start}.png",
                         charts.night_timeline_png(report.site_timeline(ws, start, top)),
                         f"Night timeline at {top}, {start}",
                         "sun and moon, darkness, Kp needed against forecast Kp, cloud, chance")

        return [week, pages, itineraries, charts]

    def write(self, out: Path, title: str) -> None:
        """Write every file and the index page as one set (``outfiles.write_files``): all of
        them are made beside their targets before any replaces an earlier file, so an
        interrupt or a full disk leaves the folder as it was."""
        from auroraplan.outfiles import write_files
        from auroraplan.render.index_page import index_html
        from auroraplan.report import made_at

        self.entries.sort(key=lambda e: KIND_ORDER.get(Path(e["href"]).suffix, 9))
        index = index_html(title, made_at(self.ws.operator.timezone), self.entries)
        created = not out.exists()
        out.mkdir(parents=True, exist_ok=True)
        try:
            write_files({**{out / name: data for name, data in self.files.items()},
                         out / "index.html": index})
        except BaseException:
            if created and not any(out.iterdir()):
                out.rmdir()
            raise

    def print_summary(self, out: Path, heading: str) -> None:
        print(f"{heading} written to {out.resolve()}/")
        for entry in self.entries:
            print(f"  {entry['href']:<36} {entry['title']}")
        print(f"Open {out.resolve() / 'index.html'} in a browser.")
