"""How good have the chances been? Pair each logbook outcome with the chance issued for it.

Each site and night in the logbook (several entries of one site and night
count once: aurora seen if any entry saw it) is paired with the chance of a
sighting during the outing window that was issued last before the group went
out (see auroraplan.archive). Scores per kind (forecast, outlook, nowcast)
and overall: Brier score, reliability table with Wilson intervals, the Brier
decomposition and the ROC area (auroraplan.verify). Where the logbook gives the
cloud seen, each weather model's cloud kept with the same run is scored against it.
"""

from auroraplan.commands._common import iso_date, output_file


def add_outcome_arguments(parser):
    """The workspace, the nights and what counts as a sighting: shared with `calibrate`."""
    from auroraplan.logbook import AURORA_LEVELS

    parser.add_argument("workspace", help="the workspace folder")
    parser.add_argument("--from", dest="first", type=iso_date, help="first night, YYYY-MM-DD")
    parser.add_argument("--to", dest="last", type=iso_date, help="last night, YYYY-MM-DD")
    parser.add_argument("--seen-from", choices=AURORA_LEVELS[1:], default="faint",
                        help="the weakest aurora that counts as a sighting (default faint)")


def add_arguments(parser):
    add_outcome_arguments(parser)
    parser.add_argument("--json", action="store_true", help="print everything as JSON")
    parser.add_argument("--png", metavar="FILE", type=output_file,
                        help="also write the reliability diagram to FILE")


def run(args):
    from auroraplan import archive, verify
    from auroraplan.commands._common import print_json
    from auroraplan.store import database_path, protected_files
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace, forecasts=False)
    png_path = None
    if args.png:
        from auroraplan.outfiles import check_output_path

        png_path = check_output_path(args.png, list(ws.files.values())
                                     + protected_files(database_path(ws.path)))
    issued, logged, unpaired = logged_pairs(ws, args)
    pairs = [{"site": g.site, "night": g.night, "aurora": level, "outcome": seen,
              "chance": g.chance, "kind": g.kind, "made_at": g.made_at,
              "lead_hours": g.lead_hours, "after_start": g.after_start}
             for g, level, seen in issued]
    reference = outlook_chances(ws, pairs)
    for p in pairs:
        p["outlook"] = reference.get((p["site"], p["night"]))

    def scored(chosen):
        with_ref = all(p["outlook"] is not None for p in chosen)
        return verify.scores([p["chance"] for p in chosen], [p["outcome"] for p in chosen],
                             [p["outlook"] for p in chosen] if with_ref and chosen else None)

    result = {
        "workspace": str(ws.path),
        "seen_from": args.seen_from,
        "pairing": "the chance of a sighting during the outing window issued last before the "
                   "group went out (logged hours out, else the outing hours); where every "
                   "chance was made later, the first one (after_start)",
        "logged_site_nights": logged,
        "unpaired": unpaired,
        "after_start": sum(p["after_start"] for p in pairs),
        "reference": "the Kp-climatology outlook: the same chance model with Kp from "
                     "climatology and each site's monthly clear-sky share, no forecasts",
        "overall": scored(pairs),
        "by_kind": {k: scored([p for p in pairs if p["kind"] == k])
                    for k in archive.KINDS if any(p["kind"] == k for p in pairs)},
        "pairs": pairs,
        "cloud": cloud_verification(ws, args),
    }
    if png_path:
        from auroraplan.outfiles import write_bytes_atomic
        from auroraplan.render.charts import reliability_png, use_workspace_fonts

        use_workspace_fonts(ws)

        write_bytes_atomic(png_path, reliability_png(
            result["overall"], f"Reliability of the chances, {len(pairs)} logged site-nights"))
    if args.json:
        print_json(result)
    else:
        print_verify(result)
        if png_path:
            print(f"wrote {png_path}")
    return 0


