"""The guide's offline phone page: tonight's ranked sites as one self-contained HTML file.

Everything the page needs is inside it (inline CSS, inline SVG, a few lines of script, the
device's own fonts), so it keeps working at a roadside with no signal once saved. The only
links are ``geo:`` URIs (RFC 5870) that open the phone's maps app, and in-page anchors.
"""

from __future__ import annotations

import datetime as dt
import html

from auroraplan.render import style

NIGHT_KEY = "auroraplan-night"  # localStorage key that remembers night colours on the device

# Runs in <head> before the body is drawn, so a phone left in night mode never flashes white.
EARLY_SCRIPT = (
    "<script>(function(){try{if(localStorage.getItem('" + NIGHT_KEY + "')==='1')"
    "{document.documentElement.className+=' night';}}catch(e){}})();</script>"
)

TOGGLE_SCRIPT = (
    "<script>(function(){var r=document.documentElement,b=document.getElementById('night');"
    "function show(){var on=r.classList.contains('night');"
    "b.setAttribute('aria-pressed',on?'true':'false');"
    "b.textContent=on?'Day colours':'Red night colours';}"
    "b.addEventListener('click',function(){r.classList.toggle('night');"
    "try{localStorage.setItem('" + NIGHT_KEY + "',r.classList.contains('night')?'1':'0');}"
    "catch(e){}show();});show();})();</script>"
)

CSS = """
:root{--ink:%(ink)s;--paper:%(paper)s;--muted:%(muted)s;--rule:%(rule)s;--accent:%(accent)s;
--accent-ink:%(accent_ink)s;--soft:%(soft)s}
html.night{--ink:%(night_text)s;--paper:%(night_bg)s;--muted:%(night_text)s;--rule:%(night_dim)s;
--accent:%(night_fg)s;--accent-ink:%(night_text)s;--soft:#1a0303}
*{box-sizing:border-box}
html{background:var(--paper);-webkit-text-size-adjust:100%%}
body{margin:0;background:var(--paper);color:var(--ink);font:16px/1.45 %(font)s;
overflow-wrap:anywhere}
header,main,footer{max-width:40rem;margin:0 auto;padding:12px 14px}
header{border-bottom:3px double var(--rule)}
h1{font-size:1.35rem;margin:.1rem 0 .3rem;line-height:1.2}
h2{font-size:1.05rem;margin:1rem 0 .4rem;text-transform:uppercase;letter-spacing:.06em}
h3{font-size:1.15rem;margin:0 0 .2rem;display:flex;gap:.5rem;align-items:baseline}
p{margin:.25rem 0}
.kicker{font-size:.85rem;color:var(--muted);letter-spacing:.04em}
.facts{color:var(--muted);font-size:.95rem}
.bar{display:flex;flex-wrap:wrap;gap:8px;margin-top:.5rem}
button,a.tap{min-height:44px;min-width:44px;padding:10px 14px;font:inherit;font-weight:600;
border:2px solid var(--ink);border-radius:6px;background:var(--paper);color:var(--ink);
text-decoration:none;display:inline-flex;align-items:center;gap:.4rem;cursor:pointer}
a.tap.go{border-color:var(--accent);color:var(--accent-ink)}
ol.sites{list-style:none;margin:0;padding:0}
ol.sites>li{border-top:1px solid var(--rule);padding:.8rem 0}
.rank{font-family:%(mono)s;font-size:.95rem;border:1.5px solid var(--ink);border-radius:4px;
padding:0 .35rem;min-width:1.8rem;text-align:center}
.chance{font-size:1.05rem}
.chance strong{color:var(--accent-ink)}
dl{display:grid;grid-template-columns:max-content 1fr;gap:.15rem .8rem;margin:.5rem 0}
dt{color:var(--muted);font-size:.9rem}
dd{margin:0}
.look{display:flex;align-items:center;gap:.5rem}
svg{display:block;color:var(--accent)}
svg.strip{width:100%%;height:auto;margin:.4rem 0}
svg text{fill:var(--muted);font:10px %(font)s}
.notes{font-size:.95rem;border-left:3px solid var(--rule);padding-left:.6rem;margin:.5rem 0}
section.cautions{border-top:3px double var(--rule);margin-top:.8rem}
section.cautions li{margin:.3rem 0}
.notice{font-weight:600}
footer{font-size:.85rem;color:var(--muted);border-top:1px solid var(--rule)}
"""


