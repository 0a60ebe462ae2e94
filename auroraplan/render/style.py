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
