"""The outlook chart's water level and wind rows: one arrow per (thinned) step that points the way the
wind blows (FROM + 180°, the meteorological convention), its relative class named by shape and colour;
observed levels marked; steps with a break point out of the water shaded; nothing invented without data."""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

from app.formats.svg_outlook import outlook_svg

_spec = importlib.util.spec_from_file_location("_svg_cases", Path(__file__).with_name("test_svg.py"))
cases = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(cases)


def steps_with_conditions(n: int = 12):  # type: ignore[no-untyped-def]
    steps = cases.outlook_steps(n)
    for i, st in enumerate(steps):
        st["water_level_m"] = 0.2 * i
        st["water_level_source"] = "observed" if i == 0 else "predicted"
        st["shallow_points"] = ["reef"] if i < 2 else []
        st["wind"] = {"speed_m_s": 5.0, "direction_deg": 90.0 if i < 6 else 270.0,
                      "relative": "offshore" if i < 6 else "onshore", "input": "model-forecast"}  # fmt: skip
    return steps


def test_wind_arrows_point_downwind_and_name_their_class() -> None:
    root = cases.parse(outlook_svg(steps_with_conditions()))
    arrows = [e for e in root.iter() if (e.get("class") or "").startswith("wind-")]
    plot = [a for a in arrows if re.match(r"translate\([\d.]+ 584\)", a.get("transform", ""))]  # the wind row
    assert len(plot) >= 6
    rot = {a.get("class"): re.search(r"rotate\(([\d.]+)\)", a.get("transform")).group(1) for a in plot}
    assert rot["wind-offshore"] == "270" and rot["wind-onshore"] == "90"  # from the east blows toward the west
    assert "wind offshore" in cases.texts(root) and "wind onshore" in cases.texts(root)
    assert "too shallow / dry" in cases.texts(root) and "water level (o observed)" in cases.texts(root)
    assert any("Follow lifeguards" in t for t in cases.texts(root))  # the caution stays


def test_without_wind_or_levels_the_rows_say_so() -> None:
    root = cases.parse(outlook_svg(cases.outlook_steps(6)))
    assert "no wind source" in cases.texts(root) and "no water level" in cases.texts(root)
    assert not [e for e in root.iter() if (e.get("class") or "").startswith("wind-")]