def _e(value) -> str:
    """Escape any value for HTML text or an attribute."""
    return html.escape("" if value is None else str(value), quote=True)


def _number(x: float, digits: int = 6) -> str:
    return f"{float(x):.{digits}f}".rstrip("0").rstrip(".")


def geo_uri(lat: float, lon: float) -> str:
    """A ``geo:`` URI for a point (RFC 5870, section 3: ``geo:lat,lon`` in WGS 84 degrees)."""
    return f"geo:{_number(lat)},{_number(lon)}"


def _long_date(date_text: str) -> str:
    d = dt.date.fromisoformat(date_text)
    return f"{d.strftime('%A')} {d.day} {d.strftime('%B %Y')}"


def _stamp(iso_text) -> str:
    """A local time stamp as '14 Jan 2027, 15:42 (UTC+01:00)'."""
    if not iso_text:
        return "unknown time"
    t = dt.datetime.fromisoformat(iso_text)
    zone = t.strftime("%z")
    zone = f" (UTC{zone[:3]}:{zone[3:]})" if zone else ""
    return f"{t.day} {t.strftime('%b %Y, %H:%M')}{zone}"


def _utc_stamp(iso_text) -> str:
    if not iso_text:
        return "—"
    t = dt.datetime.fromisoformat(iso_text).astimezone(dt.UTC)
    return f"{t.day} {t.strftime('%b %H:%M')} UTC"


def bearing_arrow_svg(azimuth_deg, size: int = 44) -> str:
    """A small compass ring with an arrow turned to a true bearing (0° north, clockwise)."""
    c = size / 2
    r = c - 3
    label = f"look towards {round(azimuth_deg)} degrees true"
    return (
        f'<svg width="{size}" height="{size}" viewBox="0 0 {size} {size}" role="img" '
        f'aria-label="{_e(label)}">'
        f'<circle cx="{c}" cy="{c}" r="{r}" fill="none" stroke="currentColor" '
        f'stroke-width="1.5" opacity=".55"/>'
        f'<text x="{c}" y="9" text-anchor="middle" style="font-size:8px">N</text>'
        f'<g transform="rotate({_number(azimuth_deg, 1)} {c} {c})">'
        f'<path d="M{c} {c - r + 4} L{c + 6} {c + 4} L{c} {c} L{c - 6} {c + 4} Z" '
        f'fill="currentColor"/>'
        f'<line x1="{c}" y1="{c}" x2="{c}" y2="{c + r - 5}" stroke="currentColor" '
        f'stroke-width="2"/></g></svg>'
    )


def hour_strip_svg(hourly: list[dict], width: int = 320, height: int = 64) -> str:
    """Bars of the chance hour by hour through the night (full height = 100 %).

    Every elapsed hour has its own bar. When a clock hour occurs twice (the clocks
    go back that night) both bars are labelled, with the zone's abbreviation under
    the hour (e.g. 02 CEST, then 02 CET).
    """
    if not hourly:
        return ""
    n = len(hourly)
    hours = [dt.datetime.fromisoformat(h["time"]).strftime("%H") for h in hourly]
    repeated = {x for x in hours if hours.count(x) > 1}
    if repeated:
        height += 11
    top, base = 6, height - (27 if repeated else 16)
    step = width / n
    span = base - top
    parts = [
        f'<svg class="strip" viewBox="0 0 {width} {height}" role="img" '
        f'aria-label="{_e(_strip_words(hourly))}">',
        f'<line x1="0" y1="{base}" x2="{width}" y2="{base}" stroke="currentColor" '
        f'stroke-width="1" opacity=".6"/>',
        f'<line x1="0" y1="{top + span / 2}" x2="{width}" y2="{top + span / 2}" '
        f'stroke="currentColor" stroke-width=".5" stroke-dasharray="3 3" opacity=".5"/>',
        f'<text x="{width - 2}" y="{top + span / 2 - 2}" text-anchor="end">50 %</text>',
    ]
    for i, h in enumerate(hourly):
        c = min(max(float(h.get("chance") or 0.0), 0.0), 1.0)
        bar = span * c
        x = i * step
        parts.append(
            f'<rect x="{x + 1:.1f}" y="{base - bar:.1f}" width="{max(step - 2, 1):.1f}" '
            f'height="{bar:.1f}" fill="currentColor" data-time="{_e(h["time"])}"/>'
        )
        label_y = height - 14 if repeated else height - 3
        if i % 2 == 0 or hours[i] in repeated:
            parts.append(
                f'<text x="{x + step / 2:.1f}" y="{label_y}" '
                f'text-anchor="middle">{hours[i]}</text>'
            )
        if hours[i] in repeated:
            zone = h.get("zone") or dt.datetime.fromisoformat(h["time"]).strftime("%z")
            parts.append(
                f'<text x="{x + step / 2:.1f}" y="{height - 3}" text-anchor="middle" '
                f'style="font-size:8px">{_e(zone)}</text>'
            )
    parts.append("</svg>")
    return "".join(parts)


