"""Each site's magnetic latitude and the Kp it needs to see the aurora overhead or on its horizon."""

from auroraplan.commands._common import console, iso_date, print_json


def mlt_clock(hours: float) -> str:
    """Magnetic local time in hours as HH:MM."""
    minutes = int(round(hours * 60)) % (24 * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def add_arguments(parser):
    parser.add_argument("workspace", help="workspace folder (operator.toml, sites.geojson, ...)")
    parser.add_argument("--date", type=iso_date,
                        help="local date of the evening for clock times (default: today)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def _finite(x, digits=2):
    import math

    return round(float(x), digits) if math.isfinite(x) else None


def sites_report(ws, date=None) -> dict:
    """Kp needed per site at magnetic midnight and the best night-side hour, JSON-ready."""
    import datetime as dt
    import zoneinfo

    import numpy as np

    from auroraplan import magnetic, view
    from auroraplan.render.style import compass_point

    op = ws.operator
    zone = zoneinfo.ZoneInfo(op.timezone)
    date = date or dt.datetime.now(zone).date()
    evening = dt.datetime.combine(date, dt.time(12, 0), tzinfo=zone).astimezone(dt.UTC)
    sites = ws.sites
    table = view.kp_needed_table(
        [s.lat for s in sites], [s.lon for s in sites], [s.height_m for s in sites],
        [s.horizon for s in sites], min_elevation_deg=ws.settings.viewing.min_elevation_deg,
        emission_height_km=ws.settings.viewing.emission_height_km,
        model=ws.settings.viewing.oval_model, when=evening,
        names=[s.name for s in sites],
    )
    best_mlt, best_kp = view.best_night_mlt(table)
    # Clock time tonight when each site passes its best MLT (5-minute steps, noon to noon).
    start = np.datetime64(evening.replace(tzinfo=None), "s")
    times = start + np.arange(0, 24 * 3600, 300).astype("timedelta64[s]")
    site_mlt = magnetic.mlt(table.mlon, times)
    gap = np.abs((site_mlt - best_mlt[:, None] + 12.0) % 24.0 - 12.0)
    at = times[np.argmin(gap, axis=1)]

    rows = []
    for i, s in enumerate(sites):
        kp_h = table.kp_horizon[i, 0]
        az = table.look_azimuth_deg[i, 0]
        local = at[i].astype("datetime64[s]").item().replace(tzinfo=dt.UTC).astimezone(zone)
        rows.append({
            "name": s.name,
            "mlat": round(float(table.mlat[i]), 2),
            "mlon": round(float(table.mlon[i]), 2),
            "kp_needed_overhead": _finite(table.kp_overhead[i, 0]),
            "kp_needed_horizon": _finite(kp_h),
            "kp_lost_horizon": _finite(table.kp_lost[i, 0]),
            "look_azimuth": _finite(az, 1),
            "look_compass": compass_point(az) if np.isfinite(az) else None,
            "look_elevation": _finite(table.look_elevation_deg[i, 0], 1),
            "best_mlt": float(best_mlt[i]),
            "kp_needed_best": _finite(best_kp[i]),
            "best_local_time": local.isoformat(timespec="minutes") if np.isfinite(best_kp[i])
            else None,
            "closed": bool(s.closed),
        })
    return {
        "workspace": str(ws.path),
        "date": date.isoformat(),
        "model": table.model,
        "min_elevation_deg": ws.settings.viewing.min_elevation_deg,
        "emission_height_km": ws.settings.viewing.emission_height_km,
        "note": "Kp needed at magnetic midnight (MLT 0); null = not reached by Kp 9. "
        "best_mlt is the night-side magnetic local time needing the least Kp. "
        "kp_lost_horizon: the Kp at which a storm has carried the band out of view again "
        "(polar-cap sites); null = it stays in view.",
        "sites": rows,
    }


def run(args):
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace)
    report = sites_report(ws, args.date)
    if args.json:
        print_json(report)
    else:
        _print_table(report)
    return 0


def _print_table(report: dict) -> None:
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