def logged_pairs(ws, args):
    """Each logged site-night with the chance issued for it (archive.issued_for).

    Several entries of one site and night count once: the strongest aurora any of them saw,
    and the earliest time out. Returns ([(Issued, level, outcome 0/1)], logged site-nights,
    how many had no issued chance).
    """
    from auroraplan import archive
    from auroraplan.errors import InputError
    from auroraplan.logbook import AURORA_LEVELS, stored_entries
    from auroraplan.store import database_path, open_store

    db = open_store(database_path(ws.path), create=False)
    if db is None:
        raise InputError(f"{database_path(ws.path)}: no workspace database yet; run `week` and "
                         "`logbook import` first")
    with db:
        entries = stored_entries(db, args.first and args.first.isoformat(),
                                 args.last and args.last.isoformat())
        outcomes = {}
        for e in entries:
            level, start = outcomes.get((e.site, e.night), ("none", None))
            starts = [t for t in (start, e.out_from) if t]
            outcomes[(e.site, e.night)] = (max(level, e.aurora, key=AURORA_LEVELS.index),
                                           min(starts) if starts else None)
        found, unpaired = [], 0
        for (site, night), (level, out_from) in sorted(outcomes.items(),
                                                       key=lambda kv: kv[0][::-1]):
            got = archive.issued_for(db, site, night, out_from, ws.operator.timezone)
            if got is None:
                unpaired += 1
                continue
            seen = int(AURORA_LEVELS.index(level) >= AURORA_LEVELS.index(args.seen_from))
            found.append((got, level, seen))
    return found, len(outcomes), unpaired


def cloud_verification(ws, args) -> dict:
    """Each weather model's forecast cloud against the cloud seen, per logged site-night.

    Site-nights whose entries give ``cloud_seen`` (several entries: their mean) are paired
    with the same run as the chance (archive.issued_for); each model's cloud is its mean
    over the logged hours out (archive.model_cloud_for). Scores from verify.cloud_scores.
    """
    from auroraplan import archive, verify
    from auroraplan.logbook import stored_entries
    from auroraplan.store import database_path, open_store

    db = open_store(database_path(ws.path), create=False)
    nights: dict[tuple[str, str], dict] = {}
    pairs = []
    with db:
        for e in stored_entries(db, args.first and args.first.isoformat(),
                                args.last and args.last.isoformat()):
            if e.cloud_pct is None:
                continue
            got = nights.setdefault((e.site, e.night), {"seen": [], "from": e.out_from,
                                                         "until": e.out_until})
            got["seen"].append(e.cloud_pct)
        for (site, night), got in sorted(nights.items(), key=lambda kv: kv[0][::-1]):
            issued = archive.issued_for(db, site, night, got["from"], ws.operator.timezone)
            models = ({} if issued is None else archive.model_cloud_for(
                db, issued, got["from"], got["until"], ws.operator.timezone))
            if models:
                pairs.append({"site": site, "night": night,
                              "cloud_seen_pct": sum(got["seen"]) / len(got["seen"]),
                              "models": models, "made_at": issued.made_at})
    return {
        "logged_site_nights": len(nights),
        "pairs": pairs,
        "by_model": verify.cloud_scores([p["cloud_seen_pct"] for p in pairs],
                                        [p["models"] for p in pairs]),
    }


def outlook_chances(ws, pairs) -> dict:
    """(site, night) -> the chance the climatology outlook gives (no Kp or cloud forecast),
    for the skill score's reference; sites no longer in the workspace get none."""
    import datetime as dt

    from auroraplan import report

    by_name = {s.name: s for s in ws.sites}
    names = sorted({p["site"] for p in pairs if p["site"] in by_name})
    if not names:
        return {}
    nights = sorted({dt.date.fromisoformat(p["night"]) for p in pairs})
    first, count = nights[0], (nights[-1] - nights[0]).days + 1
    sites = [by_name[n] for n in names]
    _, summary = report._grid_for_nights(ws, sites, first, count, report.DEFAULT_STEP_MIN,
                                         report.workspace_climatology(ws), outlook_only=True)
    out = {}
    for i, name in enumerate(names):
        for d in range(count):
            p = summary.p_any[i, d]
            if p == p:  # not NaN
                out[(name, (first + dt.timedelta(days=d)).isoformat())] = float(p)
    return out