def _strip_words(hourly: list[dict]) -> str:
    best = max(hourly, key=lambda h: h.get("chance") or 0.0)
    return (
        f"Chance hour by hour; highest {style.percent(best.get('chance'))} "
        f"at {style.local_time(best['time'])}"
    )


def _look(site: dict) -> str:
    az = site.get("look_azimuth")
    if az is None:
        return "<dd>—</dd>"
    compass = site.get("look_compass") or style.compass_point(az)
    elev = site.get("look_elevation")
    up = f", {round(elev)}° above the horizon" if elev is not None else ""
    return (
        f'<dd class="look">{bearing_arrow_svg(az)}<span>{round(az) % 360}° true '
        f"({_e(compass)}){up}</span></dd>"
    )


def _kp(site: dict) -> str:
    need, fc = site.get("kp_needed"), site.get("kp_forecast")
    if need is None:
        need_t = "needs —"
    elif need <= 0.0:
        need_t = "in view at any Kp"
    else:
        need_t = f"needs {need:.1f}"
    fc_t = f"expected {fc:.1f}" if fc is not None else "no Kp forecast"
    return f"{need_t}, {fc_t}"


def _moon(site: dict) -> str:
    illum = site.get("moon_illumination")
    up = site.get("moon_up_hours")
    lit = f"{round(100 * illum)} % lit" if illum is not None else "—"
    return f"{lit}, up {up:.1f} h of the dark hours" if up is not None else lit


def _cloud(site: dict) -> str:
    cloud = site.get("cloud_pct")
    return f"{round(cloud)} % cover" if cloud is not None else "no cloud forecast (climate average used)"


def _drive(site: dict) -> str:
    d = site.get("drive_min")
    return f"{round(d)} min from base" if d is not None else "—"


def site_item(site: dict) -> str:
    """One shortlisted site as an <li>."""
    words = site.get("chance_words") or style.chance_in_words(site.get("chance") or 0.0)
    window = style.time_span(site.get("window_start"), site.get("window_end"))
    window_t = f"best {window}" if window != "—" else "no good window tonight"
    rows = [
        ("Held back by", _e(style.limiting_in_words(site.get("limiting")))),
        ("Look", None),
        ("Kp", _e(_kp(site))),
        ("Cloud", _e(_cloud(site))),
        ("Moon", _e(_moon(site))),
        ("Drive", _e(_drive(site))),
    ]
    dl = "".join(
        f"<dt>{label}</dt>" + (_look(site) if value is None else f"<dd>{value}</dd>")
        for label, value in rows
    )
    notes = site.get("notes")
    notes_html = f'<p class="notes">{_e(notes)}</p>' if notes else ""
    rank = site.get("rank")
    return (
        f'<li id="site-{_e(rank)}"><h3><span class="rank">{_e(rank)}</span>'
        f"<span>{_e(site['name'])}</span></h3>"
        f'<p class="chance"><strong>{_e(words)}</strong> · {_e(style.percent(site.get("chance")))}'
        f" · {_e(window_t)}</p>"
        f"<dl>{dl}</dl>"
        f"{hour_strip_svg(site.get('hourly') or [])}"
        f"{notes_html}"
        f'<p><a class="tap go" href="{_e(geo_uri(site["lat"], site["lon"]))}">'
        f"Open in maps ({_number(site['lat'], 4)}, {_number(site['lon'], 4)})</a></p>"
        f"</li>"
    )


