"""Small shared pieces of our SVG pictures: the colour ramp, text escaping, number formatting."""

from __future__ import annotations

import math
from xml.sax.saxutils import escape, quoteattr

__all__ = ["FONT", "INK", "MUTED", "RAMP_ANCHORS", "doc", "esc", "num", "ramp", "text"]

FONT = "DejaVu Sans, Verdana, Arial, sans-serif"
INK = "#1d2330"
MUTED = "#5b6270"

# Our sequential ramp: pale cream -> soft green -> teal -> deep indigo. Lightness falls steadily
# (about 95 -> 20 in CIELAB L*), so it reads in greyscale and for the common colour-vision deficiencies;
# hue only helps. Anchors (position, sRGB) chosen for this project.
RAMP_ANCHORS = (
    (0.00, (244, 241, 201)),
    (0.35, (143, 207, 164)),
    (0.65, (47, 143, 157)),
    (1.00, (38, 40, 94)),
)


def ramp(t: float) -> str:
    """Colour at `t` in 0..1 (clipped) as #rrggbb."""
    t = 0.0 if not math.isfinite(t) else min(1.0, max(0.0, t))
    for (t0, c0), (t1, c1) in zip(RAMP_ANCHORS, RAMP_ANCHORS[1:], strict=False):
        if t <= t1:
            w = (t - t0) / (t1 - t0)
            rgb = [round(a + (b - a) * w) for a, b in zip(c0, c1, strict=True)]
            return "#{:02x}{:02x}{:02x}".format(*rgb)
    return "#{:02x}{:02x}{:02x}".format(*RAMP_ANCHORS[-1][1])


def esc(s: object) -> str:
    return escape(str(s))


def num(x: float) -> str:
    """Coordinates with 0.01 px precision, no trailing zeros."""
    s = f"{x:.2f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def text(x: float, y: float, body: str, *, size: float = 12, anchor: str = "start", weight: str = "normal",
         fill: str = INK, halo: bool = False, extra: str = "") -> str:
    """A <text> element; `halo` paints a white outline first so labels stay legible over shading."""
    halo_attr = ' stroke="#ffffff" stroke-width="3" stroke-linejoin="round" paint-order="stroke"' if halo else ""
    return (f'<text x="{num(x)}" y="{num(y)}" font-size="{num(size)}" text-anchor="{anchor}" '
            f'font-weight="{weight}" fill="{fill}"{halo_attr}{extra}>{esc(body)}</text>')


def doc(width: int, height: int, title: str, desc: str, body: list[str]) -> str:
    """A standalone SVG document with explicit width/height/viewBox, an accessible title and desc."""
    return "\n".join([
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
        f'viewBox="0 0 {width} {height}" font-family={quoteattr(FONT)} role="img">',
        f"<title>{esc(title)}</title>",
        f"<desc>{esc(desc)}</desc>",
        f'<rect x="0" y="0" width="{width}" height="{height}" fill="#ffffff"/>',
        *body,
        "</svg>",
        "",
    ])
