"""The operator's charts: a night's timeline, the week's heat map, the oval map and the season.

Drawn with matplotlib's Agg backend on our own palette (style.py): paper ground, ink text,
amber for chance, teal for magnetic things, plum for the moon, blue for cloud. Each chart
is a PNG of fixed pixel size returned as bytes.
"""

from __future__ import annotations

import datetime as dt
import io
import math
from zoneinfo import ZoneInfo

import numpy as np

from auroraplan.render import style

DPI = 100
SIZE_PX = {
    "timeline": (1600, 900),
    "heatmap": (1600, 900),
    "oval": (1200, 1200),
    "season": (1600, 900),
    "reliability": (1100, 1100),
}
EARTH_RADIUS_KM = 6371.0  # mean radius, IUGG (Moritz 2000, Geodetic Reference System 1980)

RC = {
    "text.parse_math": False,  # names are user text: "$5 day, $2 night" is not mathematics
    "font.family": "DejaVu Sans",
    "font.size": 12,
    "axes.edgecolor": style.SLATE,
    "axes.labelcolor": style.INK,
    "axes.titlecolor": style.INK,
    "axes.facecolor": style.PAPER,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": style.RULE,
    "grid.linewidth": 0.6,
    "xtick.color": style.SLATE,
    "ytick.color": style.SLATE,
    "text.color": style.INK,
    "legend.frameon": False,
    "hatch.color": style.SLATE,
}


def _figure(kind: str):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    w, h = SIZE_PX[kind]
    fig = Figure(figsize=(w / DPI, h / DPI), dpi=DPI, facecolor=style.PAPER,
                 layout="constrained")
    FigureCanvasAgg(fig)
    return fig


CHART_FONT = "DejaVu Sans"
"""The charts' font (matplotlib's own, Bitstream Vera licence with DejaVu changes): Latin,
Greek and Cyrillic; an operator's TrueType font named in operator.toml [print] (see
:mod:`auroraplan.pdffonts`) is added after it for the characters it lacks."""

_fallbacks: dict = {}  # font file -> (family name, code points it has)


def use_workspace_fonts(ws) -> None:
    """Draw with the operator's itinerary fonts (operator.toml [print] font, font_bold)
    after DejaVu Sans, so a name in a script DejaVu lacks is drawn, not boxed."""
    from auroraplan.pdffonts import workspace_font

    for path in workspace_font(ws):
        if path is None or str(path) in _fallbacks:
            continue
        from matplotlib import font_manager

        font_manager.fontManager.addfont(str(path))
        name = font_manager.FontProperties(fname=str(path)).get_name()
        _fallbacks[str(path)] = (name, _code_points(path))
        RC["font.family"] = [CHART_FONT, *dict.fromkeys(n for n, _ in _fallbacks.values())]


def _code_points(path) -> frozenset:
    from matplotlib.ft2font import FT2Font

    return frozenset(FT2Font(str(path)).get_charmap())


def _covered() -> frozenset:
    """Code points the chart fonts have: DejaVu Sans and the operator's fonts."""
    from auroraplan.pdffonts import DEJAVU, dejavu_folder

    if "dejavu" not in _fallbacks:
        _fallbacks["dejavu"] = (None, _code_points(dejavu_folder() / DEJAVU[0]))
    return frozenset().union(*(cps for _, cps in _fallbacks.values()))


def _undrawable_line(where: str, text: str, covered: frozenset) -> str | None:
    """One error line for the characters of ``text`` no chart font has, or None."""
    import unicodedata

    bad = [c for c in dict.fromkeys(str(text)) if ord(c) not in covered and not c.isspace()
           and unicodedata.category(c)[0] != "C"]
    if not bad:
        return None
    shown = ", ".join(f"{c} (U+{ord(c):04X})" for c in bad[:8])
    return (f"{where}: the chart font {CHART_FONT} cannot draw {shown}; name a TrueType font "
            'that has them in operator.toml [print] font = "FILE.ttf", or write the name '
            "without them")


def check_workspace_names(ws) -> None:
    """Before any work: every name of the workspace a chart may draw can be drawn.

    Raises
    ------
    InputError
        One line per name naming the characters no chart font has (never an empty box).
    """
    from auroraplan.errors import InputError
    from auroraplan.pdffonts import itinerary_texts

    use_workspace_fonts(ws)
    covered = _covered()
    problems = [line for where, text in itinerary_texts(ws, ws.trips).items()
                if (line := _undrawable_line(where, text, covered))]
    if problems:
        raise InputError(problems)