def _forecast_line(report: dict) -> str:
    fc = report.get("forecast") or {}
    kind = fc.get("kind", "none")
    source = {
        "forecast": "Kp forecast",
        "outlook": "no Kp forecast for tonight; outlook from Kp history",
        "none": "no Kp forecast",
    }.get(kind, kind)
    blocks = ""
    if fc.get("first_block_utc") and fc.get("last_block_utc"):
        blocks = (f" The Kp file covers {_utc_stamp(fc['first_block_utc'])} to "
                  f"{_utc_stamp(fc['last_block_utc'])}.")
    note = f" {fc['note'].rstrip('.')}." if fc.get("note") else ""
    return (f"Made {_stamp(report.get('made_at'))} from {fc.get('file', '—')}: {source}."
            f"{blocks}{note}")


def _header(report: dict) -> str:
    base = report.get("base") or {}
    dark = style.time_span(report.get("dark_start"), report.get("dark_end"))
    level = report.get("darkness_level", "nautical")
    moon = report.get("moon_illumination")
    moon_t = f" Moon {round(100 * moon)} % lit." if moon is not None else ""
    dark_t = f"Dark enough ({level}) {dark}." if dark != "—" else f"No {level} darkness tonight."
    if report.get("darkness_note"):
        dark_t = report["darkness_note"]
    return (
        "<header>"
        f'<p class="kicker">{_e(report.get("operator", ""))} · night run sheet</p>'
        f"<h1>Tonight from {_e(base.get('name', ''))}: {_e(_long_date(report['date']))}</h1>"
        f'<p class="facts">{_e(dark_t)}{_e(moon_t)}</p>'
        f'<p class="facts">{_e(_forecast_line(report))}</p>'
        '<div class="bar"><button id="night" type="button" aria-pressed="false">'
        "Red night colours</button>"
        '<a class="tap" href="#cautions">Safety notes</a></div>'
        "</header>"
    )


def _cautions(report: dict) -> str:
    from auroraplan.cautions import CAUTIONS, FORECAST_NOT_PROMISE

    cautions = report.get("cautions") or CAUTIONS
    notice = report.get("notice") or FORECAST_NOT_PROMISE
    items = "".join(f"<li>{_e(c)}</li>" for c in cautions)
    return (
        '<section class="cautions" id="cautions" aria-labelledby="cautions-h">'
        f'<h2 id="cautions-h">Before you go</h2><ul>{items}</ul>'
        f'<p class="notice">{_e(notice)}</p></section>'
    )


def _css() -> str:
    return CSS % {
        "ink": style.INK, "paper": style.PAPER, "muted": style.SLATE, "rule": style.RULE,
        "accent": style.AMBER, "accent_ink": style.AMBER_INK, "soft": style.AMBER_LIGHT,
        "night_text": style.NIGHT_TEXT, "night_bg": style.NIGHT_BG, "night_dim": style.NIGHT_DIM,
        "night_fg": style.NIGHT_FG, "font": style.FONT_STACK, "mono": style.MONO_STACK,
    }


def phone_page_html(report: dict) -> str:
    """Render a ``tonight`` report as the guide's self-contained offline phone page.

    Parameters
    ----------
    report : dict
        The JSON-ready dict the ``tonight`` command prints with ``--json`` (sites ranked,
        local ISO 8601 times in the base's zone, chances 0..1).

    Returns
    -------
    str
        One HTML5 document with no external requests: inline CSS and SVG, system fonts, and
        only ``geo:`` (RFC 5870) and in-page links. Night colours (red on black) are kept in
        the device's localStorage and applied before first paint.
    """
    sites = sorted(report.get("sites") or [], key=lambda s: s.get("rank") or 0)
    items = "".join(site_item(s) for s in sites)
    empty = report.get("closed_note") or "No site has a usable chance tonight."
    shortlist = f'<ol class="sites">{items}</ol>' if items else f"<p>{_e(empty)}</p>"
    base = (report.get("base") or {}).get("name", "")
    title = f"Tonight from {base}, {report.get('date', '')}"
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title>{EARLY_SCRIPT}<style>{_css()}</style></head>"
        f"<body>{_header(report)}<main>"
        f'<section aria-labelledby="shortlist-h"><h2 id="shortlist-h">Sites, best first</h2>'
        f"{shortlist}</section>{_cautions(report)}</main>"
        f"<footer><p>{_e(_forecast_line(report))}</p>"
        "<p>Times are local. Bearings are true (not magnetic). "
        "Made with auroraplan.</p></footer>"
        f"{TOGGLE_SCRIPT}</body></html>\n"
    )
