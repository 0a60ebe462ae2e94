"""Fonts for printed itineraries: every name printed as written, or one line saying what cannot be.

The PDF's own standard fonts hold only Western European letters. Guests and groups come
from everywhere, so the itinerary embeds DejaVu Sans (Latin, Greek, Cyrillic and more),
which matplotlib installs with itself, and only the glyphs used (reportlab subsets
TrueType fonts). For other scripts (Chinese, Japanese, Arabic, ...) the operator names a
TrueType font in operator.toml::

    [print]
    font = "fonts/NotoSansSC-Regular.ttf"        # relative to the workspace
    font_bold = "fonts/NotoSansSC-Bold.ttf"      # optional; else the same font

Text a font cannot show is never replaced by "?": :func:`check_coverage` names the
characters and says what to do.
"""

from __future__ import annotations

import importlib.util
import unicodedata
from dataclasses import dataclass
from pathlib import Path

from auroraplan.errors import InputError

DEJAVU = ("DejaVuSans.ttf", "DejaVuSans-Bold.ttf")
"""The DejaVu fonts (Bitstream Vera licence with DejaVu changes; free to embed) in
matplotlib's ``mpl-data/fonts/ttf`` folder."""

SHOWN_CHARACTERS = 8
"""Most missing characters quoted in an error line."""


@dataclass(frozen=True)
class PdfFonts:
    """Registered reportlab font names and what they cover."""

    regular: str
    bold: str
    label: str  # how an error line names the font
    covered: frozenset  # code points both fonts have

    def missing(self, text: str) -> list[str]:
        """Characters of ``text`` these fonts cannot print (spaces and controls aside)."""
        return [c for c in dict.fromkeys(unicodedata.normalize("NFC", str(text)))
                if ord(c) not in self.covered and not c.isspace()
                and unicodedata.category(c)[0] != "C"]


def dejavu_folder() -> Path:
    """matplotlib's folder of bundled fonts, found without importing matplotlib."""
    spec = importlib.util.find_spec("matplotlib")
    if spec is None or not spec.origin:
        raise InputError("the DejaVu fonts come with matplotlib, which is not installed; "
                         "install auroraplan's dependencies")
    return Path(spec.origin).parent / "mpl-data" / "fonts" / "ttf"


_cache: dict = {}


def pdf_fonts(font: str | Path | None = None, font_bold: str | Path | None = None) -> PdfFonts:
    """Register the itinerary's fonts with reportlab (once per process) and return them.

    Parameters
    ----------
    font, font_bold : path or None
        An operator's TrueType font (and its bold face); None for DejaVu Sans.
    """
    key = (str(font) if font else None, str(font_bold) if font_bold else None)
    if key in _cache:
        return _cache[key]
    if font:
        regular_path, bold_path = Path(font), Path(font_bold or font)
        label = Path(font).name
    else:
        folder = dejavu_folder()
        regular_path, bold_path = folder / DEJAVU[0], folder / DEJAVU[1]
        label = "DejaVu Sans"
    names = []
    covered = None
    for path, suffix in ((regular_path, ""), (bold_path, "-Bold")):
        name = f"auroraplan-{len(_cache)}{suffix}"
        cmap = _register(name, path)
        covered = cmap if covered is None else covered & cmap
        names.append(name)
    from reportlab.pdfbase.pdfmetrics import registerFontFamily

    registerFontFamily(names[0], normal=names[0], bold=names[1], italic=names[0],
                       boldItalic=names[1])
    fonts = PdfFonts(names[0], names[1], label, frozenset(covered))
    _cache[key] = fonts
    return fonts


def _register(name: str, path: Path) -> frozenset:
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFError, TTFont

    try:
        font = TTFont(name, str(path))
    except (OSError, TTFError) as exc:
        raise InputError(f"{path}: cannot be used as a font for the itinerary ({exc}); give a "
                         "TrueType font file (.ttf) in operator.toml [print] font") from None
    pdfmetrics.registerFont(font)
    return frozenset(font.face.charToGlyph)


def check_coverage(fonts: PdfFonts, texts: dict) -> None:
    """Refuse text the fonts cannot print, naming where it is and which characters.

    Parameters
    ----------
    texts : dict of str -> str
        Where a text comes from (e.g. "trips.csv trip T3, group") -> the text.

    Raises
    ------
    InputError
        One line per text with characters the fonts lack (at most SHOWN_CHARACTERS quoted).
    """
    problems = []
    for where, text in texts.items():
        bad = fonts.missing(text)
        if bad:
            shown = ", ".join(f"{c} (U+{ord(c):04X})" for c in bad[:SHOWN_CHARACTERS])
            more = f" and {len(bad) - SHOWN_CHARACTERS} more" if len(bad) > SHOWN_CHARACTERS else ""
            problems.append(f"{where}: the itinerary font {fonts.label} cannot print {shown}{more}; "
                            "name a TrueType font that has them in operator.toml "
                            '[print] font = "FILE.ttf"')
    if problems:
        raise InputError(problems)


def workspace_font(ws) -> tuple[Path | None, Path | None]:
    """The operator's itinerary fonts from operator.toml [print] (relative to the workspace)."""
    printing = ws.settings.print
    paths = []
    for key in ("font", "font_bold"):
        name = getattr(printing, key)
        if not name:
            paths.append(None)
            continue
        path = Path(ws.path) / Path(name).expanduser()
        if not path.is_file():
            raise InputError(f"operator.toml: [print] {key} {name!r}: no such file in {ws.path}; "
                             "give a TrueType font file (.ttf)")
        paths.append(path)
    return paths[0], paths[1]


def itinerary_texts(ws, trips) -> dict:
    """Every text of the operator's that an itinerary of ``trips`` may print, by where it is."""
    op = ws.operator
    texts = {"operator.toml, operator name": op.name if op else "",
             "operator.toml, base name": op.base_name if op else ""}
    for site in ws.sites:
        texts[f"sites.geojson, site {site.name!r}"] = site.name
    for trip in trips:
        texts[f"trips.csv trip {trip.trip!r}, trip"] = trip.trip
        texts[f"trips.csv trip {trip.trip!r}, group"] = trip.group
    return texts
