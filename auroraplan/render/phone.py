"""The guide's offline phone page: tonight's ranked sites as one self-contained HTML file.

Everything the page needs is inside it (inline CSS, inline SVG, a few lines of script, the
device's own fonts), so it keeps working at a roadside with no signal once saved. The only
links are ``geo:`` URIs (RFC 5870) that open the phone's maps app, and in-page anchors.
"""

from __future__ import annotations

import datetime as dt
import math

from auroraplan import runsheet
from auroraplan.i18n import Words
from auroraplan.render import style
from auroraplan.render.logbook_form import CSS as LOGBOOK_CSS
from auroraplan.render.logbook_form import logbook_form_html

NIGHT_KEY = "auroraplan-night"  # localStorage key that remembers night colours on the device

# Runs in <head> before the body is drawn, so the page never flashes white in the dark.
# Night colours are the default between the page's own dark_start and dark_end (device
# clock, no network); a choice made with the toggle is kept on the device until that
# night's darkness ends ("1|<ms>" or "0|<ms>").
EARLY_SCRIPT = (
    "<script>(function(){var r=document.documentElement,on=null,n=Date.now();"
    "try{var v=localStorage.getItem('" + NIGHT_KEY + "');"
    "if(v){var p=v.split('|');if(!p[1]||+p[1]>n)on=p[0]==='1';}}catch(e){}"
    "if(on===null){var s=Date.parse(r.getAttribute('data-dark-start')||''),"
    "e=Date.parse(r.getAttribute('data-dark-end')||'');on=n>=s&&n<e;}"
    "if(on)r.className+=' night';})();</script>"
)

TOGGLE_SCRIPT = (
    "<script>(function(){var r=document.documentElement,b=document.getElementById('night');"
    "function show(){var on=r.classList.contains('night');"
    "b.setAttribute('aria-pressed',on?'true':'false');"
    "b.textContent=on?b.getAttribute('data-day'):b.getAttribute('data-night');}"
    "b.addEventListener('click',function(){r.classList.toggle('night');"
    "var e=Date.parse(r.getAttribute('data-dark-end')||''),n=Date.now();"
    "if(!(e>n))e=n+432e5;"
    "try{localStorage.setItem('" + NIGHT_KEY + "',"
    "(r.classList.contains('night')?'1':'0')+'|'+e);}"
    "catch(x){}show();});show();"
    "var a=document.getElementById('kp-age');if(a){var h=(Date.now()-Date.parse("
    "a.getAttribute('data-issued')))/36e5;if(h>+a.getAttribute('data-max')){"
    "a.textContent=a.getAttribute('data-text').replace('{hours}',Math.round(h));"
    "a.hidden=false;a.parentNode.hidden=false;}}})();</script>"
)

