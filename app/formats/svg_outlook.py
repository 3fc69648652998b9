"""Outlook chart as SVG: breaker heights over time for one spot.

Input: the `steps` of the outlook JSON (`shoalcast outlook --json`): each with `time` (RFC 3339),
`breaker_height_m` {typical, sets, largest} (or `breaker_height_ft` in imperial output), `swells`
[{height_m, period_s, direction_deg, breaker_height_m}], `hazard` {level, label}. Drawn: typical
(solid), sets (dashed), largest (markers over a light band from sets to largest), one thin line per
swell train (by its position in `swells`), a hazard strip, UTC time axis, legend, caution line.
Below the heights, on the same time axis: the water level (`water_level_m`, observed steps
marked, steps where a break point is too shallow or dry shaded) and the wind (`wind` {speed_m_s,
direction_deg FROM, relative}: one arrow per step pointing the way the wind blows, filled when
offshore, outlined when cross, dashed when onshore, with its speed).
A step with an unreadable time is skipped and counted in a note; missing heights leave gaps.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime, timedelta
from typing import Any

from app.errors import BadInput
from app.formats._svg import INK, MUTED, doc, num, ramp, text

__all__ = ["WIDTH", "HEIGHT", "outlook_svg"]

WIDTH, HEIGHT = 920, 650
_FOOT = 0.3048
_CAUTION = "Guidance only; conditions change. Follow lifeguards, official warnings and local rules."
_L, _R, _T, _B = 70.0, 700.0, 104.0, 410.0   # plot box
_TYPICAL, _SETS, _LARGEST = "#26285e", "#2f8f9d", "#26285e"
# Swell-train lines: distinct dashes first, colours second (both differ in lightness).
_TRAINS = [("#c26a12", "7 3"), ("#7b4f9e", "2 3"), ("#5d7a1f", "9 3 2 3"), ("#8a5a44", "4 2")]
# Hazard strip: a warm sequence of its own (pale sand -> amber -> orange -> brick), so no level shares
# a colour with the height lines (navy, teal); lightness falls with the level, and each cell also
# carries its level number as text, so colour is never the only carrier. Text colour per level keeps
# a WCAG 2.1 contrast of at least 4.5:1 (tests/app/formats/test_svg.py).
_HAZARD = {0: "#f4efe1", 1: "#f0c96b", 2: "#d9782f", 3: "#9c2f22"}
_HAZARD_TEXT = {0: INK, 1: INK, 2: INK, 3: "#ffffff"}
_TT, _TB = 484.0, 552.0  # tide panel
_WY = 584.0  # wind arrows' centre line
_TIDE, _SHALLOW = "#2f5f8f", "#e9d3a8"
# wind relative to the break: colour and shape both say it (filled / outlined / dashed)
_WIND = {"offshore": ("#2e6b45", "fill"), "cross": ("#7a5a12", "outline"), "onshore": ("#9c2f22", "dashed")}
_ARROW = "M0,-9 L4.5,0 L1.4,0 L1.4,9 L-1.4,9 L-1.4,0 L-4.5,0 Z"  # pointing up (toward north)


def level_label(level: int, label: str) -> str:
    """'level 2' or 'level 2: heavy surf' (a label that already names the level is not repeated)."""
    label = label.strip()
    if not label or label.lower() == f"level {level}":
        return f"level {level}"
    return label if str(level) in label else f"level {level}: {label}"


def _parse_time(value: Any) -> datetime | None:
    if isinstance(value, datetime):
        return value.astimezone(UTC) if value.tzinfo else None
    if not isinstance(value, str):
        return None
    try:
        t = datetime.fromisoformat(value.replace("Z", "+00:00"))
    except ValueError:
        return None
    return t.astimezone(UTC) if t.tzinfo else None


def _height(block: Any, key: str, scale: float) -> float | None:
    if not isinstance(block, Mapping):
        return None
    v = block.get(key)
    if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v) or v < 0:
        return None
    return float(v) * scale


def _heights(step: Mapping, units: str) -> tuple[Mapping | None, float]:
    """The breaker-height block and the factor turning it into display units."""
    ft = 1.0 / _FOOT
    if units == "imperial":
        if isinstance(step.get("breaker_height_ft"), Mapping):
            return step["breaker_height_ft"], 1.0
        return step.get("breaker_height_m"), ft
    if isinstance(step.get("breaker_height_m"), Mapping):
        return step["breaker_height_m"], 1.0
    return step.get("breaker_height_ft"), _FOOT


def _nice_step(span: float, target: int) -> float:
    raw = max(span, 1e-9) / target
    mag = 10 ** math.floor(math.log10(raw))
    return next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw - 1e-12)


def _runs(points: list[tuple[float, float | None]]) -> list[list[tuple[float, float]]]:
    """Split a series at missing values so lines show gaps instead of inventing data."""
    runs: list[list[tuple[float, float]]] = [[]]
    for x, y in points:
        if y is None:
            if runs[-1]:
                runs.append([])
        else:
            runs[-1].append((x, y))
    return [r for r in runs if r]


def _polyline(run: list[tuple[float, float]], stroke: str, width: float, dash: str | None = None) -> str:
    pts = " ".join(f"{num(x)},{num(y)}" for x, y in run)
    dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
    if len(run) == 1:
        x, y = run[0]
        return f'<circle cx="{num(x)}" cy="{num(y)}" r="{num(width)}" fill="{stroke}"/>'
    return (f'<polyline points="{pts}" fill="none" stroke="{stroke}" stroke-width="{num(width)}" '
            f'stroke-linejoin="round" stroke-linecap="round"{dash_attr}/>')


def _finite(v: Any) -> float | None:
    if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
        return None
    return float(v)


def _arrow(x: float, y: float, from_deg: float, relative: str) -> str:
    colour, style = _WIND.get(relative, (MUTED, "outline"))
    fill = colour if style == "fill" else "#ffffff"
    dash = ' stroke-dasharray="2.5 1.5"' if style == "dashed" else ""
    width = "1.8" if style == "dashed" else "1.3"
    return (f'<path class="wind-{relative}" d="{_ARROW}" '
            f'transform="translate({num(x)} {num(y)}) rotate({num((from_deg + 180.0) % 360.0)})" '
            f'fill="{fill}" stroke="{colour}" stroke-width="{width}"{dash}/>')


def conditions_panel(good: list[tuple[datetime, Mapping]], xs: Any, units: str) -> tuple[list[str], list[str]]:
    """The water level and wind rows under the heights, and their legend rows (SVG fragments)."""
    scale, unit = (1.0 / _FOOT, "ft") if units == "imperial" else (1.0, "m")
    level = [(xs(t), None if (v := _finite(st.get("water_level_m"))) is None else v * scale) for t, st in good]
    shallow = [bool(st.get("shallow_points")) for _, st in good]
    out = [text(_L - 8, _TT - 6, f"water level ({unit})", size=11, anchor="start", fill=MUTED)]
    out.append(f'<rect x="{num(_L)}" y="{num(_TT)}" width="{num(_R - _L)}" height="{num(_TB - _TT)}" fill="#fbfbf8" '
               f'stroke="{INK}" stroke-width="0.8"/>')
    vals = [v for _, v in level if v is not None]
    xs_all = [x for x, _ in level]
    for i, flag in enumerate(shallow):  # shade the steps where a break point is out of the water
        if flag:
            left = _L if i == 0 else (xs_all[i - 1] + xs_all[i]) / 2
            right = _R if i == len(xs_all) - 1 else (xs_all[i] + xs_all[i + 1]) / 2
            out.append(f'<rect x="{num(left)}" y="{num(_TT + 0.5)}" width="{num(max(right - left, 0.5))}" '
                       f'height="{num(_TB - _TT - 1)}" fill="{_SHALLOW}"/>')
    if vals:
        lo, hi = min(vals), max(vals)
        pad = max(0.1 * (hi - lo), 0.05)
        lo, hi = lo - pad, hi + pad
        ys = lambda v: _TB - (v - lo) / (hi - lo) * (_TB - _TT)  # noqa: E731
        for v in (lo + pad, hi - pad):
            out.append(text(_L - 8, ys(v) + 4, f"{v:+.1f}", size=10.5, anchor="end"))
        out += [_polyline([(x, ys(v)) for x, v in run], _TIDE, 2.0) for run in _runs(level)]
        for (x, v), (_, st) in zip(level, good, strict=True):
            if v is not None and st.get("water_level_source") == "observed":
                out.append(f'<circle cx="{num(x)}" cy="{num(ys(v))}" r="2.6" fill="#ffffff" stroke="{_TIDE}" '
                           'stroke-width="1.2"/>')
    else:
        out.append(text((_L + _R) / 2, (_TT + _TB) / 2 + 4, "no water level", size=11.5, anchor="middle", fill=MUTED))
    out.append(text(_L - 8, _WY + 4, "wind", size=11, anchor="end", fill=MUTED))
    last = -math.inf
    any_wind = False
    for t, st in good:
        w = st.get("wind")
        if not isinstance(w, Mapping):
            continue
        d, sp = _finite(w.get("direction_deg")), _finite(w.get("speed_m_s"))
        x = xs(t)
        if d is None or sp is None or x - last < 22:
            continue
        last, any_wind = x, True
        out.append(_arrow(x, _WY, d, str(w.get("relative") or "")))
        speed = f"{sp / (1852.0 / 3600.0):.0f}" if units == "imperial" else f"{sp:.0f}"
        out.append(text(x, _WY + 22, speed, size=10, anchor="middle", fill=INK))
    if not any_wind:
        out.append(text((_L + _R) / 2, _WY + 4, "no wind source", size=11.5, anchor="middle", fill=MUTED))
    legend = []
    if vals:
        legend.append(("tide", f'<line x1="{{x0}}" y1="{{y}}" x2="{{x1}}" y2="{{y}}" stroke="{_TIDE}" stroke-width="2"/>'
                               f'<circle cx="{{xm}}" cy="{{y}}" r="2.6" fill="#ffffff" stroke="{_TIDE}"/>',
                       "water level (o observed)"))  # fmt: skip
    if any(shallow):
        legend.append(("tide", f'<rect x="{{x0}}" y="{{ym}}" width="30" height="10" fill="{_SHALLOW}"/>',
                       "too shallow / dry"))  # fmt: skip
    if any_wind:
        for rel in ("offshore", "cross", "onshore"):
            legend.append(("wind", "ARROW:" + rel, f"wind {rel}"))
        legend.append(("wind", "", "(speed " + ("kn)" if units == "imperial" else "m/s)")))
    return out, legend


def outlook_svg(steps: Sequence[Mapping[str, Any]], *, units: str = "metric", spot_name: str = "") -> str:
    """The breaker-height outlook of one spot as an SVG document (WIDTH x HEIGHT px)."""
    if units not in ("metric", "imperial"):
        raise BadInput(f"`units` must be metric or imperial, got {units!r}", field="units")
    if not isinstance(steps, Sequence) or isinstance(steps, str | bytes):
        raise BadInput("`steps` must be a list of outlook steps", field="steps")
    unit = "m" if units == "metric" else "ft"
    good: list[tuple[datetime, Mapping]] = []
    skipped = 0
    for step in steps:
        t = _parse_time(step.get("time")) if isinstance(step, Mapping) else None
        if t is None:
            skipped += 1
        else:
            good.append((t, step))
    good.sort(key=lambda ts: ts[0])

    title = f"Breaker height outlook: {spot_name}" if spot_name else "Breaker height outlook"
    body: list[str] = [
        text(24, 34, title, size=20, weight="bold"),
        text(24, 56, f"Breaking wave height at the spot ({unit}), by hour; time axis in UTC", size=12.5, fill=MUTED),
    ]
    notes = []
    if skipped:
        notes.append(f"{skipped} step(s) skipped: missing or unreadable time")
    if not good:
        body.append(text((_L + _R) / 2, (_T + _B) / 2, "No outlook steps to show", size=16, anchor="middle",
                         fill=MUTED))
        body.append(text(24, HEIGHT - 18, _CAUTION, size=11.5, fill=MUTED))
        return doc(WIDTH, HEIGHT, title, f"{title}: no data. {_CAUTION}", body)

    t0, t1 = good[0][0], good[-1][0]
    if t1 == t0:
        t0, t1 = t0 - timedelta(hours=1), t1 + timedelta(hours=1)
    span_s = (t1 - t0).total_seconds()
    xs = lambda t: _L + (t - t0).total_seconds() / span_s * (_R - _L)  # noqa: E731

    series: dict[str, list[tuple[float, float | None]]] = {"typical": [], "sets": [], "largest": []}
    trains: list[list[tuple[float, float | None]]] = []
    hazards: list[tuple[float, int | None, str]] = []
    for t, step in good:
        x = xs(t)
        block, scale = _heights(step, units)
        for key in series:
            series[key].append((x, _height(block, key, scale)))
        swells = step.get("swells") if isinstance(step.get("swells"), Sequence) else []
        for i, sw in enumerate(swells[: len(_TRAINS)]):
            while len(trains) <= i:
                trains.append([(px, None) for px, _ in series["typical"][:-1]])
            if units == "imperial" and isinstance(sw, Mapping) and "breaker_height_ft" in sw:
                trains[i].append((x, _height(sw, "breaker_height_ft", 1.0)))
            else:
                trains[i].append((x, _height(sw, "breaker_height_m", 1.0 if unit == "m" else 1 / _FOOT)))
        for tr in trains[len(swells):]:
            tr.append((x, None))
        hz = step.get("hazard") if isinstance(step.get("hazard"), Mapping) else {}
        level = hz.get("level")
        level = level if isinstance(level, int) and not isinstance(level, bool) and 0 <= level <= 3 else None
        hazards.append((x, level, str(hz.get("label") or "")))

    values = [y for s in (*series.values(), *trains) for _, y in s if y is not None]
    top = max(values, default=1.0)
    ystep = _nice_step(top * 1.08 or 1.0, 5)
    ymax = ystep * math.ceil((top * 1.08 or 1.0) / ystep)
    ys = lambda v: _B - v / ymax * (_B - _T)  # noqa: E731
    sy = {k: [(x, None if y is None else ys(y)) for x, y in s] for k, s in series.items()}
    ty = [[(x, None if y is None else ys(y)) for x, y in tr] for tr in trains]

    # Frame and horizontal grid
    grid = [f'<rect x="{num(_L)}" y="{num(_T)}" width="{num(_R - _L)}" height="{num(_B - _T)}" fill="#fbfbf8" '
            f'stroke="{INK}" stroke-width="1"/>']
    v = 0.0
    while v <= ymax + 1e-9:
        y = ys(v)
        grid.append(f'<line x1="{num(_L)}" y1="{num(y)}" x2="{num(_R)}" y2="{num(y)}" stroke="#d9dbe0" '
                    'stroke-width="0.8"/>')
        grid.append(text(_L - 8, y + 4, f"{v:g}", size=11.5, anchor="end"))
        v += ystep
    grid.append(text(20, (_T + _B) / 2, f"breaker height ({unit})", size=12.5, anchor="middle",
                     extra=f' transform="rotate(-90 20 {num((_T + _B) / 2)})"'))

    # Time axis: ticks on whole UTC hours at a step suited to the span, dates under midnight ticks.
    hours = span_s / 3600
    tick_h = next(h for h in (1, 2, 3, 6, 12, 24, 48) if hours / h <= 12)
    tick = t0.replace(minute=0, second=0, microsecond=0)
    while tick < t0 or tick.hour % min(tick_h, 24):
        tick += timedelta(hours=1)
    last_date = None
    while tick <= t1:
        x = xs(tick)
        grid.append(f'<line x1="{num(x)}" y1="{num(_T)}" x2="{num(x)}" y2="{num(_B)}" stroke="#e4e6ea" '
                    'stroke-width="0.8"/>')
        grid.append(f'<line x1="{num(x)}" y1="{num(_B)}" x2="{num(x)}" y2="{num(_B + 5)}" stroke="{INK}"/>')
        grid.append(text(x, _B + 18, tick.strftime("%H:%M"), size=11, anchor="middle"))
        if tick.date() != last_date:
            grid.append(text(x, _B + 33, tick.strftime("%a %d %b"), size=11, anchor="middle", fill=MUTED))
            last_date = tick.date()
        tick += timedelta(hours=tick_h)
    grid.append(text((_L + _R) / 2, _B + 52, "time (UTC)", size=12.5, anchor="middle"))
    body.append('<g id="axes">' + "".join(grid) + "</g>")

    # Hazard strip above the plot, one cell per step.
    strip = [text(_L - 8, _T - 14, "hazard", size=11, anchor="end", fill=MUTED)]
    xs_list = [x for x, _, _ in hazards]
    seen_levels: dict[int, str] = {}
    i = 0
    while i < len(hazards):  # one rect per run of equal levels (no hairline seams between cells)
        j = i
        while j + 1 < len(hazards) and hazards[j + 1][1] == hazards[i][1]:
            j += 1
        level, label = hazards[i][1], hazards[i][2]
        left = _L if i == 0 else (xs_list[i - 1] + xs_list[i]) / 2
        right = _R if j == len(hazards) - 1 else (xs_list[j] + xs_list[j + 1]) / 2
        fill = "#ffffff" if level is None else _HAZARD[level]
        strip.append(f'<rect x="{num(left)}" y="{num(_T - 26)}" width="{num(max(right - left, 0.5))}" height="16" '
                     f'fill="{fill}"/>')
        if level is not None:
            seen_levels.setdefault(level, label)
            if right - left >= 12:  # the level as text too, where the run is wide enough to hold it
                strip.append(text((left + right) / 2, _T - 14, str(level), size=10.5, anchor="middle",
                                  weight="bold", fill=_HAZARD_TEXT[level]))
        i = j + 1
    strip.append(f'<rect x="{num(_L)}" y="{num(_T - 26)}" width="{num(_R - _L)}" height="16" fill="none" '
                 f'stroke="{INK}" stroke-width="0.8"/>')
    body.append('<g id="hazard">' + "".join(strip) + "</g>")

    # Band from sets to largest, then the lines.
    band_pts = [(x, s, g) for (x, s), (_, g) in zip(sy["sets"], sy["largest"], strict=True)
                if s is not None and g is not None]
    lines = []
    if len(band_pts) > 1:
        upper = " ".join(f"{num(x)},{num(g)}" for x, _, g in band_pts)
        lower = " ".join(f"{num(x)},{num(s)}" for x, s, _ in reversed(band_pts))
        lines.append(f'<polygon points="{upper} {lower}" fill="{ramp(0.3)}" opacity="0.45"/>')
    for i, tr in enumerate(ty):
        colour, dash = _TRAINS[i]
        lines += [_polyline(run, colour, 1.6, dash) for run in _runs(tr)]
    lines += [_polyline(run, _SETS, 2.4, "8 4") for run in _runs(sy["sets"])]
    lines += [_polyline(run, _TYPICAL, 2.8) for run in _runs(sy["typical"])]
    last_marker = -math.inf
    for x, y in sy["largest"]:
        if y is not None and x - last_marker >= 7:  # thin markers on long outlooks; the band stays exact
            last_marker = x
            lines.append(f'<path d="M{num(x)},{num(y - 4.5)} L{num(x + 4)},{num(y + 2.5)} L{num(x - 4)},{num(y + 2.5)} Z" '
                         f'fill="#ffffff" stroke="{_LARGEST}" stroke-width="1.3"/>')
    body.append('<g id="series">' + "".join(lines) + "</g>")
    panel, cond_legend = conditions_panel(good, xs, units)
    body.append('<g id="conditions">' + "".join(panel) + "</g>")

    # Legend
    lx, ly = _R + 26, _T - 20
    leg = [text(lx, ly, "Legend", size=13, weight="bold")]
    y = ly + 22

    def row(sample: str, label: str) -> None:
        nonlocal y
        leg.append(sample.format(x0=num(lx), x1=num(lx + 30), xm=num(lx + 15), y=num(y - 4)))
        leg.append(text(lx + 38, y, label, size=11.5))
        y += 20

    row('<line x1="{x0}" y1="{y}" x2="{x1}" y2="{y}" stroke="' + _TYPICAL + '" stroke-width="2.8"/>', "typical")
    row('<line x1="{x0}" y1="{y}" x2="{x1}" y2="{y}" stroke="' + _SETS + '" stroke-width="2.4" '
        'stroke-dasharray="8 4"/>', "sets")
    leg.append(f'<rect x="{num(lx)}" y="{num(y - 10)}" width="30" height="12" fill="{ramp(0.3)}" opacity="0.45"/>')
    leg.append(f'<path d="M{num(lx + 15)},{num(y - 8.5)} L{num(lx + 19)},{num(y - 1.5)} L{num(lx + 11)},'
               f'{num(y - 1.5)} Z" fill="#ffffff" stroke="{_LARGEST}" stroke-width="1.3"/>')
    leg.append(text(lx + 38, y, "largest expected", size=11.5))
    y += 20
    for i in range(len(ty)):
        colour, dash = _TRAINS[i]
        periods = [sw.get("period_s") for _, st in good for sw in (st.get("swells") or [])[i:i + 1]
                   if isinstance(sw, Mapping) and isinstance(sw.get("period_s"), int | float)]
        label = f"swell train {i + 1}" + (f" (~{sum(periods) / len(periods):.0f} s)" if periods else "")
        row('<line x1="{x0}" y1="{y}" x2="{x1}" y2="{y}" stroke="' + colour + '" stroke-width="1.6" '
            f'stroke-dasharray="{dash}"/>', label)
    if seen_levels:
        y += 8
        leg.append(text(lx, y, "Hazard level", size=12, weight="bold"))
        y += 20
        for level in sorted(seen_levels):
            leg.append(f'<rect x="{num(lx)}" y="{num(y - 11)}" width="30" height="13" fill="{_HAZARD[level]}" '
                       f'stroke="{INK}" stroke-width="0.6"/>')
            leg.append(text(lx + 15, y - 1.5, str(level), size=10.5, anchor="middle", weight="bold",
                            fill=_HAZARD_TEXT[level]))
            leg.append(text(lx + 38, y, level_label(level, seen_levels[level])[:26], size=11.5))
            y += 20
    if cond_legend:
        y = max(y + 8, _TT - 10)
        for _, sample, label in cond_legend:
            if sample.startswith("ARROW:"):
                leg.append(_arrow(lx + 15, y - 4, 270.0, sample.split(":", 1)[1]))
            elif sample:
                leg.append(sample.format(x0=num(lx), x1=num(lx + 30), xm=num(lx + 15), y=num(y - 4), ym=num(y - 10)))
            leg.append(text(lx + 38, y, label, size=11.5))
            y += 20
    body.append('<g id="legend">' + "".join(leg) + "</g>")

    if notes:
        body.append(text(24, HEIGHT - 34, "; ".join(notes), size=11, fill=MUTED))
    body.append(text(24, HEIGHT - 16, _CAUTION, size=11.5, fill=MUTED))
    desc = (f"{title}: {len(good)} steps from {t0:%Y-%m-%d %H:%M} to {t1:%Y-%m-%d %H:%M} UTC, "
            f"heights in {unit}. {_CAUTION}")
    return doc(WIDTH, HEIGHT, title, desc, body)
