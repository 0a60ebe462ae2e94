"""The sales agent's printable itinerary: one trip's nights, outings, kit list and cautions."""

from __future__ import annotations

import dataclasses
import io
import unicodedata
from xml.sax.saxutils import escape

from auroraplan.i18n import Words
from auroraplan.render import style

# Paper sizes in PostScript points: ISO 216 A4 is 210 × 297 mm; US Letter is 8.5 × 11 in.
PAPER_PT = {"a4": (595.2756, 841.8898), "letter": (612.0, 792.0)}

# What to wear and bring on a winter night outing (common practice, no source).
KIT_LIST = [
    "Layered clothing: thermal base layer, warm mid layer, windproof outer layer",
    "Insulated winter boots with good grip (ice cleats if you have them)",
    "Warm hat, mittens (with thin gloves under them), scarf or neck gaiter",
    "Head torch with a red-light setting, to keep your night vision",
    "Spare batteries for phone and camera, kept warm in an inside pocket",
    "A thermos with a hot drink, and a snack",
]

NOT_PRINTED = ("language", "font", "font_bold")
"""Settings of [print] that are not text on the page (checked elsewhere, if at all)."""


def printable(text) -> str:
    """Text as it is printed: composed (Unicode NFC), never folded or replaced.

    The embedded font (``auroraplan.pdffonts``) is checked to hold every character of
    the operator's names before the PDF is laid out.
    """
    return unicodedata.normalize("NFC", "" if text is None else str(text))


def _p(text) -> str:
    """Escape text for a reportlab Paragraph."""
    return escape(printable(text))


def _day(date_text: str, w: Words | None = None) -> str:
    return (w or Words()).short_date(date_text)


def _styles(fonts):
    from reportlab.lib import colors
    from reportlab.lib.styles import ParagraphStyle

    ink, slate = colors.HexColor(style.INK), colors.HexColor(style.SLATE)
    amber = colors.HexColor(style.AMBER_INK)
    body = ParagraphStyle("body", fontName=fonts.regular, fontSize=9.5, leading=12.5,
                          textColor=ink, bulletFontName=fonts.regular)
    return {
        "title": ParagraphStyle("title", parent=body, fontName=fonts.bold, fontSize=18,
                                leading=22, spaceAfter=2),
        "sub": ParagraphStyle("sub", parent=body, textColor=slate, fontSize=10, leading=13),
        "h2": ParagraphStyle("h2", parent=body, fontName=fonts.bold, fontSize=11.5,
                             leading=15, spaceBefore=10, spaceAfter=3, textColor=amber),
        "body": body,
        "cell": ParagraphStyle("cell", parent=body, fontSize=9, leading=11),
        "cellb": ParagraphStyle("cellb", parent=body, fontName=fonts.bold, fontSize=9,
                                leading=11),
        "small": ParagraphStyle("small", parent=body, fontSize=8, leading=10, textColor=slate),
        "bullet": ParagraphStyle("bullet", parent=body, leftIndent=12, bulletIndent=2),
    }


def _names(report: dict, trip: dict, settings=None) -> dict:
    """The operator's texts this itinerary prints, by where they come from."""
    where = f"trips.csv trip {trip['trip']!r}"
    names = {"operator.toml, operator name": report.get("operator", ""),
             "operator.toml, base name": (report.get("base") or {}).get("name", ""),
             f"{where}, trip": trip["trip"], f"{where}, group": trip.get("group", "")}
    for p in report.get("plan", []):
        if str(p["trip"]) == str(trip["trip"]):
            for key in ("site", "backup"):
                if p.get(key):
                    names[f"sites.geojson, site {p[key]!r}"] = p[key]
    for table in ("contact", "print"):
        record = getattr(settings, table, None)
        if record is None:
            continue
        for key, value in dataclasses.asdict(record).items():
            if isinstance(value, str) and key not in NOT_PRINTED:
                names[f"operator.toml [{table}] {key}"] = value
    return names


def _night_rows(report: dict, trip: dict, st: dict, w: Words) -> list:
    from reportlab.platypus import Paragraph

    plan = {p["date"]: p for p in report.get("plan", []) if str(p["trip"]) == str(trip["trip"])}
    header = [w("Night"), w("Outing"), w("Where"), w("Pick-up – return"), w("Chance"),
              w("Based on")]
    rows = [[Paragraph(_p(h), st["cellb"]) for h in header]]
    for night in trip.get("nights", []):
        if not night.get("in_stay", True):
            continue
        rows.append([Paragraph(c, st["cell"])
                     for c in _night_cells(night, plan.get(night["date"]), w)])
    return rows


FREE_EVENING = ("Free evening: no guided outing. Ask the guide whether a seat is free on "
                "another group's outing that night.")
NO_OUTINGS = ("No guided evening outing is planned for your group at present; the office "
              "will tell you if one becomes possible.")