CSS = """
:root{--ink:%(ink)s;--paper:%(paper)s;--muted:%(muted)s;--rule:%(rule)s;--accent:%(accent)s;
--accent-ink:%(accent_ink)s;--soft:%(soft)s;--warn:%(warn)s}
html.night{--ink:%(night_text)s;--paper:%(night_bg)s;--muted:%(night_text)s;--rule:%(night_dim)s;
--accent:%(night_fg)s;--accent-ink:%(night_text)s;--soft:%(night_bg)s;--warn:%(night_text)s}
*{box-sizing:border-box}
html{background:var(--paper);-webkit-text-size-adjust:100%%}
body{margin:0;background:var(--paper);color:var(--ink);font:16px/1.4 %(font)s;
overflow-wrap:anywhere}
header,main,footer{max-width:40rem;margin:0 auto;padding:10px 14px}
header{border-bottom:3px double var(--rule)}
h1{font-size:1.3rem;margin:.1rem 0 .2rem;line-height:1.2}
h2{font-size:1.1rem;margin:1rem 0 .4rem;text-transform:uppercase;letter-spacing:.05em}
h3{font-size:1.15rem;margin:0 0 .2rem;display:flex;gap:.5rem;align-items:baseline}
p{margin:.25rem 0}
.kicker{font-size:1rem;color:var(--muted);letter-spacing:.03em}
.facts{color:var(--muted);font-size:1rem}
.bar{display:flex;flex-wrap:wrap;gap:8px;margin-top:.5rem}
button,a.tap,summary{min-height:44px;min-width:44px;padding:10px 14px;font:inherit;font-weight:600;
border:2px solid var(--ink);border-radius:6px;background:var(--paper);color:var(--ink);
text-decoration:none;display:inline-flex;align-items:center;gap:.4rem;cursor:pointer}
a.tap.go{border-color:var(--accent);color:var(--accent-ink)}
ol.sites{list-style:none;margin:0;padding:0}
ol.sites>li{border-top:1px solid var(--rule);padding:.8rem 0}
.rank{font-family:%(mono)s;font-size:1rem;border:1.5px solid var(--ink);border-radius:4px;
padding:0 .35rem;min-width:1.8rem;text-align:center}
.chance{font-size:1.05rem}
.chance strong{color:var(--accent-ink)}
dl{display:grid;grid-template-columns:max-content 1fr;gap:.15rem .8rem;margin:.5rem 0}
dt{color:var(--muted);font-size:1rem}
dd{margin:0}
.look{display:flex;align-items:center;gap:.6rem}
svg.compass{flex:none;width:%(compass)spx;height:%(compass)spx}
svg{display:block;color:var(--accent)}
svg.strip{width:100%%;height:auto;margin:.4rem 0}
svg text{fill:var(--muted);font:16px %(font)s}
.notes{font-size:1rem;border-left:3px solid var(--rule);padding-left:.6rem;margin:.5rem 0}
section.cautions{border-top:3px double var(--rule);margin-top:.8rem}
section.cautions li{margin:.3rem 0}
.notice{font-weight:600}
footer{font-size:1rem;color:var(--muted);border-top:1px solid var(--rule)}
.call{border:3px solid var(--ink);border-radius:8px;padding:.45rem .7rem;margin:.4rem 0;
background:var(--soft)}
.call .verdict{font-size:1.5rem;font-weight:800;letter-spacing:.02em;margin:0;line-height:1.2}
.call p{margin:.15rem 0}
.outing dl{grid-template-columns:6.2rem 1fr;margin:.3rem 0;gap:.2rem .6rem}
.outing dt{font-weight:600;color:var(--ink)}
.outing dd strong{font-size:1.15rem}
.age{border-left:6px solid var(--warn);padding:.2rem .6rem;margin:.4rem 0;font-size:1.15rem;
font-weight:700;color:var(--ink)}
.age p{margin:.1rem 0}
details.all>summary{list-style:none;margin:.6rem 0}
details.all>summary::-webkit-details-marker{display:none}
"""


_e = style.html_escape


def _number(x: float, digits: int = 6) -> str:
    return f"{float(x):.{digits}f}".rstrip("0").rstrip(".")


def geo_uri(lat: float, lon: float) -> str:
    """A ``geo:`` URI for a point (RFC 5870, section 3: ``geo:lat,lon`` in WGS 84 degrees)."""
    return f"geo:{_number(lat)},{_number(lon)}"


def _stamp(iso_text) -> str:
    """A local time stamp as '14 Jan 2027, 15:42 (UTC+01:00)'."""
    return Words().stamp(iso_text)


def _utc_stamp(iso_text) -> str:
    if not iso_text:
        return "—"
    t = dt.datetime.fromisoformat(iso_text.replace("Z", "+00:00")).astimezone(dt.UTC)
    return f"{t.day} {t.strftime('%b %H:%M')} UTC"


COMPASS_PX = 104  # at least 96 CSS px, so that N, E, S and W read at 16 px inside the ring