def _png(fig) -> bytes:
    from matplotlib.text import Text

    from auroraplan.errors import InputError

    covered = _covered()
    for artist in fig.findobj(match=Text):
        line = _undrawable_line(repr(artist.get_text()[:60]), artist.get_text(), covered)
        if line:
            raise InputError(line)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, facecolor=fig.get_facecolor())
    return buf.getvalue()


def _ramp_cmap():
    from matplotlib.colors import LinearSegmentedColormap

    return LinearSegmentedColormap.from_list("auroraplan_chance", style.CHANCE_RAMP)


def _floats(values) -> np.ndarray:
    return np.array([np.nan if v is None else float(v) for v in values], dtype=float)


def _text_on(hex_colour: str) -> str:
    """Ink or paper, whichever reads better on a cell colour (WCAG 2.1 relative luminance)."""
    rgb = [int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    lum = 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]
    return style.INK if lum > 0.2 else style.PAPER


def _hex(rgba) -> str:
    return "#{:02x}{:02x}{:02x}".format(*(int(round(255 * c)) for c in rgba[:3]))


def _shade_dark(ax, times, dark):
    """Shade the dark steps on an axis (one span per run of dark steps)."""
    dark = np.asarray(dark, dtype=bool)
    if not dark.any():
        return
    edges = np.flatnonzero(np.diff(np.r_[0, dark.astype(int), 0]))
    for start, stop in zip(edges[::2], edges[1::2], strict=True):
        ax.axvspan(times[start], times[stop - 1], color=style.INK, alpha=0.07, lw=0)


def night_timeline_png(timeline: dict) -> bytes:
    """One site's night as stacked panels on a shared local-time axis.

    Parameters
    ----------
    timeline : dict
        ``times`` (local ISO 8601), ``sun_alt``, ``moon_alt`` (degrees), ``dark`` (bool),
        ``kp_needed``, ``kp_forecast``, ``kp_sd``, ``cloud_pct`` (null where none),
        ``chance_in_hour`` (0..1: the chance of a sighting in the hour holding each
        step, the same figure as the phone page's hour bars) and ``chance_by_time``
        (0..1: the chance of a sighting by that time, ending at the night's chance),
        all at the same 10-minute steps; ``timezone`` (IANA).

    Returns
    -------
    bytes
        PNG, 1600 × 900 px: sun and moon altitude with the dark hours shaded; Kp needed
        against forecast Kp with a ±1 sd band; cloud cover; the chance in each hour as
        steps and the chance by each time as a line.
    """
    import matplotlib
    from matplotlib.dates import DateFormatter, HourLocator

    zone = ZoneInfo(timeline.get("timezone", "UTC"))
    times = [dt.datetime.fromisoformat(t).astimezone(zone) for t in timeline["times"]]
    dark = timeline.get("dark") or [False] * len(times)
    with matplotlib.rc_context(RC):
        fig = _figure("timeline")
        axes = fig.subplots(4, 1, sharex=True, height_ratios=[3, 2.2, 1.4, 2])
        sky, kp, cloud, chance = axes
        for ax in axes:
            _shade_dark(ax, times, dark)

        sky.plot(times, _floats(timeline["sun_alt"]), color=style.AMBER, lw=2, label="Sun")
        sky.plot(times, _floats(timeline["moon_alt"]), color=style.PLUM, lw=2, label="Moon")
        sky.axhline(0, color=style.SLATE, lw=1)
        sky.set_ylabel("altitude (°)")
        sky.legend(loc="upper right", ncols=3, handles=[
            *sky.get_lines()[:2],
            matplotlib.patches.Patch(color=style.INK, alpha=0.12,
                                     label=f"dark ({timeline.get('darkness_level', '')})"),
        ])

        need = _floats(timeline["kp_needed"])
        fc, sd = _floats(timeline["kp_forecast"]), _floats(timeline["kp_sd"])
        kp.fill_between(times, fc - sd, fc + sd, color=style.TEAL, alpha=0.18, lw=0,
                        label="forecast ± 1 sd")
        kp.plot(times, fc, color=style.TEAL, lw=2, label="Kp forecast")
        kp.plot(times, need, color=style.INK, lw=1.8, ls=(0, (5, 3)), label="Kp needed here")
        kp.set_ylabel("Kp")
        kp.set_ylim(0, max(5.0, np.nanmax(np.r_[need, fc + sd, 0.0]) + 0.5))
        kp.legend(loc="upper right", ncols=3)

        cl = _floats(timeline["cloud_pct"])
        cloud.fill_between(times, 0, cl, color=style.SKY_BLUE, alpha=0.35, lw=0)
        cloud.plot(times, cl, color=style.SKY_BLUE, lw=1.5)
        cloud.set_ylim(0, 100)
        cloud.set_ylabel("cloud (%)")

        ch = 100 * _floats(timeline["chance_in_hour"])
        by = 100 * _floats(timeline["chance_by_time"])
        chance.fill_between(times, 0, ch, color=style.AMBER_LIGHT, lw=0, step="post",
                            label="chance in this hour")
        chance.plot(times, by, color=style.AMBER_INK, lw=2, label="chance by this time")
        chance.set_ylim(0, 105)
        chance.set_ylabel("chance (%)")
        chance.legend(loc="upper left", ncols=2)
        chance.xaxis.set_major_locator(HourLocator(byhour=range(0, 24, 2), tz=zone))
        chance.xaxis.set_major_formatter(DateFormatter("%H:%M", tz=zone))
        chance.set_xlabel(f"local time ({timeline.get('timezone', 'UTC')})")
        chance.set_xlim(times[0], times[-1])
        fig.suptitle(f"{timeline['site']}: the night of {timeline['date']}", x=0.01,
                     ha="left", fontsize=16, fontweight="bold")
        return _png(fig)


