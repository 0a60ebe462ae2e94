"""Auroral oval boundary latitudes by magnetic local time for one Kp, as a table, JSON or a chart."""


from auroraplan.commands._common import console, number_range, output_file, print_json

kp_value = number_range(0.0, 9.0, "a Kp")


def add_arguments(parser):
    from auroraplan import oval  # numpy only

    parser.add_argument("--kp", type=kp_value, required=True,
                        help="planetary K index, 0 to 9 (decimals allowed, e.g. 4.33)")
    parser.add_argument("--model", default="starkov1994",
                        help=f"oval model: {', '.join(oval.MODELS)} (default {oval.DEFAULT_MODEL}, "
                        "which keeps moving equatorward above Kp 6)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    parser.add_argument("--png", metavar="FILE", type=output_file, help="also draw the oval around the magnetic pole")


def oval_report(kp: float, model: str) -> dict:
    """Boundaries at MLT 0..23 h as a JSON-ready dict."""
    import numpy as np

    from auroraplan import oval

    mlt = np.arange(24.0)
    b = oval.boundaries(kp, mlt, model)

    def deg(x):
        return None if not np.isfinite(x) else round(float(x), 2)

    rows = [
        {"mlt": int(h), **{name: deg(b[name][i]) for name in oval.BOUNDARY_NAMES}}
        for i, h in enumerate(mlt)
    ]
    return {"model": model, "kp": kp, "storm_handling": oval.STORM_HANDLING[model],
            "units": "degrees magnetic latitude (AACGM), northern hemisphere; south: same |MLAT|",
            "boundaries": rows}


def run(args):
    from auroraplan import oval
    from auroraplan.outfiles import check_output_path

    oval.check_model(args.model)
    png_path = check_output_path(args.png) if args.png else None
    report = oval_report(args.kp, args.model)
    if png_path is not None:
        from auroraplan.render.oval_png import write_oval_png

        write_oval_png(png_path, args.kp, args.model)
    if args.json:
        print_json(report)
    else:
        _print_table(report)
        if png_path is not None:
            print(f"chart written: {png_path}")
    return 0


def _print_table(report: dict) -> None:
    from rich.table import Table

    def cell(v):
        return "—" if v is None else f"{v:.1f}°"

    table = Table(title=f"Oval boundaries at Kp {report['kp']:g} ({report['model']})",
                  caption="magnetic latitude by magnetic local time (MLT)")
    for head in ("MLT", "poleward", "equatorward", "diffuse"):
        table.add_column(head, justify="right")
    for row in report["boundaries"]:
        table.add_row(f"{row['mlt']:02d}", cell(row["poleward"]), cell(row["equatorward"]),
                      cell(row["diffuse"]))
    out = console()
    out.print(table)
    out.print(f"storm handling: {report['storm_handling']}")
