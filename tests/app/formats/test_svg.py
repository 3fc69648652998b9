"""Swell-window and outlook SVGs: well-formed, declared size, expected elements, honest geometry.

Sources: nautical FROM bearings clockwise from north (team contract); relative luminance formula from
WCAG 2.x / sRGB (from memory) for the ramp's monotonic-lightness check (common practice for
colour-blind-safe sequential ramps); 1 ft = 0.3048 m exactly (international foot, from memory).
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest

from app.errors import BadInput
from app.formats._svg import ramp
from app.formats.svg_outlook import HEIGHT as OH
from app.formats.svg_outlook import WIDTH as OW
from app.formats.svg_outlook import outlook_svg
from app.formats.svg_window import HEIGHT as WH
from app.formats.svg_window import WIDTH as WW
from app.formats.svg_window import swell_window_svg

SVG = "{http://www.w3.org/2000/svg}"
CAUTION_RE = re.compile(r"Guidance only.*lifeguards, official warnings and local rules", re.S)


def window_inputs():
    periods = np.arange(6.0, 21.0, 2.0)
    dirs = np.arange(5.0, 360.0, 10.0)
    k = np.full((periods.size, dirs.size), np.nan)
    open_ = (dirs >= 200) & (dirs <= 320)
    k[:, open_] = np.linspace(0.2, 1.2, open_.sum())
    k[0, dirs == 205] = 0.0  # blocked by zero as well as NaN
    return periods, dirs, k


def window_svg(**kw) -> str:
    p, d, k = window_inputs()
    return swell_window_svg(p, d, k, kw.pop("faces", 260.0), kw.pop("name", "Gullwing Point <test> & co"), **kw)


def outlook_steps(n: int = 24):
    t0 = datetime(2026, 3, 24, 6, tzinfo=UTC)
    out = []
    for h in range(n):
        typ = 1.0 + 0.5 * math.sin(h / 4)
        out.append({"time": (t0 + timedelta(hours=h)).strftime("%Y-%m-%dT%H:%M:%SZ"),
                    "breaker_height_m": {"typical": typ, "sets": typ * 1.27, "largest": typ * 1.8},
                    "swells": [{"height_m": 1.2, "period_s": 13, "direction_deg": 250, "breaker_height_m": typ},
                               {"height_m": 0.4, "period_s": 7, "direction_deg": 300, "breaker_height_m": 0.5}],
                    "hazard": {"level": 0 if typ < 1.3 else 2, "label": "calm" if typ < 1.3 else "rough"}})
    return out


def parse(svg: str) -> ET.Element:
    root = ET.fromstring(svg.encode())
    assert root.tag == f"{SVG}svg"
    return root


def texts(root: ET.Element) -> list[str]:
    return ["".join(t.itertext()) for t in root.iter(f"{SVG}text")]


@pytest.mark.parametrize("make, size", [(window_svg, (WW, WH)), (lambda: outlook_svg(outlook_steps()), (OW, OH))])
def test_declared_size_and_viewbox(make, size):
    root = parse(make())
    w, h = size
    assert (root.get("width"), root.get("height")) == (str(w), str(h))
    assert root.get("viewBox") == f"0 0 {w} {h}"
    assert root.find(f"{SVG}title") is not None
    assert CAUTION_RE.search(" ".join(texts(root)))


def test_window_draws_only_open_cells_and_leaves_blocked_clear():
    p, d, k = window_inputs()
    root = parse(window_svg())
    cells = root.find(f"{SVG}g[@id='cells']")
    n_open = int(np.sum(np.isfinite(k) & (k > 0)))
    assert len(cells) == n_open
    # the strongest cell gets the top of the ramp: scale top = 1.25 (1.2 rounded up to a quarter)
    fills = {c.get("fill") for c in cells}
    assert ramp(1.2 / 1.25) in fills
    assert ramp(0.0) not in fills  # nothing blocked is painted


def test_window_marks_facing_direction_land_side_and_labels():
    root = parse(window_svg(faces=260.0))
    line = root.find(f"{SVG}g[@id='faces']/{SVG}line")
    x1, y1, x2, y2 = (float(line.get(a)) for a in ("x1", "y1", "x2", "y2"))
    bearing = math.degrees(math.atan2(x2 - x1, -(y2 - y1))) % 360  # screen y grows downward
    assert bearing == pytest.approx(260.0, abs=0.05)
    body = " ".join(texts(root))
    for label in ("N", "E", "S", "W", "faces 260°", "land side", "blocked (K = 0)", "Transfer coefficient K"):
        assert label in body
    assert "Gullwing Point <test> & co" in body  # escaped in the file, intact when parsed
    assert any(p.get("fill") == "url(#land-hatch)" for p in root.iter(f"{SVG}path"))


def test_window_bad_input_names_the_field():
    p, d, k = window_inputs()
    with pytest.raises(BadInput) as err:
        swell_window_svg(p, d, k[:, :-1], 260.0, "x")
    assert err.value.field == "coefficient"
    with pytest.raises(BadInput) as err:
        swell_window_svg(p[::-1], d, k, 260.0, "x")
    assert err.value.field == "periods_s"
    with pytest.raises(BadInput) as err:
        swell_window_svg(p, d, -k, 260.0, "x")
    assert err.value.field == "coefficient"


def _luminance(hex_colour: str) -> float:
    rgb = [int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def test_ramp_lightness_falls_monotonically():
    lum = [_luminance(ramp(t)) for t in np.linspace(0, 1, 41)]
    assert all(b < a for a, b in zip(lum, lum[1:], strict=False))
    assert lum[0] / lum[-1] > 10  # ends far apart in lightness


def test_outlook_has_lines_band_markers_hazard_strip_and_legend():
    steps = outlook_steps()
    root = parse(outlook_svg(steps, spot_name="Tiller Bank (fictional)"))
    series = root.find(f"{SVG}g[@id='series']")
    polylines = series.findall(f"{SVG}polyline")
    assert len(polylines) == 4  # typical, sets, 2 swell trains
    assert len(series.findall(f"{SVG}polygon")) == 1  # sets..largest band
    assert len(series.findall(f"{SVG}path")) >= 12  # largest markers (thinned, never all dropped)
    hazard_rects = root.find(f"{SVG}g[@id='hazard']").findall(f"{SVG}rect")
    runs = 1 + sum(1 for a, b in zip(steps, steps[1:], strict=False) if a["hazard"]["level"] != b["hazard"]["level"])
    assert len(hazard_rects) == runs + 1  # one per run of equal levels + the frame
    body = " ".join(texts(root))
    for label in ("typical", "sets", "largest expected", "swell train 1 (~13 s)", "swell train 2 (~7 s)",
                  "time (UTC)", "breaker height (m)", "level 0: calm", "level 2: rough", "Tue 24 Mar", "06:00"):
        assert label in body, label


def test_outlook_typical_line_matches_the_data():
    steps = outlook_steps(2)
    steps[0]["breaker_height_m"] = {"typical": 1.0, "sets": 1.5, "largest": 2.0}
    steps[1]["breaker_height_m"] = {"typical": 2.0, "sets": 2.5, "largest": 3.0}
    root = parse(outlook_svg(steps))
    ys = {}
    for g in root.find(f"{SVG}g[@id='axes']").iter(f"{SVG}text"):
        if re.fullmatch(r"\d+(\.\d+)?", g.text or ""):
            ys[float(g.text)] = float(g.get("y")) - 4  # labels sit 4 px below their grid line
    typical = root.find(f"{SVG}g[@id='series']").findall(f"{SVG}polyline")[-1]
    (xa, ya), (xb, yb) = [tuple(map(float, p.split(","))) for p in typical.get("points").split()]
    zero, one = ys[0.0], ys[1.0]
    assert (zero - ya) / (zero - one) == pytest.approx(1.0, abs=0.01)
    assert (zero - yb) / (zero - one) == pytest.approx(2.0, abs=0.01)
    assert xa < xb


def test_imperial_from_metres_equals_imperial_from_feet():
    metres = outlook_steps(6)
    feet = []
    for s in metres:
        s2 = dict(s)
        s2["breaker_height_ft"] = {k: v / 0.3048 for k, v in s["breaker_height_m"].items()}
        del s2["breaker_height_m"]
        s2["swells"] = [{**sw, "breaker_height_ft": sw["breaker_height_m"] / 0.3048} for sw in s["swells"]]
        for sw in s2["swells"]:
            del sw["breaker_height_m"]
        feet.append(s2)
    a = outlook_svg(metres, units="imperial")
    assert a == outlook_svg(feet, units="imperial")
    assert "breaker height (ft)" in a
    assert a != outlook_svg(metres, units="metric")


def test_outlook_keeps_good_steps_and_reports_bad_ones():
    steps = outlook_steps(6)
    steps.insert(2, {"time": "yesterday-ish", "breaker_height_m": {"typical": 9}})
    steps[4]["breaker_height_m"] = {"typical": None, "sets": None, "largest": None}
    root = parse(outlook_svg(steps))
    assert "1 step(s) skipped" in " ".join(texts(root))
    # the gap at the missing step splits the typical line into two runs
    typical_runs = [p for p in root.find(f"{SVG}g[@id='series']").findall(f"{SVG}polyline")
                    if p.get("stroke-width") == "2.8"]
    assert len(typical_runs) == 2
    with pytest.raises(BadInput) as err:
        outlook_svg(steps, units="furlongs")
    assert err.value.field == "units"


def test_empty_outlook_is_a_valid_picture():
    root = parse(outlook_svg([]))
    assert "No outlook steps to show" in " ".join(texts(root))


# -- readability of the pictures -------------------------------------------------------------------------


def _contrast(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio (Success Criterion 1.4.3 definition: (L1 + 0.05) / (L2 + 0.05))."""
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_contrast_formula_against_the_wcag_extremes():
    # WCAG 2.1: black on white is 21:1, a colour on itself 1:1
    assert _contrast("#000000", "#ffffff") == pytest.approx(21.0)
    assert _contrast("#777777", "#777777") == pytest.approx(1.0)


