"""The operator's charts: fixed pixel sizes, real content, our colours, a hand-made projection."""

import io
import json
import math
from pathlib import Path

import numpy as np
import pytest

from auroraplan.errors import InputError
from auroraplan.render import charts

FIXTURES = Path(__file__).parent / "fixtures"


def _load(name):
    return json.loads((FIXTURES / f"{name}.json").read_text(encoding="utf-8"))


def _png_size(data: bytes):
    # PNG signature, then the IHDR chunk: width and height as 4-byte big-endian (RFC 2083).
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


def _pixels(data: bytes) -> np.ndarray:
    import matplotlib.image

    return matplotlib.image.imread(io.BytesIO(data), format="png")[..., :3]


def _colours(pixels: np.ndarray) -> int:
    return len(np.unique((pixels * 255).round().astype(np.uint8).reshape(-1, 3), axis=0))


CHARTS = [
    ("timeline", charts.night_timeline_png, (1600, 900)),
    ("heatmap", charts.week_heatmap_png, (1600, 900)),
    ("oval_map", charts.oval_map_png, (1200, 1200)),
    ("season", charts.season_calendar_png, (1600, 900)),
]


@pytest.fixture(scope="module")
def rendered():
    return {name: make(_load(name)) for name, make, _ in CHARTS}


@pytest.mark.parametrize("name, size", [(n, s) for n, _, s in CHARTS])
def test_chart_has_its_fixed_size_and_real_content(rendered, name, size):
    data = rendered[name]
    assert _png_size(data) == size
    pixels = _pixels(data)
    assert pixels.shape[:2] == (size[1], size[0])
    assert _colours(pixels) > 10


def test_heatmap_has_no_green_traffic_light_colours(rendered):
    rgb = (_pixels(rendered["heatmap"]) * 255).astype(int)
    r, g, b = rgb[..., 0], rgb[..., 1], rgb[..., 2]
    assert not ((g > r + 40) & (g > b)).any()


def test_chance_ramp_darkens_steadily_from_paper_to_deep_amber():
    """A sequential scale: more chance is always darker (WCAG 2.1 relative luminance)."""
    from auroraplan.render import style

    cmap = charts._ramp_cmap()
    assert charts._hex(cmap(0.0)) == style.CHANCE_RAMP[0]
    assert charts._hex(cmap(1.0)) == style.CHANCE_RAMP[-1]
    rgb = cmap(np.linspace(0, 1, 50))[:, :3]
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    lum = lin @ np.array([0.2126, 0.7152, 0.0722])
    assert (np.diff(lum) < 0).all()


def test_higher_chances_make_a_darker_heatmap():
    heat = _load("heatmap")
    real = _pixels(charts.week_heatmap_png(heat)).mean()
    heat["chance"] = [[0.0 for _ in row] for row in heat["chance"]]
    assert _pixels(charts.week_heatmap_png(heat)).mean() > real + 0.01


def test_timeline_accepts_missing_forecast_steps():
    timeline = _load("timeline")
    timeline["kp_forecast"] = [None] * len(timeline["times"])
    timeline["kp_sd"] = [None] * len(timeline["times"])
    timeline["cloud_pct"] = [None] * len(timeline["times"])
    assert _png_size(charts.night_timeline_png(timeline)) == (1600, 900)


@pytest.mark.parametrize("lat, lon", [(69.81, 19.42), (69.33, 19.85), (78.22, 15.65),
                                      (60.0, 5.0), (-54.8, -68.3)])
def test_projection_matches_pyproj_azimuthal_equidistant(lat, lon):
    """Snyder (1987) spherical formulas against PROJ's aeqd on the same 6371 km sphere."""
    from pyproj import Transformer

    lat0, lon0 = 69.65, 18.96
    proj = Transformer.from_crs(
        "EPSG:4326", f"+proj=aeqd +lat_0={lat0} +lon_0={lon0} +R=6371000 +units=m",
        always_xy=True)
    x_ref, y_ref = proj.transform(lon, lat)
    x, y = charts.azimuthal_equidistant_km(lat, lon, lat0, lon0)
    assert float(x) == pytest.approx(x_ref / 1000, abs=0.01)
    assert float(y) == pytest.approx(y_ref / 1000, abs=0.01)


def test_distance_from_the_base_is_the_great_circle_distance():
    # Haversine formula (Sinnott 1984, Sky & Telescope 68, 159) on the same sphere.
    lat0, lon0, lat, lon = 69.65, 18.96, 78.22, 15.65
    p0, p1, dlam = math.radians(lat0), math.radians(lat), math.radians(lon - lon0)
    h = math.sin((p1 - p0) / 2) ** 2 + math.cos(p0) * math.cos(p1) * math.sin(dlam / 2) ** 2
    d_ref = 2 * 6371.0 * math.asin(math.sqrt(h))
    x, y = charts.azimuthal_equidistant_km(lat, lon, lat0, lon0)
    assert math.hypot(float(x), float(y)) == pytest.approx(d_ref, rel=1e-9)
    assert 950 < d_ref < 960  # Nordvik-like base to Longyearbyen-like point: about 955 km


