"""The pages' colours and the WCAG 2.1 contrast arithmetic that checks them.

Every pair of text and background colour the stylesheet uses is listed in `TEXT_PAIRS` and must
reach 4.5:1 (WCAG 2.1 success criterion 1.4.3, level AA, normal text); focus rings and the level
badges' borders against the page reach 3:1 (criterion 1.4.11, non-text contrast). The hazard
level is always written out in the badge; the colour only repeats it.

Relative luminance and contrast ratio are the WCAG 2.1 definitions (sRGB channels linearised with
the 0.03928 threshold, L = 0.2126 R + 0.7152 G + 0.0722 B, ratio (L1 + 0.05) / (L2 + 0.05)).
"""

from __future__ import annotations

__all__ = [
    "LEVEL_COLOURS",
    "NON_TEXT_PAIRS",
    "PAGE",
    "TEXT_PAIRS",
    "contrast_ratio",
    "css_variables",
    "relative_luminance",
]

PAGE = {
    "bg": "#ffffff",
    "panel": "#f4f5f7",  # table header rows, the switches
    "ink": "#1d2330",
    "muted": "#4f5664",
    "link": "#1f4e8c",
    "rule": "#8a909c",  # table rules and panel borders (non-text)
    "focus": "#b3471d",  # keyboard focus ring
    "caution_bg": "#fff4d6",
    "caution_edge": "#8a5a00",
}

# Hazard levels 0..3: light to dark along our own cream-green-teal-indigo ramp, with the text colour
# that reads on each (ink on the light two, white on the dark two).
LEVEL_COLOURS = {
    0: ("#dde9c1", "#1d2330"),
    1: ("#85c9a3", "#1d2330"),
    2: ("#1f6f7d", "#ffffff"),
    3: ("#26285e", "#ffffff"),
}

TEXT_PAIRS: dict[str, tuple[str, str]] = {
    "body text": (PAGE["ink"], PAGE["bg"]),
    "muted text": (PAGE["muted"], PAGE["bg"]),
    "links": (PAGE["link"], PAGE["bg"]),
    "header cells": (PAGE["ink"], PAGE["panel"]),
    "muted on panel": (PAGE["muted"], PAGE["panel"]),
    "links on panel": (PAGE["link"], PAGE["panel"]),
    "caution text": (PAGE["ink"], PAGE["caution_bg"]),
    "caution heading": (PAGE["caution_edge"], PAGE["caution_bg"]),
    **{f"level {n} badge": (fg, bg) for n, (bg, fg) in LEVEL_COLOURS.items()},
}

NON_TEXT_PAIRS: dict[str, tuple[str, str]] = {
    "focus ring on page": (PAGE["focus"], PAGE["bg"]),
    "focus ring on panel": (PAGE["focus"], PAGE["panel"]),
    "caution border": (PAGE["caution_edge"], PAGE["bg"]),
    "table rules": (PAGE["rule"], PAGE["bg"]),
}


def _channel(c8: int) -> float:
    c = c8 / 255.0
    return c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4


def relative_luminance(hex_colour: str) -> float:
    """WCAG 2.1 relative luminance of an sRGB colour written `#rrggbb` (0 = black, 1 = white)."""
    s = hex_colour.strip().lstrip("#")
    if len(s) != 6:
        raise ValueError(f"`hex_colour` must look like #rrggbb, got {hex_colour!r}")
    try:
        r, g, b = (int(s[i:i + 2], 16) for i in (0, 2, 4))
    except ValueError as exc:
        raise ValueError(f"`hex_colour` must look like #rrggbb, got {hex_colour!r}") from exc
    return 0.2126 * _channel(r) + 0.7152 * _channel(g) + 0.0722 * _channel(b)


def contrast_ratio(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio of two colours, 1..21, the same either way round."""
    la, lb = relative_luminance(a), relative_luminance(b)
    hi, lo = max(la, lb), min(la, lb)
    return (hi + 0.05) / (lo + 0.05)


def css_variables() -> str:
    """The palette as CSS custom properties (the stylesheet uses only these colours)."""
    lines = [f"  --{k.replace('_', '-')}: {v};" for k, v in PAGE.items()]
    for n, (bg, fg) in LEVEL_COLOURS.items():
        lines += [f"  --level-{n}-bg: {bg};", f"  --level-{n}-fg: {fg};"]
    return ":root {\n" + "\n".join(lines) + "\n}\n"