def bearing_arrow_svg(azimuth_deg, size: int = COMPASS_PX, words: Words | None = None) -> str:
    """A compass ring, true north up, with an arrow turned to a true bearing (0° north,
    clockwise) and the four cardinal letters at 16 px."""
    w = words or Words()
    c = size / 2
    r = c - 2
    label = w("look towards {deg} degrees true", deg=round(azimuth_deg))
    letters = "".join(
        f'<text x="{c + dx * (r - 11):.1f}" y="{c + dy * (r - 11) + 6:.1f}" '
        f'text-anchor="middle">{_e(w(name))}</text>'
        for name, dx, dy in (("N", 0, -1), ("E", 1, 0), ("S", 0, 1), ("W", -1, 0))
    )
    tip = c - r + 22
    return (
        f'<svg class="compass" width="{size}" height="{size}" viewBox="0 0 {size} {size}" '
        f'role="img" aria-label="{_e(label)}">'
        f'<circle cx="{c}" cy="{c}" r="{r}" fill="none" stroke="currentColor" '
        f'stroke-width="2"/>{letters}'
        f'<g transform="rotate({_number(azimuth_deg, 1)} {c} {c})">'
        f'<path d="M{c} {tip} L{c + 9} {c + 6} L{c} {c} L{c - 9} {c + 6} Z" '
        f'fill="currentColor"/>'
        f'<line x1="{c}" y1="{c}" x2="{c}" y2="{c + r - 24}" stroke="currentColor" '
        f'stroke-width="3"/></g></svg>'
    )


def hour_strip_svg(hourly: list[dict], width: int = 320, height: int = 84,
                   words: Words | None = None) -> str:
    """Bars of the chance in each hour through the night (full height = 100 %).

    Every elapsed hour has its own bar; labels are 16 px. When a clock hour occurs twice
    (the clocks go back that night) both bars are labelled, with the zone's abbreviation
    under the hour (e.g. 02 CEST, then 02 CET).
    """
    if not hourly:
        return ""
    n = len(hourly)
    hours = [dt.datetime.fromisoformat(h["time"]).strftime("%H") for h in hourly]
    repeated = {x for x in hours if hours.count(x) > 1}
    if repeated:
        height += 18
    top, base = 6, height - (40 if repeated else 22)
    step = width / n
    span = base - top
    every = max(1, math.ceil(24 / step))  # a two-digit label at 16 px is about 20 px wide
    parts = [
        f'<svg class="strip" viewBox="0 0 {width} {height}" role="img" '
        f'aria-label="{_e(_strip_words(hourly, words or Words()))}">',
        f'<line x1="0" y1="{base}" x2="{width}" y2="{base}" stroke="currentColor" '
        f'stroke-width="1"/>',
        f'<line x1="0" y1="{top + span / 2}" x2="{width}" y2="{top + span / 2}" '
        f'stroke="currentColor" stroke-width=".75" stroke-dasharray="3 3"/>',
    ]
    for i, h in enumerate(hourly):
        c = min(max(float(h.get("chance_in_hour") or 0.0), 0.0), 1.0)
        bar = span * c
        x = i * step
        parts.append(
            f'<rect x="{x + 1:.1f}" y="{base - bar:.1f}" width="{max(step - 2, 1):.1f}" '
            f'height="{bar:.1f}" fill="currentColor" data-time="{_e(h["time"])}"/>'
        )
        label_y = height - 22 if repeated else height - 4
        if i % every == 0 or hours[i] in repeated:
            parts.append(
                f'<text x="{x + step / 2:.1f}" y="{label_y}" '
                f'text-anchor="middle">{hours[i]}</text>'
            )
        if hours[i] in repeated:
            zone = h.get("zone") or dt.datetime.fromisoformat(h["time"]).strftime("%z")
            parts.append(
                f'<text x="{x + step / 2:.1f}" y="{height - 3}" text-anchor="middle">'
                f"{_e(zone)}</text>"
            )
    parts.append("</svg>")
    return "".join(parts)


def _strip_words(hourly: list[dict], w: Words) -> str:
    best = max(hourly, key=lambda h: h.get("chance_in_hour") or 0.0)
    return w("Chance of a sighting in each hour; highest {percent} at {time}",
             percent=w.percent(best.get("chance_in_hour")), time=w.clock(best["time"]))


def _look_text(site: dict, w: Words) -> str | None:
    az = site.get("look_azimuth")
    if az is None:
        return None
    if site.get("overhead"):
        return w("overhead; the whole sky, watch toward the equator too")
    compass = site.get("look_compass") or style.compass_point(az)
    elev = site.get("look_elevation")
    text = w("{deg}° true ({compass})", deg=round(az) % 360, compass=w(compass))
    if elev is not None:
        text += ", " + w("{deg}° above the horizon", deg=round(elev))
    return text