def test_oval_map_draws_an_optional_basemap_layer(tmp_path, rendered):
    coast = {
        "type": "FeatureCollection",
        "features": [
            {"type": "Feature", "properties": {"name": "island"},
             "geometry": {"type": "Polygon", "coordinates": [[
                 [18.0, 69.5], [19.8, 69.5], [19.8, 70.1], [18.0, 70.1], [18.0, 69.5]]]}},
            {"type": "Feature", "properties": {"name": "shore"},
             "geometry": {"type": "LineString",
                          "coordinates": [[10.0, 67.0], [15.0, 68.5], [22.0, 69.0]]}},
        ],
    }
    path = tmp_path / "coast.geojson"
    path.write_text(json.dumps(coast), encoding="utf-8")
    oval = _load("oval_map")
    oval["basemap"] = str(path)
    with_map = _pixels(charts.oval_map_png(oval))
    without = _pixels(rendered["oval_map"])
    assert with_map.shape == without.shape
    assert (np.abs(with_map - without).sum(axis=2) > 0.1).sum() > 500


def test_unreadable_basemap_is_one_clear_line(tmp_path):
    bad = tmp_path / "coast.geojson"
    bad.write_text("not json", encoding="utf-8")
    oval = _load("oval_map")
    oval["basemap"] = str(bad)
    with pytest.raises(InputError, match=r"coast\.geojson: cannot read the basemap layer"):
        charts.oval_map_png(oval)


def test_season_calendar_marks_nights_without_darkness():
    season = _load("season")
    assert "none" in season["kinds"]  # late May at 69.6° N: no nautical darkness
    full = _pixels(charts.season_calendar_png(season))
    season["kinds"] = ["outlook" if k == "none" else k for k in season["kinds"]]
    season["dark_hours"] = [max(h, 1.0) for h in season["dark_hours"]]
    season["chance"] = [max(c, 0.3) for c in season["chance"]]
    assert (np.abs(_pixels(charts.season_calendar_png(season)) - full).sum(axis=2) > 0.1).any()


@pytest.mark.parametrize("k", [0.0, 0.1, 0.25, 0.5, 0.8, 1.0])
@pytest.mark.parametrize("waxing", [True, False])
def test_moon_glyph_lit_area_is_the_illuminated_fraction(k, waxing):
    # Meeus, Astronomical Algorithms ch. 48: k is the illuminated fraction of the disc's
    # area as seen from Earth; the glyph's lit polygon (shoelace area) must cover k of it.
    x, y = charts.moon_glyph_xy(k, waxing, radius=1.0, n=400)
    area = 0.5 * abs(np.dot(x, np.roll(y, 1)) - np.dot(y, np.roll(x, 1)))
    assert area / np.pi == pytest.approx(k, abs=0.002)
    # Waxing: lit on the right (east of the meridian seen from the north), waning: left.
    if 0 < k < 1:
        assert (np.mean(x) > 0) == waxing


def test_season_chart_is_months_by_nights_with_the_moon():
    season = _load("season")
    plain = _pixels(charts.season_calendar_png(season))
    # The moon glyphs change the picture (illumination from a simple 29.53-day cycle,
    # the mean synodic month, from memory; any values would do for this check).
    days = np.arange(len(season["dates"]))
    season["moon_illumination"] = list((1 - np.cos(2 * np.pi * days / 29.53)) / 2)
    with_moon = _pixels(charts.season_calendar_png(season))
    assert (np.abs(with_moon - plain).sum(axis=2) > 0.1).sum() > 1000


def test_a_name_no_chart_font_has_is_one_line_or_drawn_with_the_operators_font(tmp_path):
    """U+1D81 (LATIN SMALL LETTER D WITH PALATAL HOOK) is in STIX General but not in
    DejaVu Sans (both fonts ship with matplotlib): without a font named in operator.toml the
    chart is refused in one line naming the character; with STIX General named as the
    operator's font it is drawn, with no missing-glyph warning."""
    import os
    import shutil
    import subprocess
    import sys

    from auroraplan.pdffonts import dejavu_folder

    repo = Path(__file__).resolve().parents[1]
    ws = tmp_path / "ws"
    shutil.copytree(repo / "tests" / "bad_inputs" / "base", ws)
    for name in ("sites.geojson", "clouds.csv"):
        path = ws / name
        path.write_text(path.read_text().replace("Gullwing Point", "Gullwing \u1d81"))

    def week_png():
        out = tmp_path / "week.png"
        proc = subprocess.run(
            [sys.executable, "-m", "auroraplan.cli", "week", str(ws), "--start", "2027-01-11",
             "--nights", "1", "--no-record", "--png", str(out)],
            capture_output=True, text=True, env=dict(os.environ, PYTHONPATH=str(repo)),
            timeout=300)
        return proc, out

    proc, out = week_png()
    assert proc.returncode == 2 and not out.exists()
    (line,) = proc.stderr.splitlines()
    assert "\u1d81 (U+1D81)" in line and "[print] font" in line

    stix = dejavu_folder() / "STIXGeneral.ttf"
    with open(ws / "operator.toml", "a", encoding="utf-8") as fh:
        fh.write(f'\n[print]\nfont = "{stix}"\n')
    proc, out = week_png()
    assert proc.returncode == 0, proc.stderr
    assert "Warning" not in proc.stderr and "missing" not in proc.stderr
    assert _png_size(out.read_bytes()) == (1600, 900)
