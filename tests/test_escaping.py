"""User text made inert: spreadsheets, terminal markup, links, JSON."""

import json
import math

import numpy as np
import pytest

from auroraplan.commands._common import json_text
from auroraplan.escape import markup, spreadsheet_cell
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


@pytest.mark.parametrize("name", ["Delta [/] Flats", "Fjord [west side]",
                                  "[link=https://x.invalid]Delta[/link]", "ends in \\"])
def test_terminal_markup_is_shown_as_written(name):
    from rich.console import Console

    console = Console(width=200, color_system=None, record=True)
    console.print(f"[bold]{markup(name)}[/] after")
    assert console.export_text().rstrip("\n") == f"{name} after"


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
