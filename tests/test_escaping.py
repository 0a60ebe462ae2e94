"""User text made inert: spreadsheets, terminal markup, links, JSON."""

import json
import math

import numpy as np
import pytest

from auroraplan.commands._common import json_text
from auroraplan.escape import cell_as_written, markup, spreadsheet_cell, spreadsheet_text
from auroraplan.render.index_page import index_html


@pytest.mark.parametrize("cell, written", [
    # OWASP "CSV Injection": cells starting = + - @ tab or carriage return.
    ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"),
    ("+1", "'+1"), ("-2+3", "'-2+3"), ("@SUM(A1)", "'@SUM(A1)"), ("\tx", "'\tx"),
    ("\rx", "'\rx"), ("Gullwing Point", "Gullwing Point"), ("a=b", "a=b"), (0.25, 0.25),
    (-1, -1),
])
def test_spreadsheet_cells(cell, written):
    assert spreadsheet_cell(cell) == written


def test_every_cell_of_a_written_csv_is_inert_and_reads_back_as_written():
    import csv
    import io

    header = ["site", "note"]
    rows = [["=cmd|' /C calc'!A0", "+1"], ["Gullwing Point", "-2 degrees, @ the pier"],
            ["Lake\nshore", "'quoted already"]]
    text = spreadsheet_text(header, rows)
    read = list(csv.reader(io.StringIO(text)))
    assert read[0] == header
    # OWASP "CSV Injection": no cell begins with = + - @ tab or a line break.
    assert all(not cell.startswith(("=", "+", "-", "@", "\t", "\r", "\n"))
               for row in read for cell in row)
    assert [[cell_as_written(c) for c in row] for row in read[1:]] == rows


def test_the_logbook_export_reads_back_formula_notes_and_sites_as_written(tmp_path):
    from auroraplan.logbook import entries_csv, make_entry, read_logbook_csv

    site = "=Delta Flats"
    entry, bad = make_entry({"site": site, "night": "2027-01-12", "aurora": "clear",
                             "note": "@once, -5 C", "source": "+guide"}, {site})
    assert not bad
    path = tmp_path / "logbook.csv"
    path.write_text(entries_csv([entry]), encoding="utf-8")
    assert path.read_text(encoding="utf-8").splitlines()[1].startswith("'=Delta Flats,")
    (back,) = read_logbook_csv(path, {site})
    assert (back.site, back.note, back.source) == (site, "@once, -5 C", "+guide")


@pytest.mark.parametrize("name", ["Delta [/] Flats", "Fjord [west side]",
                                  "[link=https://x.invalid]Delta[/link]", "ends in \\",
                                  "ends in two \\\\", "\\[b]\\", "Trail \\end"])
def test_terminal_markup_is_shown_as_written(name):
    from rich.console import Console
    from rich.table import Table

    console = Console(width=200, color_system=None, record=True)
    console.print(f"[bold]{markup(name)}[/] after")
    assert console.export_text().rstrip("\n") == f"{name} after"
    # Alone in a table cell, as the commands' tables hold names.
    table = Table(box=None, show_header=False, pad_edge=False)
    table.add_column()
    table.add_row(markup(name))
    console.print(table)
    assert console.export_text().rstrip() == name


@pytest.mark.parametrize("href, encoded", [
    ("itinerary-a#b.pdf", "itinerary-a%23b.pdf"),
    ("itinerary-a?b.pdf", "itinerary-a%3Fb.pdf"),
    ("itinerary-a:b.pdf", "itinerary-a%3Ab.pdf"),  # would read as a URL scheme "itinerary-a:"
])
def test_index_links_keep_hash_question_mark_and_colon_in_the_name(href, encoded):
    page = index_html("t", "2027-01-12T18:00+01:00", [{"title": "x", "href": href}])
    assert f'href="{encoded}"' in page


def test_json_is_strict_non_finite_numbers_are_null():
    text = json_text({"a": math.nan, "b": [np.float64("inf"), 1.5], "c": np.float32(2.0),
                      "d": -math.inf})

    def refuse(name):
        raise ValueError(name)

    assert json.loads(text, parse_constant=refuse) == {"a": None, "b": [None, 1.5], "c": 2.0,
                                                      "d": None}