def test_hazard_colours_are_their_own_and_level_numbers_are_readable():
    from app.formats import svg_outlook as so

    line_colours = {so._TYPICAL, so._SETS, so._LARGEST} | {c for c, _ in so._TRAINS}
    assert not set(so._HAZARD.values()) & line_colours  # no level looks like a height line
    lum = [_luminance(so._HAZARD[lv]) for lv in range(4)]
    assert all(b < a for a, b in zip(lum, lum[1:], strict=False))  # darker with the level, readable in grey
    for lv in range(4):  # WCAG 2.1 AA for text: at least 4.5:1
        assert _contrast(so._HAZARD[lv], so._HAZARD_TEXT[lv]) >= 4.5, lv


def test_hazard_strip_carries_the_level_as_text_and_legend_does_not_repeat_it():
    steps = outlook_steps()
    for st in steps:
        st["hazard"]["label"] = f"level {st['hazard']['level']}"  # the default policy's labels
    root = parse(outlook_svg(steps))
    strip = [t for t in texts(root.find(f"{SVG}g[@id='hazard']")) if t != "hazard"]
    assert set(strip) == {"0", "2"}  # colour is not the only carrier of a level
    legend = texts(root.find(f"{SVG}g[@id='legend']"))
    assert "level 0" in legend and "level 2" in legend
    assert not any(re.fullmatch(r"\d level \d", t) for t in legend)  # once read "0 level 0"