def _day_label(date_text: str) -> str:
    d = dt.date.fromisoformat(date_text)
    return f"{d.strftime('%a')}\n{d.day} {d.strftime('%b')}"


def week_heatmap_png(heatmap: dict) -> bytes:
    """Nights × sites chance as a heat map on the amber ramp, values written in the cells.

    Parameters
    ----------
    heatmap : dict
        ``title``, ``dates`` (D), ``sites`` (S), ``chance`` (S lists of D values 0..1) and
        ``kinds`` (D of "forecast" | "outlook" | "none").

    Returns
    -------
    bytes
        PNG, 1600 × 900 px. Outlook nights are hatched, nights without data crossed.
    """
    import matplotlib
    from matplotlib.patches import Patch, Rectangle

    chance = np.array([_floats(row) for row in heatmap["chance"]], dtype=float)
    sites, dates, kinds = heatmap["sites"], heatmap["dates"], heatmap["kinds"]
    cmap = _ramp_cmap()
    hatches = {"outlook": "///", "none": "xx"}
    with matplotlib.rc_context({**RC, "axes.grid": False}):
        fig = _figure("heatmap")
        ax = fig.subplots()
        mesh = ax.pcolormesh(np.ma.masked_invalid(chance), cmap=cmap, vmin=0, vmax=1,
                             edgecolors=style.PAPER, linewidth=2)
        for (s, d), value in np.ndenumerate(chance):
            if np.isnan(value):
                continue
            ax.text(d + 0.5, s + 0.5, f"{round(100 * value)} %", ha="center", va="center",
                    fontsize=15, fontweight="bold", color=_text_on(_hex(cmap(value))))
        for d, kind in enumerate(kinds):
            if kind in hatches:
                ax.add_patch(Rectangle((d, 0), 1, len(sites), fill=False, hatch=hatches[kind],
                                       edgecolor=style.SLATE, alpha=0.35, lw=0))
        ax.set_xticks(np.arange(len(dates)) + 0.5,
                      [f"{_day_label(d)}\n{k}" for d, k in zip(dates, kinds, strict=True)])
        ax.set_yticks(np.arange(len(sites)) + 0.5, sites)
        ax.invert_yaxis()
        ax.tick_params(length=0)
        for side in ("left", "bottom"):
            ax.spines[side].set_visible(False)
        bar = fig.colorbar(mesh, ax=ax, shrink=0.8, pad=0.01)
        bar.set_ticks([0, 0.25, 0.5, 0.75, 1.0], labels=["0 %", "25 %", "50 %", "75 %", "100 %"])
        bar.set_label("chance of seeing aurora (a forecast, not a promise)")
        ax.legend(handles=[
            Patch(facecolor=style.PAPER, edgecolor=style.SLATE, label="Kp forecast"),
            Patch(facecolor=style.PAPER, edgecolor=style.SLATE, hatch="///",
                  label="outlook from Kp history"),
            Patch(facecolor=style.PAPER, edgecolor=style.SLATE, hatch="xx",
                  label="no darkness or no data"),
        ], loc="upper left", bbox_to_anchor=(0, -0.14), ncols=3)
        ax.set_title(heatmap.get("title", ""), loc="left", fontsize=16, fontweight="bold")
        return _png(fig)


