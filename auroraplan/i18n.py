"""Words for guests and guides in their own language: gettext catalogues and Babel formats.

Texts are written in English in the code (the message ids); each other language keeps its
translations in a gettext catalogue, ``auroraplan/locale/<lang>/LC_MESSAGES/auroraplan.po``,
read with Babel's PO reader (no compiled ``.mo`` file to keep in step). Dates, times and
numbers are formatted with Babel from the Unicode CLDR data for the language.
"""

from __future__ import annotations

import datetime as dt
import functools
from importlib import resources

DOMAIN = "auroraplan"

# Languages with a catalogue, and the CLDR locale used for their dates and numbers.
# British English spelling and day-month order; German for the many German-speaking
# guests in Nordic aurora tourism.
LANGUAGES = {"en": "en_GB", "de": "de_DE"}


@functools.cache
def _catalogue(language: str) -> dict[str, str]:
    """msgid -> translation for one language (empty for English, the language of the ids)."""
    if language == "en":
        return {}
    from babel.messages.pofile import read_po

    path = resources.files("auroraplan") / "locale" / language / "LC_MESSAGES" / f"{DOMAIN}.po"
    with path.open("rb") as fh:
        catalogue = read_po(fh, locale=LANGUAGES[language], domain=DOMAIN)
    return {m.id: m.string for m in catalogue if m.id and m.string and not m.fuzzy}


class Words:
    """Translate and format for one language.

    ``words("Pick-up at {time}", time="19:40")`` looks the English text up in the
    language's catalogue (the English text itself when there is no translation) and fills
    in the named fields.
    """

    def __init__(self, language: str = "en"):
        if language not in LANGUAGES:
            raise ValueError(f"language {language!r}: choose one of {', '.join(LANGUAGES)}")
        self.language = language
        self.locale = LANGUAGES[language]
        self._texts = _catalogue(language)

    def __call__(self, text: str, **fields) -> str:
        out = self._texts.get(text, text)
        return out.format(**fields) if fields else out

    def has(self, text: str) -> bool:
        """True when the catalogue translates ``text`` (always for English)."""
        return self.language == "en" or text in self._texts

    def long_date(self, date: dt.date | str) -> str:
        """'Thursday, 14 January 2027' / 'Donnerstag, 14. Januar 2027' (CLDR full date)."""
        from babel.dates import format_date

        return format_date(_date(date), "full", locale=self.locale)

    def short_date(self, date: dt.date | str) -> str:
        """'Thu 14 Jan 2027' / 'Do., 14. Jan. 2027' (CLDR medium date with the weekday)."""
        from babel.dates import format_date

        d = _date(date)
        return f"{format_date(d, 'EEE', locale=self.locale)} {format_date(d, 'medium', locale=self.locale)}"

    def stamp(self, iso_text: str | None) -> str:
        """A local time stamp: '24 Mar 2027, 16:10 (UTC+01:00)' (CLDR medium date)."""
        if not iso_text:
            return self("unknown time")
        from babel.dates import format_date

        t = dt.datetime.fromisoformat(iso_text)
        zone = t.strftime("%z")
        zone = f" (UTC{zone[:3]}:{zone[3:]})" if zone else ""
        return f"{format_date(t, 'medium', locale=self.locale)}, {t:%H:%M}{zone}"

    def clock(self, iso_text: str | None) -> str:
        """HH:MM (24-hour, as in both languages) of a local ISO time; a dash when absent."""
        if not iso_text:
            return "—"
        from babel.dates import format_time

        return format_time(dt.datetime.fromisoformat(iso_text), "HH:mm", locale=self.locale)

    def percent(self, chance) -> str:
        """A chance 0..1 as a whole percentage in the language's style; a dash when unknown."""
        if chance is None:
            return "—"
        from babel.numbers import format_percent

        return format_percent(float(chance), "#,##0 %" if self.language == "en" else None,
                              locale=self.locale)

    def number(self, value, digits: int = 1) -> str:
        """A number with ``digits`` decimals and the language's decimal sign (3.5 / 3,5)."""
        from babel.numbers import format_decimal

        pattern = "0." + "0" * digits if digits > 0 else "0"
        return format_decimal(float(value), format=pattern, locale=self.locale)


def _date(value) -> dt.date:
    return dt.date.fromisoformat(value[:10]) if isinstance(value, str) else value
