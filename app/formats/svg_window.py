"""Swell-window polar plot as SVG.

Angle = offshore direction the swell comes FROM (nautical: north up, clockwise). Radius = period,
short periods inside, long periods outside. Shading = transfer coefficient K (height at the spot /
offshore height) on our sequential ramp; blocked cells (K = 0 or NaN) are left clear. The land side
(the half circle behind the spot's facing direction) and the facing direction itself are marked.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from app.errors import BadInput
from app.formats._svg import INK, MUTED, doc, num, ramp, text

__all__ = ["WIDTH", "HEIGHT", "swell_window_svg"]

WIDTH, HEIGHT = 790, 660
_CX, _CY = 305.0, 348.0       # plot centre
_R_IN, _R_OUT = 34.0, 212.0   # radius of the shortest / longest period cell edges
LAND_LABEL_RADIUS = _R_OUT + 8.0   # centre line of the hatched land band (_R_OUT + 3 .. + 13)
DEGREE_LABEL_RADIUS = _R_OUT + 24.0
_CAUTION = "Guidance only; conditions change. Follow lifeguards, official warnings and local rules."
_COMPASS = ["N", "NE", "E", "SE", "S", "SW", "W", "NW"]


def _xy(bearing_deg: float, r: float) -> tuple[float, float]:
    """Screen point at nautical bearing (0 = up/north, clockwise) and radius r."""
    a = math.radians(bearing_deg)
    return _CX + r * math.sin(a), _CY - r * math.cos(a)


def _sector(b0: float, b1: float, r0: float, r1: float) -> str:
    """Annular sector path from bearing b0 clockwise to b1 between radii r0 < r1."""
    large = 1 if (b1 - b0) % 360 > 180 else 0
    x0, y0 = _xy(b0, r1)
    x1, y1 = _xy(b1, r1)
    x2, y2 = _xy(b1, r0)
    x3, y3 = _xy(b0, r0)
    return (f"M{num(x0)},{num(y0)} A{num(r1)},{num(r1)} 0 {large} 1 {num(x1)},{num(y1)} "
            f"L{num(x2)},{num(y2)} A{num(r0)},{num(r0)} 0 {large} 0 {num(x3)},{num(y3)} Z")


def _edges(values: np.ndarray) -> np.ndarray:
    """Cell edges halfway between centres, extended by half a step at both ends."""
    if values.size == 1:
        return np.array([values[0] - 0.5, values[0] + 0.5])
    mid = (values[1:] + values[:-1]) / 2
    return np.concatenate([[values[0] - (mid[0] - values[0])], mid, [values[-1] + (values[-1] - mid[-1])]])


def _nice_ticks(lo: float, hi: float, target: int = 5) -> list[float]:
    span = max(hi - lo, 1e-9)
    raw = span / target
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    first = math.ceil(lo / step - 1e-9) * step
    return [round(first + i * step, 10) for i in range(int((hi - first) / step + 1e-9) + 1)]


def _validate(periods_s, directions_deg, coefficient, faces_deg):
    p = np.asarray(periods_s, dtype=float)
    d = np.asarray(directions_deg, dtype=float)
    k = np.asarray(coefficient, dtype=float)
    if p.ndim != 1 or p.size == 0 or not np.all(np.isfinite(p)) or np.any(p <= 0):
        raise BadInput("`periods_s` must be a non-empty 1-D list of positive periods", field="periods_s")
    if p.size > 1 and np.any(np.diff(p) <= 0):
        raise BadInput("`periods_s` must be strictly increasing", field="periods_s")
    if d.ndim != 1 or d.size == 0 or not np.all(np.isfinite(d)) or np.any((d < 0) | (d > 360)):
        raise BadInput("`directions_deg` must be a non-empty 1-D list within 0..360", field="directions_deg")
    if d.size > 1 and np.any(np.diff(d) <= 0):
        raise BadInput("`directions_deg` must be strictly increasing", field="directions_deg")
    if k.shape != (p.size, d.size):
        raise BadInput(f"`coefficient` must have shape (periods, directions) = {(p.size, d.size)}, got {k.shape}",
                       field="coefficient")
    if np.any(k[np.isfinite(k)] < 0) or np.any(np.isinf(k)):
        raise BadInput("`coefficient` must be >= 0 (NaN or 0 = blocked)", field="coefficient")
    if faces_deg is None or not math.isfinite(float(faces_deg)):
        raise BadInput("`faces_deg` must be a finite bearing in degrees", field="faces_deg")
    return p, d, k, float(faces_deg) % 360


def _direction_halfwidth(d: np.ndarray) -> float:
    # Table directions are uniform bins (e.g. 2 deg); a lone direction gets a 2-degree wedge.
    return float(np.median(np.diff(d))) / 2 if d.size > 1 else 1.0


def swell_window_svg(
    periods_s: Sequence[float],
    directions_deg: Sequence[float],
    coefficient: Sequence[Sequence[float]],
    faces_deg: float,
    spot_name: str,
    *,
    k_max: float | None = None,
) -> str:
    """The swell window of one spot as an SVG document (WIDTH x HEIGHT px).

    `coefficient[i][j]` is K at `periods_s[i]` and offshore FROM direction `directions_deg[j]`;
    NaN or 0 means blocked. `k_max` fixes the top of the colour scale (default: max(1, largest K)).
    """
    p, d, k, faces = _validate(periods_s, directions_deg, coefficient, faces_deg)
    open_k = np.where(np.isfinite(k) & (k > 0), k, np.nan)
    top = k_max if k_max is not None else max(1.0, float(np.nanmax(open_k)) if np.any(np.isfinite(open_k)) else 1.0)
    top = math.ceil(top * 4 - 1e-9) / 4  # round the scale up to a quarter

    pe = _edges(p)
    pe[0] = max(pe[0], p[0] * 0.5)
    radius = lambda per: _R_IN + (per - pe[0]) / (pe[-1] - pe[0]) * (_R_OUT - _R_IN)  # noqa: E731
    half = _direction_halfwidth(d)

    body: list[str] = [
        '<defs><pattern id="land-hatch" width="6" height="6" patternUnits="userSpaceOnUse" '
        'patternTransform="rotate(45)"><rect width="6" height="6" fill="#e6e2da"/>'
        f'<line x1="0" y1="0" x2="0" y2="6" stroke="{MUTED}" stroke-width="1.4"/></pattern></defs>',
        text(24, 34, f"Swell window: {spot_name}", size=20, weight="bold"),
        text(24, 56, "How much of each offshore swell reaches the spot, by direction it comes from and period",
             size=12.5, fill=MUTED),
    ]

    # Land side: the half circle behind the facing direction, as a hatched rim band.
    land0, land1 = faces + 90, faces + 270
    body.append(f'<path d="{_sector(land0, land1, _R_OUT + 3, _R_OUT + 13)}" fill="url(#land-hatch)" '
                f'stroke="{MUTED}" stroke-width="0.8"/>')
    # Its label runs along the band itself (tangent to the rim, never upside down), inside the ring
    # of degree labels, and midway between two of them (they stand every 30°), so no facing can make
    # it overlap one (tests/app/formats/test_svg.py checks every 10°).
    back = (15.0 + 30.0 * round(((faces + 180) % 360 - 15.0) / 30.0)) % 360
    lx, ly = _xy(back, LAND_LABEL_RADIUS)
    turn = back - 180 if 90 < back < 270 else back
    body.append(text(lx, ly, "land side", size=11, anchor="middle", fill=INK, halo=True,
                     extra=f' dominant-baseline="central" transform="rotate({num(turn)} {num(lx)} {num(ly)})"'))

    # Cells
    cells = []
    for i in range(p.size):
        r0, r1 = radius(pe[i]), radius(pe[i + 1])
        for j in range(d.size):
            kij = open_k[i, j]
            if not np.isfinite(kij):
                continue  # blocked: left clear
            colour = ramp(kij / top)
            cells.append(f'<path d="{_sector(d[j] - half, d[j] + half, r0, r1)}" fill="{colour}" '
                         f'stroke="{colour}" stroke-width="0.4"/>')
    body.append('<g id="cells">' + "".join(cells) + "</g>")

    # Grid: period rings, direction spokes, compass labels
    grid = [f'<circle cx="{num(_CX)}" cy="{num(_CY)}" r="{num(_R_OUT)}" fill="none" stroke="{INK}" stroke-width="1"/>',
            f'<circle cx="{num(_CX)}" cy="{num(_CY)}" r="{num(_R_IN)}" fill="none" stroke="{MUTED}" stroke-width="0.8"/>']
    ring_periods = [t for t in _nice_ticks(p[0], p[-1], 4) if pe[0] < t < pe[-1]]
    for t in ring_periods:
        grid.append(f'<circle cx="{num(_CX)}" cy="{num(_CY)}" r="{num(radius(t))}" fill="none" '
                    f'stroke="{MUTED}" stroke-width="0.6" stroke-dasharray="3 3" opacity="0.8"/>')
    for b in range(0, 360, 30):
        x0, y0 = _xy(b, _R_IN)
        x1, y1 = _xy(b, _R_OUT)
        grid.append(f'<line x1="{num(x0)}" y1="{num(y0)}" x2="{num(x1)}" y2="{num(y1)}" stroke="{MUTED}" '
                    'stroke-width="0.5" opacity="0.6"/>')
    body.append('<g id="grid">' + "".join(grid) + "</g>")
    labels = []
    for b in range(0, 360, 45):
        x, y = _xy(b, _R_OUT + 46 if b % 90 == 0 else _R_OUT + 44)
        name = _COMPASS[b // 45]
        labels.append(text(x, y + 5, name, size=15 if b % 90 == 0 else 12, anchor="middle",
                           weight="bold" if b % 90 == 0 else "normal", halo=True))
    for b in range(0, 360, 30):
        if b % 90 == 0:
            continue
        x, y = _xy(b, DEGREE_LABEL_RADIUS)
        labels.append(text(x, y + 4, f"{b}°", size=10.5, anchor="middle", fill=MUTED, halo=True))
    for t in ring_periods:  # period labels along the 45°-ish spoke between N and NE, haloed over shading
        x, y = _xy(22.5, radius(t))
        labels.append(text(x + 2, y + 4, f"{t:g} s", size=11, halo=True))
    body.append('<g id="labels">' + "".join(labels) + "</g>")

    # Facing direction: arrow from the centre out past the rim.
    fx0, fy0 = _xy(faces, _R_IN)
    fx1, fy1 = _xy(faces, _R_OUT + 12)
    body.append('<g id="faces">'
                f'<line x1="{num(fx0)}" y1="{num(fy0)}" x2="{num(fx1)}" y2="{num(fy1)}" stroke="#ffffff" '
                'stroke-width="5" stroke-linecap="round"/>'
                f'<line x1="{num(fx0)}" y1="{num(fy0)}" x2="{num(fx1)}" y2="{num(fy1)}" stroke="#b3261e" '
                'stroke-width="2.2" stroke-linecap="round"/>'
                f'<circle cx="{num(fx1)}" cy="{num(fy1)}" r="4" fill="#b3261e" stroke="#ffffff" stroke-width="1.5"/>'
                "</g>")
    body.append(text(_CX, _CY + 4, f"faces {faces:.0f}°", size=10, anchor="middle", weight="bold",
                     fill="#b3261e", halo=True))

    # Legend
    lx, ly, lh, lw = 598.0, 120.0, 210.0, 20.0
    legend = [text(lx, ly - 30, "Transfer coefficient K", size=13, weight="bold"),
              text(lx, ly - 14, "height at spot / offshore", size=11, fill=MUTED)]
    n = 60
    for s in range(n):
        t0 = s / n
        y = ly + lh * (1 - (s + 1) / n)
        legend.append(f'<rect x="{num(lx)}" y="{num(y)}" width="{num(lw)}" height="{num(lh / n + 0.5)}" '
                      f'fill="{ramp(t0 + 0.5 / n)}"/>')
    legend.append(f'<rect x="{num(lx)}" y="{num(ly)}" width="{num(lw)}" height="{num(lh)}" fill="none" '
                  f'stroke="{INK}" stroke-width="0.8"/>')
    ticks = _nice_ticks(0, top, 4)
    if top - ticks[-1] > 0.15 * top:
        ticks.append(top)  # always label the top of the scale
    for t in ticks:
        y = ly + lh * (1 - t / top)
        legend.append(f'<line x1="{num(lx + lw)}" y1="{num(y)}" x2="{num(lx + lw + 5)}" y2="{num(y)}" '
                      f'stroke="{INK}" stroke-width="0.8"/>')
        legend.append(text(lx + lw + 8, y + 4, f"{t:g}", size=11))
    y = ly + lh + 26
    legend.append(f'<rect x="{num(lx)}" y="{num(y)}" width="{num(lw)}" height="14" fill="#ffffff" stroke="{INK}" '
                  'stroke-width="0.8"/>')
    legend.append(text(lx + lw + 8, y + 11, "blocked (K = 0)", size=11))
    y += 24
    legend.append(f'<rect x="{num(lx)}" y="{num(y)}" width="{num(lw)}" height="14" fill="url(#land-hatch)" '
                  f'stroke="{MUTED}" stroke-width="0.8"/>')
    legend.append(text(lx + lw + 8, y + 11, "land side", size=11))
    y += 24
    legend.append(f'<line x1="{num(lx)}" y1="{num(y + 7)}" x2="{num(lx + lw)}" y2="{num(y + 7)}" stroke="#b3261e" '
                  'stroke-width="2.2"/>')
    legend.append(text(lx + lw + 8, y + 11, "direction the spot faces", size=11))
    y += 34
    legend.append(text(lx, y, "Angle: direction swell", size=11, fill=MUTED))
    legend.append(text(lx, y + 15, "comes from (north up)", size=11, fill=MUTED))
    legend.append(text(lx, y + 34, "Radius: period,", size=11, fill=MUTED))
    legend.append(text(lx, y + 49, f"short inside ({p[0]:g} s)", size=11, fill=MUTED))
    legend.append(text(lx, y + 64, f"long outside ({p[-1]:g} s)", size=11, fill=MUTED))
    body.append('<g id="legend">' + "".join(legend) + "</g>")

    body.append(text(24, HEIGHT - 18, _CAUTION, size=11.5, fill=MUTED))
    desc = (f"Swell window of {spot_name}: K by offshore direction (from) and period "
            f"{p[0]:g}-{p[-1]:g} s; spot faces {faces:.0f} degrees. {_CAUTION}")
    return doc(WIDTH, HEIGHT, f"Swell window: {spot_name}", desc, body)
