"""Run the main job on the bundled demo workspace and write every output to one folder.

The same outputs as `publish` (week plan, calendar, one run sheet per planned
outing, each night's phone page, itineraries, charts, index page) for the demo's
week from 11 January 2027, with the storm night's oval map and a season
outlook. All data in the demo workspace is invented; for your own workspace and
dates use `auroraplan publish`.
"""

import datetime as dt
from pathlib import Path

DEMO_WEEK_START = dt.date(2027, 1, 11)
DEMO_TONIGHT = dt.date(2027, 1, 12)


def demo_workspace() -> Path:
    """The bundled demo workspace: inside the installed package (the wheel carries the
    repository's ``demo_sites/`` as ``auroraplan/demo_sites``, see setup.py), else the
    ``demo_sites/`` folder beside the package in a checkout or an editable install."""
    package = Path(__file__).resolve().parents[1]
    installed = package / "demo_sites"
    return installed if installed.is_dir() else package.parent / "demo_sites"


def add_arguments(parser):
    from auroraplan.commands._common import output_folder

    parser.add_argument("--out", default="demo_out", type=output_folder,
                        help="output folder (default demo_out)")


def run(args):
    from auroraplan import store
    from auroraplan.commands._outputs import OutputSet, check_names, check_out_folder
    from auroraplan.commands._progress import progress_bar
    from auroraplan.errors import InputError
    from auroraplan.outfiles import protect
    from auroraplan.workspace import load_workspace

    ws_path = demo_workspace()
    if not ws_path.is_dir():
        raise InputError(f"{ws_path}: the bundled demo workspace is missing; for your own "
                         "workspace use: auroraplan publish WORKSPACE --start DATE --out DIR")
    protect(ws_path)
    ws = load_workspace(ws_path)
    out = check_out_folder(Path(args.out), ws)
    fonts = check_names(ws)
    out.mkdir(parents=True, exist_ok=True)
    # The demo's plan of record lives in OUT, so the bundled folder stays as shipped.
    with store.open_store(out / store.DATABASE_NAME) as db:
        builder = OutputSet(ws, db, by="demo")
        builder.fonts = fonts
        steps = builder.steps(DEMO_WEEK_START, 7) + demo_extras(builder)
        with progress_bar(len(steps), "Demo outputs") as bar:
            for step in steps:
                step()
                bar.advance()
    builder.write(out, f"{ws.operator.name}: demo outputs (invented scenario)")
    builder.print_summary(out, f"Demo outputs for {ws.operator.name} (invented scenario)")
    return 0


def demo_extras(builder):
    """The demo's storm-night oval map and its season outlook, after the week's outputs."""
    from auroraplan import report

    ws = builder.ws

    def oval():
        from auroraplan.render import charts

        builder.add("oval-map.png",
                    charts.oval_map_png(report.oval_map_data(ws, 6.0, DEMO_TONIGHT)),
                    "Oval band around the base at Kp 6",
                    "where the aurora band lies at local midnight, with the sites")

    def season():
        from auroraplan.commands._common import json_text
        from auroraplan.render.charts import season_calendar_png

        result = report.season_report(ws, dt.date(2026, 9, 1), dt.date(2027, 4, 15), 5)
        builder.add("season-outlook.png", season_calendar_png(report.season_chart(result)),
                    "Season outlook, September to mid-April",
                    "long-range chance per night from climatology (outlook)")
        builder.add("season.json", json_text(result), "Season outlook (JSON)",
                    "chance per night and the best start dates for 5 nights")

    return [oval, season]
