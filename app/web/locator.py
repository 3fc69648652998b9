"""A small locator picture for the spots page: where the spots (and the offshore sources) lie relative
to each other, drawn from their positions alone (no map tiles, no coastline).

Positions are projected onto a local plane about the centre of the group (equirectangular:
x = R Δλ cos φ0, y = R Δφ, mean Earth radius 6371.0088 km, IUGG). Over the tens of kilometres a
group of spots spans the distortion is far below a pixel. Each spot is a numbered circle with a short
tick toward the direction it faces; sources are squares. A north arrow and a scale bar are drawn.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from app.formats._svg import INK, MUTED, esc, num, text

__all__ = ["Place", "locator_svg"]

EARTH_RADIUS_KM = 6371.0088
WIDTH, HEIGHT = 420, 300
_PAD = 42.0


@dataclass(frozen=True)
class Place:
    label: str
    latitude: float
    longitude: float
    kind: str = "spot"  # spot | source
    faces_deg: float | None = None
    number: int | None = None


def _nice_km(span_km: float) -> float:
    raw = max(span_km, 1e-6) / 4
    mag = 10 ** math.floor(math.log10(raw))
    return next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)


def _merge_colocated(places: Sequence[Place]) -> list[Place]:
    """Sources at (almost) the same position share one square and one label (`2 sources: a, b`)."""
    out: list[Place] = []
    groups: dict[tuple[float, float], list[Place]] = {}
    for p in places:
        if p.kind != "source":
            out.append(p)
            continue
        groups.setdefault((round(p.latitude, 3), round(p.longitude, 3)), []).append(p)
    for group in groups.values():
        first = group[0]
        label = first.label if len(group) == 1 else f"{len(group)} sources"
        out.append(Place(label, first.latitude, first.longitude, kind="source"))
    return out


def locator_svg(places: Sequence[Place], *, title: str = "Where the spots are") -> str:
    """An inline SVG element (no XML declaration) of `places`, with a <title> and <desc>."""
    if not places:
        return ""
    named = list(places)
    places = _merge_colocated(places)
    lat0 = sum(p.latitude for p in places) / len(places)
    lon0 = sum(p.longitude for p in places) / len(places)
    k = math.pi / 180 * EARTH_RADIUS_KM
    pts = [((p.longitude - lon0) * k * math.cos(math.radians(lat0)), (p.latitude - lat0) * k) for p in places]
    xs, ys = [x for x, _ in pts], [y for _, y in pts]
    span = max(max(xs) - min(xs), max(ys) - min(ys), 2.0)  # at least 2 km across
    cx, cy = (max(xs) + min(xs)) / 2, (max(ys) + min(ys)) / 2
    scale = min(WIDTH - 2 * _PAD - 110, HEIGHT - 2 * _PAD) / span  # px per km; room for labels on the right
    px = lambda x: _PAD + 20 + (WIDTH - 2 * _PAD - 110) / 2 + (x - cx) * scale  # noqa: E731
    py = lambda y: HEIGHT / 2 - (y - cy) * scale  # noqa: E731

    body = [f'<rect x="0.5" y="0.5" width="{WIDTH - 1}" height="{HEIGHT - 1}" fill="#ffffff" stroke="{MUTED}"/>']
    for p, (x, y) in zip(places, pts, strict=True):
        X, Y = px(x), py(y)
        if p.kind == "source":
            body.append(f'<rect x="{num(X - 5)}" y="{num(Y - 5)}" width="10" height="10" fill="#ffffff" '
                        f'stroke="{INK}" stroke-width="1.5"/>')
            body.append(text(X, Y + 19, p.label, size=11, anchor="middle", fill=MUTED, halo=True))
            continue
        if p.faces_deg is not None:
            a = math.radians(p.faces_deg)
            body.append(f'<line x1="{num(X)}" y1="{num(Y)}" x2="{num(X + 22 * math.sin(a))}" '
                        f'y2="{num(Y - 22 * math.cos(a))}" stroke="{INK}" stroke-width="2"/>')
        body.append(f'<circle cx="{num(X)}" cy="{num(Y)}" r="9" fill="{INK}"/>')
        if p.number is not None:
            body.append(text(X, Y + 4, str(p.number), size=11, anchor="middle", weight="bold", fill="#ffffff"))
        body.append(text(X + 13, Y - 8, p.label, size=12, halo=True))

    # north arrow and scale bar
    body.append(f'<path d="M{WIDTH - 30},22 l7,18 l-7,-5 l-7,5 Z" fill="{INK}"/>')
    body.append(text(WIDTH - 30, 54, "N", size=11, anchor="middle", weight="bold"))
    km = _nice_km(span)
    bar = km * scale
    y = HEIGHT - 18
    body.append(f'<path d="M{_PAD},{y - 5} v5 h{num(bar)} v-5" fill="none" stroke="{INK}" stroke-width="1.5"/>')
    body.append(text(_PAD + bar + 6, y, f"{km:g} km", size=11))
    spots = [p for p in named if p.kind == "spot"]
    sources = [p for p in named if p.kind == "source"]
    desc = (f"{len(spots)} spot(s) and {len(sources)} offshore source(s), by latitude and longitude "
            f"(no coastline drawn): " + "; ".join(f"{p.label} at {p.latitude:.4f}, {p.longitude:.4f}" for p in named)
            + f". Scale bar {km:g} km; north is up.")
    return (f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {WIDTH} {HEIGHT}" width="{WIDTH}" '
            f'height="{HEIGHT}" role="img" aria-labelledby="locator-title locator-desc" class="locator" '
            f'font-family="DejaVu Sans, Verdana, Arial, sans-serif">'
            f'<title id="locator-title">{esc(title)}</title><desc id="locator-desc">{esc(desc)}</desc>'
            + "".join(body) + "</svg>")
