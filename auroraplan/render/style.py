"""The project's own look: one palette and type scale shared by every output.

Ink-and-amber on paper by day; deep red on black by night. Chance is drawn
as amber of rising strength on a neutral ground, never as a traffic-light
scale.
"""

from auroraplan.wording import (  # noqa: F401  (the views' names for them)
    CHANCE_WORDS,
    COMPASS_16,
    LIMITING_WORDS,
    chance_in_words,
    compass_point,
    limiting_in_words,
    local_time,
    time_span,
)

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

def html_escape(value) -> str:
    """Any value as HTML text or an attribute value (None is empty)."""
    import html

    return html.escape("" if value is None else str(value), quote=True)


# Type: the device's own fonts only, so that pages and charts need nothing from outside.
FONT_STACK = (
    'system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "Helvetica Neue", '
    "Arial, sans-serif"
)
MONO_STACK = 'ui-monospace, "SF Mono", Menlo, Consolas, "DejaVu Sans Mono", monospace'

# How the activity part of a night's chance was made, in words for readers.
KIND_WORDS = {
    "forecast": "Kp forecast",
    "outlook": "outlook from Kp history",
    "none": "no darkness or no data",
}


def percent(chance) -> str:
    """A chance from 0 to 1 as a whole percentage ("—" when unknown)."""
    if chance is None:
        return "—"
    return f"{round(100.0 * float(chance)):d} %"
