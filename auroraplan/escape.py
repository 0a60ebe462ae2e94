"""User text made inert before it reaches a format that would act on it.

Names and notes come from the operator's files and may hold anything: ``[bold]`` (markup
for the terminal tables), ``=HYPERLINK(...)`` (a formula to a spreadsheet), ``$x$``
(mathematics to the plotting library). Each writer passes user text through the one
function here for its format. HTML and iCalendar have their own escaping in
``render/phone.py`` and the icalendar package.
"""

from __future__ import annotations

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\n")
"""First characters that make a spreadsheet read a cell as a formula (OWASP, "CSV
Injection"): such a cell is written with a single quote in front, the common convention
that spreadsheets show as text."""


def spreadsheet_cell(value):
    """A CSV cell that no spreadsheet runs as a formula: text starting with one of
    FORMULA_STARTS gets a leading ``'``; numbers and other text are unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def markup(text) -> str:
    """Text shown literally by the terminal-table library (rich): its ``[...]`` markup and a
    trailing backslash are escaped."""
    from rich.markup import escape

    return escape(str(text))
