"""Text for terminals whose encoding lacks a character: the nearest plain letters instead.

Registered as a codec error handler (Python's :func:`codecs.register_error`), so it is
used only for the characters the stream cannot encode: a UTF-8 terminal sees the text
unchanged, an ASCII one sees "Aeroy Strand - 12d" rather than a crash.
"""

import codecs
import unicodedata

ERROR_HANDLER = "auroraplan-plain"

SUBSTITUTES = {
    "—": "-", "–": "-", "−": "-", "‐": "-", "·": ".", "…": "...", "°": "d", "′": "'",
    "″": '"', "‘": "'", "’": "'", "“": '"', "”": '"', "×": "x", "≥": ">=", "≤": "<=",
    "≈": "~", "→": "->", "←": "<-", "✓": "v", "✦": "*", "•": "*", "Æ": "AE", "æ": "ae",
    "Ø": "O", "ø": "o", "Å": "A", "å": "a", "ß": "ss", "Œ": "OE", "œ": "oe", "Þ": "Th",
    "þ": "th", "Ð": "D", "ð": "d", "Ł": "L", "ł": "l", "ŋ": "ng", "Ŋ": "NG", "đ": "d", "Đ": "D",
    "⁻": "-", "¹": "1", "²": "2", "³": "3", "\u00a0": " ", "\u202f": " ", "\u2009": " ",
}
"""Plain stand-ins for common typographic marks and Nordic letters (common practice, no
source); other letters lose their accents by Unicode decomposition (NFKD)."""


def plain(char: str, encoding: str = "ascii") -> str:
    """The nearest text to ``char`` that ``encoding`` can hold ("?" when there is none)."""
    candidates = [SUBSTITUTES.get(char, ""),
                  "".join(c for c in unicodedata.normalize("NFKD", char)
                          if not unicodedata.combining(c))]
    for text in candidates:
        if text:
            try:
                text.encode(encoding)
                return text
            except (UnicodeEncodeError, LookupError):
                continue
    return "?"


def _handler(exc):
    if not isinstance(exc, UnicodeEncodeError):
        raise exc
    bad = exc.object[exc.start:exc.end]
    return "".join(plain(c, exc.encoding) for c in bad), exc.end


def register() -> None:
    """Make ``errors="auroraplan-plain"`` available to streams and ``str.encode``."""
    try:
        codecs.lookup_error(ERROR_HANDLER)
    except LookupError:
        codecs.register_error(ERROR_HANDLER, _handler)
