"""Words and clock texts the plan records carry (report.py fills them; the views show them).

They sit outside ``render`` so that computing a plan never imports the presentation
layer; ``render.style`` re-exports them for the views.
"""

# Words for chances (our own scale): upper bound of each band, word.
CHANCE_WORDS = [
    (0.02, "very unlikely"),
    (0.10, "unlikely"),
    (0.25, "possible"),
    (0.45, "fair"),
    (0.65, "good"),
    (1.01, "very good"),
]


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


# What holds a site back tonight, in the words a guide would say to guests.
LIMITING_WORDS = {
    "darkness": "twilight (not dark enough)",
    "moon": "moonlight",
    "activity": "low aurora activity",
    "cloud": "cloud",
    None: "nothing in particular",
}


def limiting_in_words(limiting) -> str:
    """Plain words for the factor that limits a site's chance."""
    return LIMITING_WORDS.get(limiting, str(limiting))
