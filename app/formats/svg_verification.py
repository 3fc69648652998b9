"""Verification pictures as SVG: observed against forecast (with the 1:1 line and the fitted
factor), and both over time. Input: a verification report (app.services.verification).

The caution line is drawn on each picture, as on every picture with a height (app.cautions).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from datetime import datetime
from typing import Any

from app.cautions import GENERAL
from app.formats._svg import INK, MUTED, doc, num, ramp, text

__all__ = ["scatter_svg", "series_svg"]

CAUTION = " ".join(GENERAL)
_OBS, _FC = "#26285e", "#2f8f9d"


def _nice(span: float, target: int = 5) -> float:
    raw = span / max(target, 1)
    mag = 10 ** math.floor(math.log10(raw)) if raw > 0 else 1.0
    return next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)


def _pairs(body: Mapping[str, Any]) -> list[tuple[datetime, float, float]]:
    out = []
    for p in body.get("pairs") or []:
        o, f = p.get("observed_m"), p.get("forecast_m")
        if isinstance(o, int | float) and isinstance(f, int | float) and p.get("time"):
            out.append((datetime.fromisoformat(str(p["time"]).replace("Z", "+00:00")), float(o), float(f)))
    return out


def _title(body: Mapping[str, Any]) -> str:
    return f"{body.get('spot_id', '')}: outlook against {body.get('observations', 'observations')}"


def _score_line(body: Mapping[str, Any]) -> str:
    def f(k: str, fmt: str = ".2f") -> str:
        v = body.get(k)
        return "-" if v is None else format(v, fmt)

    return (f"n {body.get('n', 0)}   bias (obs − fc) {f('bias_m')} m   RMSE {f('rmse_m')} m   SI {f('scatter_index')}"
            f"   r {f('correlation')}   factor {f('calibration_factor', '.3f')} ± {f('calibration_factor_stderr', '.3f')}")


W, H = 640, 560
L, R, T, B = 70.0, 610.0, 70.0, 470.0


def scatter_svg(body: Mapping[str, Any]) -> str:
    """Observed (y) against forecast (x), equal axes from 0, the 1:1 line and o = c·f."""
    pts = _pairs(body)
    top = max([1.0] + [max(o, f) for _, o, f in pts]) * 1.1
    step = _nice(top)
    top = math.ceil(top / step) * step
    side = min(R - L, B - T)
    x0, y0 = L, T + side

    def X(v: float) -> float:
        return x0 + v / top * side

    def Y(v: float) -> float:
        return y0 - v / top * side

    out = [text(L, 30, _title(body), size=15, weight="bold"), text(L, 50, _score_line(body), size=11, fill=MUTED)]
    grid = []
    v = 0.0
    while v <= top + 1e-9:
        grid.append(f'<line x1="{num(X(v))}" y1="{num(Y(0))}" x2="{num(X(v))}" y2="{num(Y(top))}" stroke="#e4e6ea"/>')
        grid.append(f'<line x1="{num(X(0))}" y1="{num(Y(v))}" x2="{num(X(top))}" y2="{num(Y(v))}" stroke="#e4e6ea"/>')
        grid.append(text(X(v), Y(0) + 16, f"{v:g}", size=10.5, anchor="middle", fill=MUTED))
        grid.append(text(X(0) - 6, Y(v) + 4, f"{v:g}", size=10.5, anchor="end", fill=MUTED))
        v += step
    out.append('<g id="grid">' + "".join(grid) + "</g>")
    out.append(f'<rect x="{num(X(0))}" y="{num(Y(top))}" width="{num(side)}" height="{num(side)}" fill="none" '
               f'stroke="{INK}" stroke-width="0.8"/>')  # fmt: skip
    out.append(f'<line id="one-to-one" x1="{num(X(0))}" y1="{num(Y(0))}" x2="{num(X(top))}" y2="{num(Y(top))}" '
               f'stroke="{INK}" stroke-width="1.2" stroke-dasharray="6 4"/>')  # fmt: skip
    c = body.get("calibration_factor")
    if isinstance(c, int | float) and c > 0:
        xe = min(top, top / c)
        out.append(f'<line id="fit" x1="{num(X(0))}" y1="{num(Y(0))}" x2="{num(X(xe))}" y2="{num(Y(c * xe))}" '
                   f'stroke="{_FC}" stroke-width="1.8"/>')  # fmt: skip
    dots = [f'<circle cx="{num(X(f))}" cy="{num(Y(o))}" r="3.2" fill="{ramp(0.65)}" fill-opacity="0.75" '
            f'stroke="{_OBS}" stroke-width="0.6"/>' for _, o, f in pts]  # fmt: skip
    out.append('<g id="pairs">' + "".join(dots) + "</g>")
    out.append(text((X(0) + X(top)) / 2, Y(0) + 36, "forecast breaker height [m] (raw)", size=12, anchor="middle"))
    out.append(text(X(0) - 44, (Y(0) + Y(top)) / 2, "observed [m]", size=12, anchor="middle",
                    extra=f' transform="rotate(-90 {num(X(0) - 44)} {num((Y(0) + Y(top)) / 2)})"'))  # fmt: skip
    lx = X(0) + 12
    out.append(f'<line x1="{num(lx)}" y1="{num(Y(top) + 16)}" x2="{num(lx + 26)}" y2="{num(Y(top) + 16)}" '
               f'stroke="{INK}" stroke-width="1.2" stroke-dasharray="6 4"/>')  # fmt: skip
    out.append(text(lx + 32, Y(top) + 20, "1:1", size=11))
    if isinstance(c, int | float) and c > 0:
        out.append(f'<line x1="{num(lx)}" y1="{num(Y(top) + 34)}" x2="{num(lx + 26)}" y2="{num(Y(top) + 34)}" '
                   f'stroke="{_FC}" stroke-width="1.8"/>')  # fmt: skip
        out.append(text(lx + 32, Y(top) + 38, f"observed = {c:.3f} × forecast", size=11))
    out.append(text(24, H - 16, CAUTION, size=10.5, fill=MUTED))
    desc = f"{_title(body)}: {len(pts)} pairs, observed against forecast with the 1:1 line. {CAUTION}"
    return doc(W, H, _title(body), desc, out)


SW, SH = 760, 380
SL, SR, ST, SB = 70.0, 730.0, 70.0, 300.0


def series_svg(body: Mapping[str, Any]) -> str:
    """Observed (dots) and forecast (line) over time, UTC."""
    pts = sorted(_pairs(body))
    out = [text(SL, 30, _title(body) + " over time", size=15, weight="bold"),
           text(SL, 50, _score_line(body), size=11, fill=MUTED)]  # fmt: skip
    if not pts:
        out.append(text(SL, (ST + SB) / 2, "no pairs", size=13, fill=MUTED))
        out.append(text(24, SH - 16, CAUTION, size=10.5, fill=MUTED))
        return doc(SW, SH, _title(body), f"no pairs. {CAUTION}", out)
    t0, t1 = pts[0][0].timestamp(), pts[-1][0].timestamp()
    span = max(t1 - t0, 3600.0)
    top = max(max(o, f) for _, o, f in pts) * 1.1 or 1.0
    step = _nice(top)
    top = math.ceil(top / step) * step

    def X(t: float) -> float:
        return SL + (t - t0) / span * (SR - SL)

    def Y(v: float) -> float:
        return SB - v / top * (SB - ST)

    grid = []
    v = 0.0
    while v <= top + 1e-9:
        grid.append(f'<line x1="{num(SL)}" y1="{num(Y(v))}" x2="{num(SR)}" y2="{num(Y(v))}" stroke="#e4e6ea"/>')
        grid.append(text(SL - 6, Y(v) + 4, f"{v:g}", size=10.5, anchor="end", fill=MUTED))
        v += step
    for frac in (0.0, 0.5, 1.0):
        t = datetime.fromtimestamp(t0 + frac * span, tz=pts[0][0].tzinfo)
        grid.append(text(X(t0 + frac * span), SB + 18, f"{t:%Y-%m-%d %H:%M} UTC", size=10.5,
                         anchor={0.0: "start", 0.5: "middle", 1.0: "end"}[frac], fill=MUTED))  # fmt: skip
    out.append('<g id="grid">' + "".join(grid) + "</g>")
    line = " ".join(f"{num(X(t.timestamp()))},{num(Y(f))}" for t, _, f in pts)
    out.append(f'<polyline id="forecast" points="{line}" fill="none" stroke="{_FC}" stroke-width="2"/>')
    dots = [f'<circle cx="{num(X(t.timestamp()))}" cy="{num(Y(o))}" r="3" fill="{_OBS}"/>' for t, o, _ in pts]
    out.append('<g id="observed">' + "".join(dots) + "</g>")
    out.append(text(SL - 44, (ST + SB) / 2, "breaker height [m]", size=12, anchor="middle",
                    extra=f' transform="rotate(-90 {num(SL - 44)} {num((ST + SB) / 2)})"'))  # fmt: skip
    out.append(f'<circle cx="{num(SR - 190)}" cy="{num(ST - 6)}" r="3" fill="{_OBS}"/>')
    out.append(text(SR - 182, ST - 2, "observed", size=11))
    out.append(f'<line x1="{num(SR - 110)}" y1="{num(ST - 6)}" x2="{num(SR - 84)}" y2="{num(ST - 6)}" '
               f'stroke="{_FC}" stroke-width="2"/>')  # fmt: skip
    out.append(text(SR - 78, ST - 2, "forecast (raw)", size=11))
    out.append(text(24, SH - 16, CAUTION, size=10.5, fill=MUTED))
    desc = f"{_title(body)}: {len(pts)} observations and their forecasts over time. {CAUTION}"
    return doc(SW, SH, _title(body) + " over time", desc, out)
