"""Fit the [chance] settings to what the guides saw, and write a suggestion to review.

The outcomes in the logbook are paired with the chances issued for them (as
in `verify`); the display rates and the moon exponent are fitted by maximum
likelihood, with a bootstrap over nights for their 95 % intervals, and the
Brier score of the current and the fitted settings is taken on held-out nights
(cross-validation by night). With few outcomes a logistic recalibration of the
issued chance is fitted instead, and the output says so. The suggested
[chance] block goes to a file of its own; operator.toml is never changed.
"""

from auroraplan.commands._common import int_range


def add_arguments(parser):
    from auroraplan.commands._common import output_file
    from auroraplan.commands.verify import add_outcome_arguments

    add_outcome_arguments(parser)
    parser.add_argument("--out", metavar="FILE", default="chance-suggestion.toml", type=output_file,
                        help="where to write the suggested [chance] block "
                             "(default chance-suggestion.toml; never operator.toml)")
    parser.add_argument("--resamples", type=int_range(20, 5000), default=200,
                        help="bootstrap resamples for the 95 %% intervals (default 200)")
    parser.add_argument("--seed", type=int_range(0, 2**31 - 1), default=0,
                        help="seed of the bootstrap, for repeatable intervals (default 0)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def run(args):
    import datetime as dt

    import numpy as np

    from auroraplan import calibrate
    from auroraplan.archive import chance_settings_of
    from auroraplan.commands._common import present
    from auroraplan.commands._progress import working
    from auroraplan.commands.verify import logged_pairs
    from auroraplan.outfiles import check_output_path, write_text_atomic
    from auroraplan.store import database_path, protected_files
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace, forecasts=False)
    out_path = check_output_path(args.out, list(ws.files.values())
                                 + protected_files(database_path(ws.path)))
    found, logged, unpaired = logged_pairs(ws, args)
    current = chance_settings_of(ws)
    nights = [g.night for g, _, _ in found]
    with working(f"Fitting the chance settings to {len(found)} logged outcomes",
                 quiet=args.json):
        result = calibrate.calibrate(
            y=np.array([seen for _, _, seen in found], float), nights=nights,
            issued=np.array([g.chance for g, _, _ in found], float),
            factors=[g.factors for g, _, _ in found],
            step_min=found[0][0].step_min if found else 10.0, current=current,
            n_boot=args.resamples, seed=args.seed)
    span = f"{min(nights)} to {max(nights)}" if nights else "no nights"
    result.update(logged_site_nights=logged, unpaired=unpaired, seen_from=args.seen_from,
                  suggestion=str(out_path) if result.get("method") else None)
    if result.get("method"):
        made = dt.datetime.now(dt.UTC).isoformat(timespec="minutes")
        write_text_atomic(out_path, calibrate.suggestion_toml(result, ws.operator.name, made, span))
    return present(result, args.json, print_calibration)


def print_calibration(result):
    """Current and fitted settings side by side, and the held-out Brier scores."""
    from auroraplan.commands._common import console
    from auroraplan.commands._common import table as new_table

    out = console()
    out.print(f"[bold]Calibration[/] · {result['outcomes']} outcomes paired "
              f"({result['sightings']} sightings) over {result['nights']} nights")
    out.print(result["reason"])
    if result.get("method") == "settings":
        table = new_table(title="[chance] settings")
        for col in ("setting", "current", "fitted", "95 % interval"):
            table.add_column(col, justify="left" if col == "setting" else "right", no_wrap=True)
        for r in result["settings"]:
            table.add_row(r["name"], f"{r['current']:.3f}", f"{r['fitted']:.3f}",
                          f"{r['low']:.3f} to {r['high']:.3f}")
        out.print(table)
    elif result.get("method") == "logistic":
        lg = result["logistic"]
        out.print(f"logistic recalibration: a = {lg['a']:.3f} ({lg['a_low']:.3f} to "
                  f"{lg['a_high']:.3f}), b = {lg['b']:.3f} ({lg['b_low']:.3f} to {lg['b_high']:.3f})")
    cv = result.get("cv") or {}
    if cv.get("brier_current") is not None:
        out.print(f"Brier score on held-out nights ({cv['folds']} folds by night): current "
                  f"{cv['brier_current']:.4f}, fitted {cv['brier_fitted']:.4f} (lower is better)")
    if result.get("suggestion"):
        print(f"wrote {result['suggestion']} (review it; operator.toml was not changed)")