def azimuthal_equidistant_km(lat, lon, lat0: float, lon0: float):
    """Project points onto a plane centred on (lat0, lon0): east and north in km.

    Azimuthal equidistant projection on a sphere: distances and bearings from the centre
    are true. Snyder (1987), eqs. (5-3), (25-2), (22-4), (22-5).

    Parameters
    ----------
    lat, lon : array_like
        Points in degrees (north, east positive).
    lat0, lon0 : float
        Centre of the projection in degrees.

    Returns
    -------
    x_km, y_km : ndarray
        East and north distances on the plane, in km (sphere of radius 6371 km).

    References
    ----------
    Snyder, J. P. (1987). Map Projections: A Working Manual. USGS Professional Paper 1395,
    pp. 191–202.
    """
    phi, lam = np.radians(np.asarray(lat, float)), np.radians(np.asarray(lon, float))
    phi0, lam0 = math.radians(lat0), math.radians(lon0)
    dlam = lam - lam0
    cos_c = np.clip(math.sin(phi0) * np.sin(phi) + math.cos(phi0) * np.cos(phi) * np.cos(dlam),
                    -1.0, 1.0)
    c = np.arccos(cos_c)
    with np.errstate(invalid="ignore", divide="ignore"):
        k = np.where(c > 1e-12, c / np.sin(c), 1.0)
    x = EARTH_RADIUS_KM * k * np.cos(phi) * np.sin(dlam)
    y = EARTH_RADIUS_KM * k * (math.cos(phi0) * np.sin(phi)
                               - math.sin(phi0) * np.cos(phi) * np.cos(dlam))
    return x, y


def _basemap_lines(path) -> list[np.ndarray]:
    """Coastlines or region edges from a GeoJSON / GeoPackage file as (lon, lat) arrays."""
    import geopandas
    import shapely

    from auroraplan.errors import InputError

    try:
        frame = geopandas.read_file(path)
    except Exception as exc:  # pyogrio raises several types for unreadable files
        raise InputError(f"{path}: cannot read the basemap layer ({exc}); give a GeoJSON "
                         "or GeoPackage file of coastlines or regions") from None
    if frame.crs is not None and frame.crs.to_epsg() != 4326:
        frame = frame.to_crs(4326)
    lines = []
    for geom in frame.geometry.dropna():
        edge = geom.boundary if geom.geom_type in ("Polygon", "MultiPolygon") else geom
        for part in shapely.get_parts(edge):
            if part.geom_type in ("LineString", "LinearRing"):
                lines.append(np.asarray(part.coords)[:, :2])
    return lines