def _look(site: dict, w: Words) -> str:
    text = _look_text(site, w)
    if text is None:
        return "<dd>—</dd>"
    return (f'<dd class="look">{bearing_arrow_svg(site["look_azimuth"], words=w)}'
            f"<span>{_e(text)}</span></dd>")


def _kp(site: dict, w: Words) -> str:
    need, fc = site.get("kp_needed"), site.get("kp")
    if need is None:
        need_t = w("needs Kp above 9")
    elif need <= 0.0:
        need_t = w("in view at any Kp")
    else:
        need_t = w("needs {kp}", kp=w.number(need))
    fc_t = w("expected {kp}", kp=w.number(fc)) if fc is not None else w("no Kp forecast")
    return f"{need_t}, {fc_t}"


def _moon(site: dict, w: Words) -> str:
    illum = site.get("moon_illumination")
    up = site.get("moon_up_hours")
    lit = w("{percent} lit", percent=w.percent(illum)) if illum is not None else "—"
    if up is None:
        return lit
    return w("{lit}, up {hours} h of the dark hours", lit=lit, hours=w.number(up))


def _cloud(site: dict, w: Words) -> str:
    cloud = site.get("cloud_pct")
    text = (w("no cloud forecast (climate average used)") if cloud is None
            else w("{percent} cover", percent=w.percent(cloud / 100.0)))
    models = site.get("cloud_models") or {}
    if cloud is not None and site.get("cloud_source"):
        text += " " + w("(from {source})", source=w(site["cloud_source"]))
    if models:
        each = ", ".join(f"{name} {w.percent(value / 100.0)}" for name, value in models.items())
        text += "; " + w("models: {each}", each=each)
        if site.get("cloud_spread_pct") is not None:
            text += "; " + w("spread {points} points", points=round(site["cloud_spread_pct"]))
    return text


def _drive(site: dict, w: Words) -> str:
    d = site.get("drive_min")
    return w("{minutes} min from base", minutes=round(d)) if d is not None else "—"


def site_item(site: dict, words: Words | None = None) -> str:
    """One shortlisted site as an <li>."""
    w = words or Words()
    words_t = w(site.get("chance_words") or style.chance_in_words(site.get("chance") or 0.0))
    window = style.time_span(site.get("window_start"), site.get("window_end"))
    window_t = w("best {window}", window=window) if window != "—" else w("no good window tonight")
    rows = [
        (w("Held back by"), _e(w(style.limiting_in_words(site.get("limiting"))))),
        (w("Look"), None),
        ("Kp", _e(_kp(site, w))),
        (w("Cloud"), _e(_cloud(site, w))),
        (w("Moon"), _e(_moon(site, w))),
        (w("Drive"), _e(_drive(site, w))),
    ]
    dl = "".join(
        f"<dt>{_e(label)}</dt>" + (_look(site, w) if value is None else f"<dd>{value}</dd>")
        for label, value in rows
    )
    notes = site.get("notes")
    notes_html = f'<p class="notes">{_e(notes)}</p>' if notes else ""
    rank = site.get("rank")
    return (
        f'<li id="site-{_e(rank)}"><h3><span class="rank">{_e(rank)}</span>'
        f"<span>{_e(site['name'])}</span></h3>"
        f'<p class="chance"><strong>{_e(words_t)}</strong> · {_e(w.percent(site.get("chance")))}'
        f" {_e(w('during the outing window'))} · {_e(window_t)}</p>"
        f"<dl>{dl}</dl>"
        f"{hour_strip_svg(site.get('hourly') or [], words=w)}"
        f"{notes_html}"
        f'<p><a class="tap go" href="{_e(geo_uri(site["lat"], site["lon"]))}">'
        f"{_e(w('Open in maps'))} ({_number(site['lat'], 4)}, {_number(site['lon'], 4)})</a></p>"
        f"</li>"
    )