def print_verify(result):
    """Scores per kind and the reliability table, on the terminal."""
    from auroraplan.commands._common import console
    from auroraplan.commands._common import table as new_table
    from auroraplan.escape import markup

    out = console()
    out.print(f"[bold]Verification[/] · {result['logged_site_nights']} logged site-nights, "
              f"{result['overall']['count']} paired, {result['unpaired']} without an issued "
              f"chance · sighting = {result['seen_from']} or more")
    scores = new_table(title="Chance of a sighting during the outing window")
    for col in ("kind", "pairs", "seen", "Brier", "skill", "reliab.", "resol.", "ROC",
                "more"):
        scores.add_column(col, justify="left" if col == "kind" else "right", no_wrap=True)

    def fmt(x, digits=3):
        return "—" if x is None else f"{x:.{digits}f}"

    rows = [("all", result["overall"])] + list(result["by_kind"].items())
    for name, s in rows:
        scores.add_row(name, str(s["count"]), str(s["sightings"]), fmt(s["brier"]),
                       fmt(s["skill"], 2),
                       fmt(s["decomposition"]["reliability"]), fmt(s["decomposition"]["resolution"]),
                       fmt(s["roc_auc"], 2), str(s["more_needed"]) if s["more_needed"] else "—")
    out.print(scores)
    rel = new_table(title="Reliability (all pairs): issued chance against how often it happened")
    for col in ("chance bin", "pairs", "mean chance", "observed", "95 % interval (Wilson)"):
        rel.add_column(col, justify="right", no_wrap=True)
    for b in result["overall"]["reliability"]:
        if not b["count"]:
            continue
        rel.add_row(f"{100 * b['low']:.0f}–{100 * b['high']:.0f} %", str(b["count"]),
                    f"{100 * b['mean_chance']:.0f} %", f"{100 * b['observed']:.0f} %",
                    f"{100 * b['observed_low']:.0f}–{100 * b['observed_high']:.0f} %")
    out.print(rel)
    out.print("[dim]Brier: mean squared gap between chance and outcome (lower is better); skill: "
              "share of the climatology outlook's Brier score removed; reliab.: gap between "
              "chance and frequency; resol.: how well chances sort nights; ROC: 0.5 no better "
              "than chance, 1 perfect ranking.[/]")
    if result["overall"]["more_needed"]:
        out.print(f"[yellow]note:[/] about {result['overall']['more_needed']} more logged outcomes "
                  "are needed before these figures mean much.")
    cloud = result["cloud"]
    if cloud["by_model"]:
        models = new_table(title=f"Cloud: each weather model against the cloud seen, "
                                 f"{len(cloud['pairs'])} site-nights")
        for col in ("model", "site-nights", "mean abs. error", "bias", "closest"):
            models.add_column(col, justify="left" if col == "model" else "right", no_wrap=True)
        for name, s in cloud["by_model"].items():
            models.add_row(markup(name), str(s["count"]), f"{s['mae_pct']:.0f} %",
                           f"{s['bias_pct']:+.0f} %", f"{100 * s['closest_share']:.0f} %")
        out.print(models)
        out.print("[dim]bias above 0: the model forecast more cloud than was seen; closest: share "
                  "of its site-nights on which it was nearest the cloud seen.[/]")
    elif cloud["logged_site_nights"]:
        out.print(f"[yellow]note:[/] {cloud['logged_site_nights']} logged site-nights give the "
                  "cloud seen, but no weather model's cloud was kept for them.")
    if result["after_start"]:
        out.print(f"[yellow]note:[/] {result['after_start']} pairs use a chance made after the "
                  "group went out (a re-run for a past night), not a true forecast.")