def oval_map_png(oval_map: dict) -> bytes:
    """The oval band around the base with the sites, on a base-centred map in km.

    Parameters
    ----------
    oval_map : dict
        ``base`` {name, lat, lon}; ``sites`` [{name, lat, lon, closed}]; ``kp``;
        ``when_utc``; ``bands`` {equatorward, poleward, diffuse: {lat: [...], lon: [...]}}
        (geographic polylines, NaN or null between pieces); ``basemap``: path of a GeoJSON
        or GeoPackage layer, or null.

    Returns
    -------
    bytes
        PNG, 1200 × 1200 px, azimuthal equidistant around the base (north up at the base).
    """
    import matplotlib

    base = oval_map["base"]
    lat0, lon0 = float(base["lat"]), float(base["lon"])
    sites = oval_map.get("sites") or []
    sx, sy = azimuthal_equidistant_km([s["lat"] for s in sites], [s["lon"] for s in sites],
                                      lat0, lon0)
    far = float(np.max(np.hypot(sx, sy))) if sites else 0.0
    half = max(900.0, 1.3 * far)
    band_style = {
        "diffuse": dict(color=style.TEAL, lw=1.5, ls=":", label="diffuse aurora, equatorward edge"),
        "equatorward": dict(color=style.TEAL, lw=2.5, ls="-", label="oval, equatorward edge"),
        "poleward": dict(color=style.TEAL, lw=1.8, ls="--", label="oval, poleward edge"),
    }
    with matplotlib.rc_context(RC):
        fig = _figure("oval")
        ax = fig.subplots()
        ax.set_aspect("equal")
        if oval_map.get("basemap"):
            for line in _basemap_lines(oval_map["basemap"]):
                x, y = azimuthal_equidistant_km(line[:, 1], line[:, 0], lat0, lon0)
                ax.plot(x, y, color=style.SLATE, lw=0.8, alpha=0.8)
        bands = oval_map.get("bands") or {}
        projected = {}
        for name in ("diffuse", "equatorward", "poleward"):
            if name not in bands:
                continue
            x, y = azimuthal_equidistant_km(_floats(bands[name]["lat"]),
                                            _floats(bands[name]["lon"]), lat0, lon0)
            projected[name] = (x, y)
            ax.plot(x, y, **band_style[name])
        _fill_band(ax, projected)
        for r in _ring_radii(half):
            ax.add_patch(matplotlib.patches.Circle((0, 0), r, fill=False, ec=style.RULE,
                                                   lw=0.8, ls="-"))
            if r < half:
                ax.text(r * 0.7071, r * 0.7071, f"{r:.0f} km", color=style.SLATE, fontsize=10)
        key = []
        for number, (s, x, y) in enumerate(zip(sites, sx, sy, strict=True), start=1):
            closed = bool(s.get("closed"))
            ax.plot(x, y, "o", ms=8, mfc="none" if closed else style.INK, mec=style.INK, mew=1.5)
            ax.annotate(str(number), (x, y), xytext=(5, 4), textcoords="offset points",
                        fontsize=10, fontweight="bold", color=style.INK)
            key.append(f"{number}  {s['name']}" + ("  (closed)" if closed else ""))
        if key:
            ax.text(0.99, 0.01, "\n".join(key), transform=ax.transAxes, ha="right",
                    va="bottom", multialignment="left", fontsize=11, linespacing=1.5,
                    bbox=dict(facecolor=style.PAPER, edgecolor=style.RULE, boxstyle="round"))
        ax.plot(0, 0, "s", ms=12, color=style.AMBER_INK)
        ax.annotate(base["name"], (0, 0), xytext=(9, -18), textcoords="offset points",
                    fontsize=12, fontweight="bold", color=style.AMBER_INK)
        ax.set_xlim(-half, half)
        ax.set_ylim(-half, half)
        ax.set_xlabel("km east of the base")
        ax.set_ylabel("km north of the base")
        ax.legend(loc="upper left")
        when = dt.datetime.fromisoformat(oval_map["when_utc"]).astimezone(dt.UTC)
        ax.set_title(f"Aurora band for Kp {float(oval_map['kp']):.1f}, "
                     f"{when.strftime('%d %b %Y %H:%M')} UTC, around {base['name']}",
                     loc="left", fontsize=15, fontweight="bold")
        return _png(fig)


def _ring_radii(half_km: float) -> list[float]:
    step = 100.0 if half_km <= 600 else 250.0 if half_km <= 1500 else 500.0
    return list(np.arange(step, half_km * 1.42, step))


def _fill_band(ax, projected: dict) -> None:
    """Shade between the equatorward and poleward edges when both are unbroken polylines."""
    if "equatorward" not in projected or "poleward" not in projected:
        return
    (ex, ey), (px, py) = projected["equatorward"], projected["poleward"]
    xs, ys = np.r_[ex, px[::-1]], np.r_[ey, py[::-1]]
    if np.isnan(xs).any() or np.isnan(ys).any():
        return
    ax.fill(xs, ys, color=style.TEAL, alpha=0.12, lw=0, label="oval band")