def _forecast_line(report: dict, w: Words) -> str:
    fc = report.get("forecast") or {}
    kind = fc.get("kind", "none")
    source = {
        "forecast": w("Kp forecast"),
        "outlook": w("no Kp forecast for tonight; outlook from Kp history"),
        "none": w("no Kp forecast"),
    }.get(kind, kind)
    blocks = ""
    if fc.get("first_block_utc") and fc.get("last_block_utc"):
        blocks = " " + w("The Kp file covers {first} to {last}.",
                         first=_utc_stamp(fc["first_block_utc"]),
                         last=_utc_stamp(fc["last_block_utc"]))
    note = f" {w(fc['note'].rstrip('.') + '.')}" if fc.get("note") else ""
    return (w("Made {when} from {file}: {source}.", when=w.stamp(report.get("made_at")),
              file=fc.get("file") or "—", source=source) + f"{blocks}{note}")


def _nowcast(report: dict) -> str:
    """What the upstream solar wind says for the next hour, when it speaks for tonight."""
    cast = report.get("nowcast") or {}
    if not cast.get("used"):
        return ""
    text = " ".join(t for t in (cast.get("note"), cast.get("expect")) if t)
    return f'<p class="nowcast" id="nowcast">{_e(text)}</p>'


def _night_facts(report: dict, w: Words) -> str:
    dark = style.time_span(report.get("dark_start"), report.get("dark_end"))
    level = w(report.get("darkness_level", "nautical"))
    moon = report.get("moon_illumination")
    moon_t = " " + w("Moon {percent} lit.", percent=w.percent(moon)) if moon is not None else ""
    dark_t = (w("Dark enough ({level}) {span}.", level=level, span=dark) if dark != "—"
              else w("No {level} darkness tonight.", level=level))
    if report.get("darkness_note"):
        dark_t = w(report["darkness_note"])
    if report.get("what_if"):  # a page made under assumptions must say so first
        dark_t = w("What-if, not tonight's real inputs: {assumed}.",
                   assumed="; ".join(report["what_if"])) + " " + dark_t
    return dark_t + moon_t


def _toggle(w: Words) -> str:
    return (f'<button id="night" type="button" aria-pressed="false" '
            f'data-night="{_e(w("Red night colours"))}" data-day="{_e(w("Day colours"))}">'
            f"{_e(w('Red night colours'))}</button>")


def _header(report: dict, w: Words) -> str:
    base = report.get("base") or {}
    return (
        "<header>"
        f'<p class="kicker">{_e(report.get("operator", ""))} · {_e(w("night run sheet"))}</p>'
        f"<h1>{_e(w('Tonight from {base}: {date}', base=base.get('name', ''), date=w.long_date(report['date'])))}</h1>"
        f'<p class="facts">{_e(_night_facts(report, w))}</p>'
        f'<p class="facts">{_e(_forecast_line(report, w))}</p>'
        f"{_nowcast(report)}"
        f'<div class="bar">{_toggle(w)}'
        f'<a class="tap" href="#cautions">{_e(w("Safety notes"))}</a></div>'
        "</header>"
    )


def _cautions(report: dict, w: Words) -> str:
    from auroraplan.cautions import CAUTIONS, FORECAST_NOT_PROMISE

    cautions = report.get("cautions") or CAUTIONS
    notice = report.get("notice") or FORECAST_NOT_PROMISE
    items = "".join(f"<li>{_e(w(c))}</li>" for c in cautions)
    return (
        '<section class="cautions" id="cautions" aria-labelledby="cautions-h">'
        f'<h2 id="cautions-h">{_e(w("Before you go"))}</h2><ul>{items}</ul>'
        f'<p class="notice">{_e(w(notice))}</p></section>'
    )


def _css() -> str:
    return CSS % {
        "ink": style.INK, "paper": style.PAPER, "muted": style.SLATE, "rule": style.RULE,
        "accent": style.AMBER, "accent_ink": style.AMBER_INK, "soft": style.AMBER_LIGHT,
        "warn": style.AMBER, "compass": COMPASS_PX,
        "night_text": style.NIGHT_TEXT, "night_bg": style.NIGHT_BG, "night_dim": style.NIGHT_DIM,
        "night_fg": style.NIGHT_FG, "font": style.FONT_STACK, "mono": style.MONO_STACK,
    } + LOGBOOK_CSS


