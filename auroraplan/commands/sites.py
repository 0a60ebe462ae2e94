"""Each site's magnetic latitude and the Kp it needs to see the aurora overhead or on its horizon."""

from auroraplan.commands._common import console, iso_date, present


def mlt_clock(hours: float) -> str:
    """Magnetic local time in hours as HH:MM."""
    minutes = int(round(hours * 60)) % (24 * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def add_arguments(parser):
    parser.add_argument("workspace", help="workspace folder (operator.toml, sites.geojson, ...)")
    parser.add_argument("--date", type=iso_date,
                        help="local date of the evening for clock times (default: today)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def run(args):
    from auroraplan.report import site_table
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace, forecasts=False)
    report = site_table(ws, args.date)
    return present(report, args.json, _print_table)


def _print_table(report) -> None:
    from rich.table import Table

    from auroraplan.escape import markup

    def kp(v):
        return "not by 9" if v is None else f"{v:.1f}"

    table = Table(title=f"Kp needed at magnetic midnight ({report['model']})",
                  caption=f"margin {report['min_elevation_deg']:g}° above each horizon; "
                  f"aurora at {report['emission_height_km']:g} km")
    table.add_column("site", no_wrap=True)
    for head in ("MLAT", "zenith", "horizon", "look", "best MLT", "clock"):
        table.add_column(head, justify="right")
    for r in report["sites"]:
        look = "—" if r["look_azimuth"] is None else f"{r['look_compass']} {r['look_azimuth']:.0f}°"
        clock = r["best_local_time"][11:16] if r["best_local_time"] else "—"
        name = markup(f"{r['name']} (closed)" if r["closed"] else r["name"])
        horizon = kp(r["kp_needed_horizon"])
        if r.get("kp_lost_horizon") is not None:
            horizon += f" (gone at {r['kp_lost_horizon']:.1f})"
        table.add_row(name, f"{r['mlat']:.1f}°", kp(r["kp_needed_overhead"]),
                      horizon, look, mlt_clock(r["best_mlt"]), clock)
    console().print(table)