def moon_glyph_xy(illumination: float, waxing: bool, radius: float = 1.0, n: int = 24):
    """Outline of the lit part of the moon's disc, as seen from the northern hemisphere.

    The lit part is bounded by the limb on the sunward side (the right while waxing) and
    by the terminator, an ellipse of semi-axis ``radius * (1 - 2k)`` across, where k is the
    illuminated fraction (the terminator is a great circle seen obliquely; Meeus,
    Astronomical Algorithms, 2nd ed., ch. 48, k = (1 + cos i) / 2).

    Returns
    -------
    x, y : ndarray
        Closed polygon, centre (0, 0), north up; empty lit part at new moon.
    """
    k = min(max(float(illumination), 0.0), 1.0)
    t = np.linspace(-np.pi / 2, np.pi / 2, n)
    limb_x, limb_y = radius * np.cos(t), radius * np.sin(t)
    term_x = radius * np.cos(t[::-1]) * (1.0 - 2.0 * k)
    x = np.r_[limb_x, term_x]
    y = np.r_[limb_y, limb_y[::-1]]
    return (x if waxing else -x), y


def season_calendar_png(season: dict) -> bytes:
    """A season at a glance: one strip per month, a column per night, the moon on top.

    Each night is a column whose filled height is its dark hours (the full cell is 24 h)
    in the colour of its chance; a dash marks a night with no darkness; an ink frame a
    night inside the Kp forecast. Above each column, the moon's phase (lit part filled).

    Parameters
    ----------
    season : dict
        ``title``, ``dates`` (YYYY-MM-DD), ``chance`` (0..1), ``dark_hours`` and ``kinds``
        ("forecast" | "outlook" | "none") per date; optionally ``moon_illumination`` (0..1)
        per date, and ``south`` (true for a southern base: the moon is drawn mirrored).

    Returns
    -------
    bytes
        PNG, 1600 × 900 px.
    """
    import matplotlib
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch, Polygon, Rectangle
    from matplotlib.transforms import ScaledTranslation

    dates = [dt.date.fromisoformat(d) for d in season["dates"]]
    chance, dark_h = _floats(season["chance"]), _floats(season["dark_hours"])
    kinds = season["kinds"]
    moon = season.get("moon_illumination")
    moon = _floats(moon) if moon is not None else None
    months = sorted({(d.year, d.month) for d in dates})
    row = {m: i for i, m in enumerate(months)}
    cmap = _ramp_cmap()
    bar_h, moon_y = 0.62, 0.80  # share of a month's strip: bars below, moon row above
    with matplotlib.rc_context({**RC, "axes.grid": False}):
        fig = _figure("season")
        ax = fig.subplots()
        for i, d in enumerate(dates):
            x, y = d.day - 1, row[(d.year, d.month)]
            base = y + 0.92
            ax.add_patch(Rectangle((x + 0.12, base - bar_h), 0.76, bar_h, facecolor="none",
                                   edgecolor=style.RULE, lw=0.8))
            no_dark = kinds[i] == "none" or not dark_h[i] > 0 or np.isnan(chance[i])
            if no_dark:
                ax.plot([x + 0.25, x + 0.75], [base - 0.06, base - 0.06], color=style.SLATE,
                        lw=2, solid_capstyle="butt")
            else:
                h = bar_h * min(dark_h[i], 24.0) / 24.0
                ax.add_patch(Rectangle((x + 0.12, base - h), 0.76, h,
                                       facecolor=_hex(cmap(chance[i])), edgecolor="none"))
                if kinds[i] == "forecast":
                    ax.add_patch(Rectangle((x + 0.12, base - bar_h), 0.76, bar_h, fill=False,
                                           edgecolor=style.INK, lw=1.8))
            if moon is not None and np.isfinite(moon[i]):
                nxt = moon[min(i + 1, len(moon) - 1)] if i + 1 < len(moon) else moon[i]
                prev = moon[i - 1] if i else moon[i]
                waxing = (nxt > moon[i]) if i + 1 < len(moon) else (moon[i] > prev)
                if season.get("south"):
                    waxing = not waxing
                gx, gy = moon_glyph_xy(moon[i], waxing, radius=0.075)
                place = fig.dpi_scale_trans + ScaledTranslation(x + 0.5, y + 0.92 - moon_y,
                                                                 ax.transData)
                ax.add_patch(matplotlib.patches.Circle((0, 0), 0.075, transform=place,
                                                       facecolor=style.PAPER,
                                                       edgecolor=style.PLUM, lw=0.8))
                if moon[i] > 0.01:
                    ax.add_patch(Polygon(np.c_[gx, -gy], closed=True, transform=place,
                                         facecolor=style.PLUM, edgecolor="none"))
        ax.set_xlim(0, 31)
        ax.set_ylim(len(months), 0)
        ax.set_yticks(np.arange(len(months)) + 0.55,
                      [dt.date(yr, mo, 1).strftime("%b %Y") for yr, mo in months])
        ax.set_xticks(np.arange(0, 31, 5) + 0.5, [str(n) for n in range(1, 32, 5)])
        ax.xaxis.tick_top()
        ax.set_xlabel("night of the month (evening date)")
        ax.xaxis.set_label_position("top")
        ax.tick_params(length=0)
        for side in ax.spines:
            ax.spines[side].set_visible(False)
        mappable = matplotlib.cm.ScalarMappable(cmap=cmap, norm=matplotlib.colors.Normalize(0, 1))
        bar = fig.colorbar(mappable, ax=ax, shrink=0.7, pad=0.01)
        bar.set_ticks([0, 0.25, 0.5, 0.75, 1.0], labels=["0 %", "25 %", "50 %", "75 %", "100 %"])
        bar.set_label("chance of a sighting, best site (an outlook, not a promise)")
        handles = [
            Patch(facecolor=style.CHANCE_RAMP[3], edgecolor=style.RULE,
                  label="height: dark hours (full box = 24 h)"),
            Patch(facecolor="none", edgecolor=style.INK, lw=1.8, label="inside the Kp forecast"),
            Line2D([], [], color=style.SLATE, lw=2, label="no darkness"),
        ]
        if moon is not None:
            handles.append(Line2D([], [], marker="o", ls="", ms=9, mfc=style.PLUM,
                                  mec=style.PLUM, label="moon: lit part filled"))
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(0, 0), ncols=4)
        fig.suptitle(season.get("title", ""), x=0.01, ha="left", fontsize=16, fontweight="bold")
        return _png(fig)


