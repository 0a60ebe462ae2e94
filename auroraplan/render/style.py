"""The project's own look: one palette and type scale shared by every output.

Ink-and-amber on paper by day; deep red on black by night. Chance is drawn
as amber of rising strength on a neutral ground, never as a traffic-light
scale.
"""

INK = "#1f2430"
PAPER = "#f6f3ec"
SLATE = "#5b6475"
RULE = "#c9c2b2"
AMBER = "#c47a12"
AMBER_LIGHT = "#f0d9a8"
TEAL = "#2f6f73"  # magnetic things: oval band, Kp
PLUM = "#6b4a7a"  # moon
SKY_BLUE = "#3d5a80"  # cloud
NIGHT_BG = "#000000"
NIGHT_FG = "#c81e1e"
NIGHT_DIM = "#7a1010"
# Text colours chosen for WCAG 2.1 contrast of at least 4.5:1 (success criterion 1.4.3):
# NIGHT_TEXT on NIGHT_BG is 4.6:1, AMBER_INK on PAPER 5.8:1, INK on PAPER 14:1.
NIGHT_TEXT = "#e0302a"
AMBER_INK = "#8a5208"

# Sequential ramp for chance from 0 to 1 (paper to deep amber-brown).
CHANCE_RAMP = ["#f6f3ec", "#efe0bd", "#e5c27f", "#d39a3f", "#b0701a", "#7a4a0e"]

# Words for chances (our own scale): upper bound of each band, word.
CHANCE_WORDS = [
    (0.02, "very unlikely"),
    (0.10, "unlikely"),
    (0.25, "possible"),
    (0.45, "fair"),
    (0.65, "good"),
    (1.01, "very good"),
]


def html_escape(value) -> str:
    """Any value as HTML text or an attribute value (None is empty)."""
    import html

    return html.escape("" if value is None else str(value), quote=True)


def chance_in_words(chance: float) -> str:
    """Plain words for a chance from 0 to 1 (our own bands, common practice, no source)."""
    for upper, word in CHANCE_WORDS:
        if chance < upper:
            return word
    return CHANCE_WORDS[-1][1]


COMPASS_16 = ["N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE",
              "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW"]


def compass_point(azimuth_deg: float) -> str:
    """The 16-point compass name of a true bearing in degrees."""
    return COMPASS_16[int(((azimuth_deg % 360.0) + 11.25) // 22.5) % 16]


# Type: the device's own fonts only, so that pages and charts need nothing from outside.
FONT_STACK = (
    'system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "Helvetica Neue", '
    "Arial, sans-serif"
)
MONO_STACK = 'ui-monospace, "SF Mono", Menlo, Consolas, "DejaVu Sans Mono", monospace'

# What holds a site back tonight, in the words a guide would say to guests.
LIMITING_WORDS = {
    "darkness": "twilight (not dark enough)",
    "moon": "moonlight",
    "activity": "low aurora activity",
    "cloud": "cloud",
    None: "nothing in particular",
}

# How the activity part of a night's chance was made, in words for readers.
KIND_WORDS = {
    "forecast": "Kp forecast",
    "outlook": "outlook from Kp history",
    "none": "no darkness or no data",
}


def limiting_in_words(limiting) -> str:
    """Plain words for the factor that limits a site's chance."""
    return LIMITING_WORDS.get(limiting, str(limiting))


def percent(chance) -> str:
    """A chance from 0 to 1 as a whole percentage ("—" when unknown)."""
    if chance is None:
        return "—"
    return f"{round(100.0 * float(chance)):d} %"


def local_time(iso_text) -> str:
    """HH:MM of a local ISO 8601 time as written in a report ("—" when absent)."""
    if not iso_text:
        return "—"
    import datetime as _dt

    return _dt.datetime.fromisoformat(iso_text).strftime("%H:%M")


def time_span(start_iso, end_iso) -> str:
    """A local time window as HH:MM–HH:MM ("—" when there is none).

    When the clocks change inside the window (the nights of the spring and autumn
    changes) each end carries its UTC offset, e.g. "01:30 UTC+2–02:30 UTC+1", so that a
    window across the repeated autumn hour does not read an hour shorter than it is.
    """
    if not start_iso or not end_iso:
        return "—"
    import datetime as _dt

    start, end = _dt.datetime.fromisoformat(start_iso), _dt.datetime.fromisoformat(end_iso)
    if start.utcoffset() == end.utcoffset():
        return f"{local_time(start_iso)}–{local_time(end_iso)}"
    return f"{local_time(start_iso)} {_utc_offset(start)}–{local_time(end_iso)} {_utc_offset(end)}"


def _utc_offset(t) -> str:
    """'UTC+2', 'UTC-3:30' for an aware datetime."""
    minutes = round(t.utcoffset().total_seconds() / 60)
    sign = "+" if minutes >= 0 else "-"
    hours, rest = divmod(abs(minutes), 60)
    return f"UTC{sign}{hours}" + (f":{rest:02d}" if rest else "")