def _night_cells(night: dict, outing: dict | None, w: Words) -> list[str]:
    basis = w(style.KIND_WORDS.get(night.get("kind"), str(night.get("kind"))))
    if outing is None:
        # No chance is shown for an evening the group does not go out: it would read as
        # an offer. The guests are told what they can do instead.
        what = (w("No outing (the group is not available)") if night.get("blocked")
                else w(FREE_EVENING))
        return [_p(_day(night["date"], w)), _p(w("No")), _p(what), "—", "—", "—"]
    where = f"<b>{_p(outing['site'])}</b>"
    if outing.get("look_words"):
        where += f"<br/>look: {_p(outing['look_words'])}"
    if outing.get("backup"):
        where += "<br/>" + _p(w("backup: {site}", site=outing["backup"]))
        if outing.get("backup_chance") is not None:
            where += f" ({_p(w.percent(outing['backup_chance']))})"
    chance = outing.get("chance")
    return [
        _p(_day(night["date"], w)), f"<b>{_p(w('Yes'))}</b>", where,
        _p(f"{w.clock(outing.get('pickup'))} – {w.clock(outing.get('return'))}"),
        _p(f"{w(style.chance_in_words(chance or 0))} ({w.percent(chance)})"),
        _p(basis),
    ]


def _night_table(rows: list, width: float):
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    fractions = [0.15, 0.10, 0.29, 0.15, 0.15, 0.16]
    table = Table(rows, colWidths=[f * width for f in fractions], repeatRows=1)
    table.setStyle(TableStyle([
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LINEBELOW", (0, 0), (-1, 0), 1.0, colors.HexColor(style.INK)),
        ("LINEBELOW", (0, 1), (-1, -1), 0.4, colors.HexColor(style.RULE)),
        ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor(style.AMBER_LIGHT)),
        ("TOPPADDING", (0, 0), (-1, -1), 4), ("BOTTOMPADDING", (0, 0), (-1, -1), 4),
    ]))
    return table


def _made_line(report: dict, w: Words) -> str:
    fc = report.get("forecast") or {}
    made_t = w.stamp(report.get("made_at"))
    note = f" ({w(fc['note'])})" if fc.get("note") else ""
    return (w("Made {when} from {file}{note}.", when=made_t,
              file=fc.get("file") or w("no forecast file"), note=note) + " "
            + w("Nights marked 'Kp forecast' use the space-weather forecast; nights marked "
                "'outlook from Kp history' are beyond it and use what past years were like "
                "in the same season, so treat them as a rough guide."))


# What a forecast chance means, for guests (our own wording; [print] chance_meaning
# replaces it with the operator's).
CHANCE_MEANING = (
    "A chance of 30 % means that on about three of every ten nights with a forecast like "
    "this one, guests at that site saw the aurora at some time in the window; on the other "
    "seven they did not. It is a forecast, never a promise."
)


def _contact_lines(contact, w: Words) -> list[tuple[str, str]]:
    """(label, text) for each [contact] entry that is given; missing entries are left out."""
    rows = []
    place = [contact.meeting_point, contact.meeting_address]
    if contact.meeting_lat is not None and contact.meeting_lon is not None:
        lat, lon = float(contact.meeting_lat), float(contact.meeting_lon)
        place.append(f"{w.number(abs(lat), 4)}° {w('N') if lat >= 0 else w('S')}, "
                     f"{w.number(abs(lon), 4)}° {w('E') if lon >= 0 else w('W')}")
    place = [p for p in place if p]
    if place:
        rows.append((w("Meeting point"), " · ".join(place)))
    if contact.phone:
        rows.append((w("Operator phone"), contact.phone))
    if contact.emergency:
        rows.append((w("Emergency"), contact.emergency))
    return rows


def _footer(report: dict, trip: dict, w: Words, fonts):
    def draw(canvas, doc):
        from reportlab.lib import colors

        canvas.saveState()
        canvas.setFont(fonts.regular, 7.5)
        canvas.setFillColor(colors.HexColor(style.SLATE))
        text = printable(w("{operator} · trip {trip} · page {page} · chances are forecasts, "
                           "not promises", operator=report.get("operator", ""),
                           trip=trip["trip"], page=doc.page))
        canvas.drawString(doc.leftMargin, doc.bottomMargin - 18, text)
        canvas.restoreState()

    return draw