def reliability_png(scores: dict, title: str) -> bytes:
    """Reliability diagram: issued chance (bin mean) against observed frequency with the
    Wilson 95 % interval per bin, the diagonal of perfect reliability, the base rate, and
    the number of pairs per bin beneath (Wilks 2011, Statistical Methods in the
    Atmospheric Sciences, 3rd ed., 8.4.4). ``scores`` is one entry of verify.scores."""
    import matplotlib

    rows = [b for b in scores["reliability"] if b["count"]]
    with matplotlib.rc_context(RC):
        fig = _figure("reliability")
        grid = fig.add_gridspec(2, 1, height_ratios=(4, 1))
        ax = fig.add_subplot(grid[0])
        counts = fig.add_subplot(grid[1], sharex=ax)
        ax.plot([0, 1], [0, 1], color=style.SLATE, linewidth=1, linestyle=(0, (4, 3)),
                label="chance = how often it happened")
        base = scores["decomposition"]["base_rate"]
        if base is not None:
            ax.axhline(base, color=style.RULE, linewidth=1.2,
                       label=f"base rate {100 * base:.0f} %")
        if rows:
            x = np.array([b["mean_chance"] for b in rows])
            y = np.array([b["observed"] for b in rows])
            low = np.maximum(y - np.array([b["observed_low"] for b in rows]), 0.0)
            high = np.maximum(np.array([b["observed_high"] for b in rows]) - y, 0.0)
            ax.errorbar(x, y, yerr=[low, high], fmt="o", color=style.AMBER_INK,
                        ecolor=style.AMBER, elinewidth=2, capsize=4, markersize=8,
                        label="observed, with 95 % interval (Wilson)")
        ax.set_xlim(0, 1)
        ax.set_ylim(0, 1)
        ax.set_ylabel("how often aurora was seen")
        ax.set_title(title, loc="left")
        ax.legend(loc="upper left")
        edges = [b["low"] for b in scores["reliability"]]
        width = edges[1] - edges[0] if len(edges) > 1 else 0.1
        counts.bar([b["low"] + width / 2 for b in scores["reliability"]],
                   [b["count"] for b in scores["reliability"]], width=width * 0.9,
                   color=style.TEAL)
        counts.set_ylabel("pairs")
        counts.set_xlabel("issued chance of a sighting during the outing window")
        return _png(fig)