def _box(x: float, y: float, w: float, h: float, turn_deg: float = 0.0) -> list[tuple[float, float]]:
    """Corners of a w x h box centred on (x, y), turned by turn_deg (SVG rotation, clockwise)."""
    c, s = math.cos(math.radians(turn_deg)), math.sin(math.radians(turn_deg))
    return [(x + dx * c - dy * s, y + dx * s + dy * c) for dx in (-w / 2, w / 2) for dy in (-h / 2, h / 2)]


def _separated(a: list[tuple[float, float]], b: list[tuple[float, float]]) -> bool:
    """Two convex boxes do not overlap (separating axis theorem on both boxes' edge normals)."""
    for poly in (a, b):
        order = [poly[0], poly[1], poly[3], poly[2]]
        for (x1, y1), (x2, y2) in zip(order, order[1:] + order[:1], strict=True):
            nx, ny = y2 - y1, x1 - x2
            pa = [nx * x + ny * y for x, y in a]
            pb = [nx * x + ny * y for x, y in b]
            if max(pa) < min(pb) or max(pb) < min(pa):
                return True
    return False


@pytest.mark.parametrize("faces", range(0, 360, 10))
def test_land_side_label_never_overlaps_a_degree_or_compass_label(faces):
    root = parse(window_svg(faces=float(faces)))
    labels = root.find(f"{SVG}g[@id='labels']")
    [land] = [t for t in root.iter(f"{SVG}text") if "".join(t.itertext()) == "land side" and t.get("transform")]
    turn = float(re.search(r"rotate\(([-\d.]+)", land.get("transform")).group(1))
    size = float(land.get("font-size"))
    # text boxes: 0.6 em per character (DejaVu Sans averages about 0.55), 1 em high, plus the 3 px halo
    land_box = _box(float(land.get("x")), float(land.get("y")), 0.6 * size * 9 + 3, size + 3, turn)
    for t in labels.iter(f"{SVG}text"):
        body, fs = "".join(t.itertext()), float(t.get("font-size"))
        if body.endswith(" s"):
            continue  # period labels sit inside the rim
        w, h = 0.6 * fs * len(body) + 3, fs + 3
        x, y = float(t.get("x")), float(t.get("y")) - 0.35 * fs  # y is the baseline
        assert _separated(land_box, _box(x, y, w, h)), (faces, body)