def _document(title: str, lang: str, report: dict, body: str, words: Words) -> str:
    dark = "".join(f' data-{k.replace("_", "-")}="{_e(report[k])}"'
                   for k in ("dark_start", "dark_end") if report.get(k))
    return (
        f'<!DOCTYPE html>\n<html lang="{_e(lang)}"{dark}><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title>{EARLY_SCRIPT}<style>{_css()}</style></head>"
        f"<body>{body}"
        f"<footer><p>{_e(_forecast_line(report, words))}</p>"
        f"<p>{_e(words('Times are local. Bearings are true (not magnetic). Made with auroraplan.'))}</p>"
        f"</footer>{TOGGLE_SCRIPT}</body></html>\n"
    )


def _shortlist(report: dict, w: Words) -> str:
    sites = sorted(report.get("sites") or [], key=lambda s: s.get("rank") or 0)
    items = "".join(site_item(s, w) for s in sites)
    empty = w(report.get("closed_note") or "No site has a usable chance tonight.")
    if not items:
        return f"<p>{_e(empty)}</p>"
    explained = report.get("chance_explained")
    note = f'<p class="facts">{_e(w(explained))}</p>' if explained else ""
    return f'{note}<ol class="sites">{items}</ol>'



def phone_page_html(report: dict, language: str = "en") -> str:
    """Render a ``tonight`` report as the guide's self-contained offline phone page.

    Parameters
    ----------
    report : dict
        The JSON-ready dict the ``tonight`` command prints with ``--json`` (sites ranked,
        local ISO 8601 times in the base's zone, chances 0..1).
    language : str
        A language of :data:`auroraplan.i18n.LANGUAGES`.

    Returns
    -------
    str
        One HTML5 document with no external requests: inline CSS and SVG, system fonts, and
        only ``geo:`` (RFC 5870) and in-page links. Night colours (red on black) are the
        default during the night's darkness and a guide's choice is kept on the device.
    """
    w = Words(language)
    base = (report.get("base") or {}).get("name", "")
    body = (f"{_header(report, w)}<main>"
            f'<section aria-labelledby="shortlist-h"><h2 id="shortlist-h">'
            f"{_e(w('Sites, best first'))}</h2>{_shortlist(report, w)}</section>"
            f"{_cautions(report, w)}</main>")
    title = w("Tonight from {base}, {date}", base=base, date=report.get("date", ""))
    return _document(title, language, report, body, w)


# ---------------------------------------------------------------------------------------
# The guide's run sheet: one group's outing on the first screen, the site list below.

def _age(sheet: dict, report: dict, w: Words) -> str:
    """Old or missing data in plain, large words; JavaScript adds the forecast's age as
    read on the device's clock when the page is opened later."""
    lines = [f"<p>{_e(text)}</p>" for text in runsheet.notice_sentences(sheet, w)]
    fc = report.get("forecast") or {}
    live = ""
    if fc.get("kind") == "forecast" and fc.get("issued_utc") and not any(
            i["key"] == "kp forecast old" for i in sheet.get("data_age") or []):
        max_h = (sheet.get("settings") or {}).get("forecast_max_age_h", 12)
        live = (f'<p id="kp-age" hidden data-issued="{_e(fc["issued_utc"])}" '
                f'data-max="{_e(max_h)}" data-text="{_e(w(runsheet.AGE_LIVE))}"></p>')
    if not lines and not live:
        return ""
    hidden = "" if lines else " hidden"
    return (f'<section class="age" id="age" aria-label="{_e(w("Data age"))}"{hidden}>'
            f'{"".join(lines)}{live}</section>')


def _call(sheet: dict, w: Words) -> str:
    verdict, reason = runsheet.call_words(sheet, w)
    call = (sheet.get("decision") or {}).get("call", "none")
    return (f'<section class="call" id="call" data-call="{call}" '
            f'aria-label="{_e(w("Tonight’s call"))}">'
            f'<p class="verdict">{_e(verdict)}</p><p>{_e(reason)}</p></section>')


