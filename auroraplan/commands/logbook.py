"""Keep what the guides saw: add one logbook entry, or import a logbook CSV file.

Entries go into the workspace database (auroraplan.sqlite in the workspace
folder). The same entry imported twice is stored once, and an import with
any bad row imports nothing.

  auroraplan logbook add WORKSPACE --site "Island Lake" --night 2027-01-12 --aurora clear
  auroraplan logbook import WORKSPACE logbook.csv
  auroraplan logbook list WORKSPACE [--from D] [--to D] [--csv FILE]
"""

import argparse

from auroraplan.commands._common import iso_date, output_file


def add_arguments(parser):
    from auroraplan.cli import OneLineParser
    from auroraplan.logbook import AURORA_LEVELS, COLUMNS

    sub = parser.add_subparsers(dest="action", metavar="ACTION", parser_class=OneLineParser,
                                required=True)
    add = sub.add_parser("add", help="add one entry", description="Add one logbook entry.")
    add.add_argument("workspace", help="the workspace folder")
    add.add_argument("--site", required=True, help=COLUMNS["site"])
    add.add_argument("--night", required=True, type=iso_date, help=COLUMNS["night"])
    add.add_argument("--aurora", required=True, help=" / ".join(AURORA_LEVELS))
    add.add_argument("--hours-out", default="", metavar="HH:MM-HH:MM", help=COLUMNS["hours_out"])
    add.add_argument("--cloud", default="", metavar="PERCENT", help=COLUMNS["cloud_seen"])
    add.add_argument("--note", default="", help=COLUMNS["note"])
    add.add_argument("--source", default="", help=COLUMNS["source"])
    imp = sub.add_parser("import", help="import a logbook CSV file",
                         description="Import a logbook CSV file. Columns: " + "; ".join(
                             f"{k}: {v}" for k, v in COLUMNS.items()))
    imp.add_argument("workspace", help="the workspace folder")
    imp.add_argument("file", help="the logbook CSV file (read only, never changed)")
    show = sub.add_parser("list", help="list stored entries",
                          description="List the stored logbook entries.")
    show.add_argument("workspace", help="the workspace folder")
    show.add_argument("--from", dest="first", type=iso_date, help="first night, YYYY-MM-DD")
    show.add_argument("--to", dest="last", type=iso_date, help="last night, YYYY-MM-DD")
    show.add_argument("--csv", metavar="FILE", type=output_file,
                      help="write the entries as a logbook CSV file")
    show.add_argument("--json", action="store_true", help="print the entries as JSON")
    for p in (add, imp, show):
        p.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                       help="show tracebacks of internal errors")


def run(args):
    from auroraplan.workspace import load_workspace

    ws = load_workspace(args.workspace, forecasts=False)
    return {"add": _add, "import": _import, "list": _list}[args.action](ws, args)


def _open(ws, create=True):
    from auroraplan.errors import InputError
    from auroraplan.store import database_path, open_store

    db = open_store(database_path(ws.path), create=create)
    if db is None:
        raise InputError(f"{database_path(ws.path)}: no workspace database yet; add or import "
                         "logbook entries first")
    return db


def _add(ws, args):
    from auroraplan.errors import InputError
    from auroraplan.logbook import make_entry, store_entries

    entry, bad = make_entry({
        "site": args.site, "night": args.night.isoformat(), "aurora": args.aurora,
        "hours_out": args.hours_out, "cloud_seen": args.cloud, "note": args.note,
        "source": args.source,
    }, {s.name for s in ws.sites})
    if bad:
        options = {"hours_out": "--hours-out", "cloud_seen": "--cloud"}
        raise InputError([f"option {options.get(f, '--' + f)}: {msg}" for f, msg in bad])
    with _open(ws) as db:
        added, _ = store_entries(db, [entry])
    print(f"{'added' if added else 'already in the logbook'}: {entry.site}, night of "
          f"{entry.night}, aurora {entry.aurora}")
    return 0


def _import(ws, args):
    from auroraplan.logbook import read_logbook_csv, store_entries

    entries = read_logbook_csv(args.file, {s.name for s in ws.sites})
    with _open(ws) as db:
        added, already = store_entries(db, entries)
    print(f"{args.file}: {len(entries)} entries read, {added} added, {already} already in the "
          "logbook")
    return 0


def _list(ws, args):
    from auroraplan.commands._common import console, print_json
    from auroraplan.commands._common import table as new_table
    from auroraplan.escape import markup
    from auroraplan.logbook import entries_csv, stored_entries
    from auroraplan.outfiles import check_output_path, write_text_atomic
    from auroraplan.store import database_path, protected_files

    out_path = None
    if args.csv:
        out_path = check_output_path(args.csv, list(ws.files.values())
                                     + protected_files(database_path(ws.path)))
    with _open(ws, create=False) as db:
        entries = stored_entries(db, args.first and args.first.isoformat(),
                                 args.last and args.last.isoformat())
    if out_path:
        write_text_atomic(out_path, entries_csv(entries))
    if args.json:
        from dataclasses import asdict

        print_json([asdict(e) for e in entries])
        return 0
    table = new_table(title=f"Logbook · {len(entries)} entries")
    for col in ("night", "site", "aurora", "out", "cloud", "source", "note"):
        table.add_column(col, no_wrap=col in ("night", "aurora", "out"))
    for e in entries:
        table.add_row(e.night, markup(e.site), e.aurora,
                      f"{e.out_from}-{e.out_until}" if e.out_from else "",
                      "" if e.cloud_pct is None else f"{e.cloud_pct:.0f}%", markup(e.source),
                      markup(e.note))
    console().print(table)
    if out_path:
        print(f"wrote {out_path}")
    return 0
