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


def spreadsheet_text(header, rows) -> str:
    """CSV text (RFC 4180 quoting, ``\\n`` line ends) with every cell passed through
    :func:`spreadsheet_cell`: the one writer of the CSV files the tool makes."""
    import csv
    import io

    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow([spreadsheet_cell(h) for h in header])
    writer.writerows([spreadsheet_cell(v) for v in row] for row in rows)
    return buf.getvalue()


def cell_as_written(text: str) -> str:
    """The text of a cell :func:`spreadsheet_cell` quoted, as it was before: a leading
    ``'`` in front of one of FORMULA_STARTS is dropped (for reading back a file the tool
    wrote, such as an exported logbook); any other text is unchanged."""
    if isinstance(text, str) and text.startswith("'") and text[1:].startswith(FORMULA_STARTS):
        return text[1:]
    return text


def markup(text) -> str:
    """Text shown literally by the terminal-table library (rich), wherever it is put: a
    table cell on its own or inside ``[bold]...[/]``.

    rich reads ``[...]`` as markup and halves backslashes in front of a tag, so its own
    ``escape`` leaves a trailing backslash right only when a tag follows. Trailing
    backslashes are therefore doubled and followed by an empty styled span, which is a
    tag in every context and draws nothing.
    """
    from rich.markup import escape

    text = str(text)
    body = text.rstrip("\\")
    trailing = len(text) - len(body)
    return escape(body) + ("\\" * (2 * trailing) + "[dim][/dim]" if trailing else "")