def itinerary_pdf(report: dict, trip_id: str, paper: str = "A4",
                  operator_settings=None, fonts=None) -> bytes:
    """Render one trip of a ``week`` report as a printable PDF itinerary.

    Parameters
    ----------
    report : dict
        The JSON-ready dict the ``week`` command prints with ``--json``.
    trip_id : str
        The ``trip`` identifier from trips.csv.
    paper : {"A4", "Letter"}
        Paper size: ISO 216 A4 (210 × 297 mm) or US Letter (8.5 × 11 in).
    operator_settings : auroraplan.settings.Settings, optional
        The workspace's settings: ``contact`` (meeting point, phone, emergency) and
        ``[print]`` (language, cloudy-night policy, chance meaning). Entries not given are
        left out.
    fonts : auroraplan.pdffonts.PdfFonts or None
        The fonts to embed (``pdffonts.pdf_fonts``); None for DejaVu Sans.

    Returns
    -------
    bytes
        A PDF with the fonts embedded (only the glyphs used), so it prints anywhere.

    Raises
    ------
    auroraplan.errors.InputError
        When the trip is not in the report, the paper size is unknown, or a name holds
        characters the fonts cannot print (one line naming them; never "?").
    """
    from reportlab.lib.units import mm
    from reportlab.platypus import Paragraph, SimpleDocTemplate, Spacer

    from auroraplan.cautions import CAUTIONS, FORECAST_NOT_PROMISE
    from auroraplan.errors import InputError
    from auroraplan.runsheet import ContactSettings, PrintSettings

    contact = operator_settings.contact if operator_settings is not None else ContactSettings()
    printing = operator_settings.print if operator_settings is not None else PrintSettings()
    w = Words(printing.language)
    size = PAPER_PT.get(str(paper).lower())
    if size is None:
        raise InputError(f"paper {paper!r} is not known; choose A4 or Letter")
    from auroraplan.pdffonts import check_coverage, pdf_fonts
    from auroraplan.runsheet import find_trip

    trip = find_trip(report, trip_id)
    fonts = fonts or pdf_fonts()
    check_coverage(fonts, _names(report, trip, operator_settings))
    st = _styles(fonts)
    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf, pagesize=size, leftMargin=18 * mm, rightMargin=18 * mm, topMargin=16 * mm,
        bottomMargin=18 * mm, title=printable(w("Aurora evenings: {group}", group=trip["group"])),
        author=printable(report.get("operator", "")), creator="auroraplan",
        lang=w.language,
    )
    base = (report.get("base") or {}).get("name", "")
    n_out = sum(1 for p in report.get("plan", []) if str(p["trip"]) == str(trip["trip"]))
    contacts = _contact_lines(contact, w)
    story = [
        Paragraph(_p(w("Aurora evenings for {group}", group=trip["group"])), st["title"]),
        Paragraph(_p(w("{operator} · from {base} · trip {trip} · {guests} guests",
                       operator=report.get("operator", ""), base=base, trip=trip["trip"],
                       guests=trip["guests"])), st["sub"]),
        Paragraph(_p(w("Stay: arriving {arrive}, leaving {depart}.",
                       arrive=_day(trip["arrive"], w), depart=_day(trip["depart"], w)) + " "
                     + (w("1 evening outing planned.") if n_out == 1
                        else w("{n} evening outings planned.", n=n_out) if n_out
                        else w(NO_OUTINGS)) + " "
                     + w("Times are local time at the base.")), st["sub"]),
    ]
    if contacts:
        story.append(Spacer(1, 4))
        story.extend(Paragraph(f"<b>{_p(label)}:</b> {_p(text)}", st["body"])
                     for label, text in contacts)
    story += [
        Spacer(1, 8),
        Paragraph(_p(w("Your evenings")), st["h2"]),
        _night_table(_night_rows(report, trip, st, w), doc.width),
        Spacer(1, 4),
        Paragraph(_p(w("If the main site is clouded over or unsafe on the night, the guide "
                       "takes the group to the backup site, or changes the plan.")), st["small"]),
    ]
    if printing.cloudy_night_policy:
        story += [Paragraph(_p(w("If the night is cloudy or cancelled")), st["h2"]),
                  *[Paragraph(_p(part), st["body"])
                    for part in str(printing.cloudy_night_policy).split("\n\n")]]
    story += [
        Paragraph(_p(w("What to wear and bring")), st["h2"]),
        *[Paragraph(_p(w(item)), st["bullet"], bulletText="•") for item in KIT_LIST],
        Paragraph(_p(w("Please read: safety")), st["h2"]),
        *[Paragraph(_p(w(c)), st["bullet"], bulletText="•")
          for c in (report.get("cautions") or CAUTIONS)],
        Paragraph(_p(w("About the chances")), st["h2"]),
        Paragraph(_p(printing.chance_meaning or w(CHANCE_MEANING)), st["body"]),
        Spacer(1, 3),
        Paragraph(_p(w(report.get("notice") or FORECAST_NOT_PROMISE)), st["body"]),
        Spacer(1, 3),
        Paragraph(_p(_made_line(report, w)), st["small"]),
    ]
    footer = _footer(report, trip, w, fonts)
    doc.build(story, onFirstPage=footer, onLaterPages=footer)
    return buf.getvalue()