def _outing_facts(sheet: dict, w: Words) -> str:
    if sheet.get("outing") is None:
        return ""
    place = sheet.get("pickup_place") or {}
    main, backup = sheet.get("site") or {}, sheet.get("backup")
    drive = sheet.get("drive_min")
    site_t = f"<strong>{_e(sheet['site_name'])}</strong>"
    if drive is not None:
        site_t += ", " + _e(w("{minutes} min drive", minutes=round(drive)))
    if backup is not None:
        backup_t = (f"{_e(backup['name'])} ({_e(w.percent(backup.get('chance')))}, "
                    f"{_e(w('{minutes} min drive', minutes=round(backup.get('drive_min') or 0)))})")
    else:
        backup_t = _e(sheet.get("backup_name") or w("none planned"))
    window = style.time_span(sheet.get("window_start"), sheet.get("window_end"))
    rows = [
        ("pickup", w("Pick-up"), f"<strong>{_e(w.clock(sheet.get('pickup')))}</strong> "
                                 f"{_e(place.get('name') or '')}"),
        ("site", w("Site"), site_t),
        ("backup", w("Backup"), backup_t),
        ("window", w("Window"), f"<strong>{_e(window)}</strong> · "
                                f"{_e(w('back {time}', time=w.clock(sheet.get('return'))))}"),
    ]
    dl = "".join(f'<dt>{_e(label)}</dt><dd id="{key}">{value}</dd>' for key, label, value in rows)
    look = _look_text(main, w) if main else None
    if look is not None:
        dl += (f"<dt>{_e(w('Look'))}</dt><dd class=\"look\" id=\"look\">"
               f"{bearing_arrow_svg(main['look_azimuth'], words=w)}<span>{_e(look)}</span></dd>")
    return f'<section class="outing" aria-label="{_e(w("The outing"))}"><dl>{dl}</dl></section>'


def run_sheet_html(sheet: dict, report: dict, language: str = "en") -> str:
    """The guide's run sheet for one group tonight, as one offline page.

    The first screen of a phone (390 × 844 CSS px) holds the group, guests, pick-up time
    and place, site, backup, drive, window, where to look and the go / wait / swap line
    with its reason, and any old or missing data in large words; the logbook form
    (:mod:`auroraplan.render.logbook_form`) and the whole site list follow, collapsed.

    Parameters
    ----------
    sheet : dict
        :func:`auroraplan.runsheet.run_sheet`.
    report : dict
        The ``tonight`` report of the same night (every open site).
    language : str
        A language of :data:`auroraplan.i18n.LANGUAGES`.
    """
    w = Words(language)
    main = sheet.get("site") or {}
    maps = (f'<a class="tap go" href="{_e(geo_uri(main["lat"], main["lon"]))}">'
            f"{_e(w('Site in maps'))}</a>" if main.get("lat") is not None else "")
    nowcast = _nowcast(report)
    n_sites = len(report.get("sites") or [])
    header = (
        "<header>"
        f'<p class="kicker">{_e(report.get("operator", ""))} · {_e(w("run sheet"))} · '
        f"{_e(w.long_date(report['date']))}</p>"
        f"<h1>{_e(sheet['trip'])} {_e(sheet['group'])} · "
        f"{_e(w('{n} guests', n=sheet['guests']))}</h1></header>"
    )
    body = (
        f"{header}<main>{_call(sheet, w)}{_age(sheet, report, w)}"
        f"{_outing_facts(sheet, w)}{nowcast}"
        f'<div class="bar">{_toggle(w)}{maps}'
        f'<a class="tap" href="#cautions">{_e(w("Safety notes"))}</a></div>'
        f"{logbook_form_html(sheet, report, w)}"
        f'<details class="all"><summary>{_e(w("All {n} sites tonight", n=n_sites))}</summary>'
        f'<p class="facts">{_e(_night_facts(report, w))}</p>'
        f"{_shortlist(report, w)}</details>"
        f"{_cautions(report, w)}</main>"
    )
    title = w("Run sheet {trip}, {date}", trip=sheet["trip"], date=report.get("date", ""))
    return _document(title, language, report, body, w)
