"""The demo output folder's front page: one self-contained HTML list of what was made."""

from __future__ import annotations

from urllib.parse import quote

from auroraplan.render.phone import EARLY_SCRIPT, TOGGLE_SCRIPT, _css, _e, _stamp

EXTRA_CSS = """
ul.outputs{list-style:none;margin:0;padding:0}
ul.outputs li{border-top:1px solid var(--rule);padding:.7rem 0}
ul.outputs a{min-height:44px;display:inline-flex;align-items:center;font-weight:600;
color:var(--accent-ink)}
"""


def index_html(title: str, made_at: str, entries: list[dict]) -> str:
    """A front page listing output files, in the same look as the phone page.

    Parameters
    ----------
    title : str
        Heading of the page.
    made_at : str
        Local ISO 8601 time the outputs were made.
    entries : list of dict
        Each with ``title``, ``href`` (a file name relative to the page, percent-encoded here
        so that ``#``, ``?`` and ``:`` in it stay part of the name) and ``description``.

    Returns
    -------
    str
        One HTML5 document with inline CSS, no outside requests.
    """
    items = "".join(
        f'<li><a href="{_e(quote(e["href"]))}">{_e(e["title"])}</a>'
        f"<p>{_e(e.get('description', ''))}</p></li>"
        for e in entries
    )
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title>{EARLY_SCRIPT}<style>{_css()}{EXTRA_CSS}</style></head>"
        f'<body><header><h1>{_e(title)}</h1><p class="facts">Made {_e(_stamp(made_at))}</p>'
        '<div class="bar"><button id="night" type="button" aria-pressed="false">'
        "Red night colours</button></div></header>"
        f'<main><ul class="outputs">{items}</ul></main>'
        "<footer><p>Made with auroraplan. Chances are forecasts, not promises.</p></footer>"
        f"{TOGGLE_SCRIPT}</body></html>\n"
    )
