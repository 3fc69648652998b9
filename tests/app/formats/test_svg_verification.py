"""Verification pictures (app.formats.svg_verification): well-formed SVG, equal axes so the 1:1
line is at 45° and a pair with observed = forecast lies on it (geometry, by construction), the
fitted line's slope is the factor, and the cautions are drawn (the project's safety rule)."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from app.formats.svg_verification import scatter_svg, series_svg

NS = {"s": "http://www.w3.org/2000/svg"}
BODY = {
    "spot_id": "cove", "observations": "log.csv", "n": 3, "bias_m": 0.1, "rmse_m": 0.2, "scatter_index": 0.1,
    "correlation": 0.9, "calibration_factor": 1.2, "calibration_factor_stderr": 0.05,
    "pairs": [
        {"time": "2030-01-01T00:00:00Z", "observed_m": 1.0, "forecast_m": 1.0},
        {"time": "2030-01-01T01:00:00Z", "observed_m": 2.4, "forecast_m": 2.0},
        {"time": "2030-01-01T02:00:00Z", "observed_m": 0.5, "forecast_m": None},
    ],
}


def _line(root: ET.Element, ident: str) -> tuple[float, float, float, float]:
    el = root.find(f".//s:line[@id='{ident}']", NS)
    assert el is not None
    return tuple(float(el.get(k)) for k in ("x1", "y1", "x2", "y2"))  # type: ignore[return-value]


def test_scatter_has_a_45_degree_one_to_one_line_and_the_fit() -> None:
    svg = scatter_svg(BODY)
    root = ET.fromstring(svg)
    x1, y1, x2, y2 = _line(root, "one-to-one")
    assert (y1 - y2) == pytest.approx(x2 - x1)  # equal axes: 45°
    dots = root.findall(".//s:g[@id='pairs']/s:circle", NS)
    assert len(dots) == 2  # the pair without a forecast is not drawn
    cx, cy = float(dots[0].get("cx")), float(dots[0].get("cy"))  # observed = forecast = 1.0
    assert (cy - y1) == pytest.approx(-(cx - x1), abs=0.02)
    fx1, fy1, fx2, fy2 = _line(root, "fit")
    assert (fy1 - fy2) / (fx2 - fx1) == pytest.approx(1.2, rel=1e-3)
    assert "Follow lifeguards" in svg


def test_series_and_an_empty_report() -> None:
    root = ET.fromstring(series_svg(BODY))
    assert root.find(".//s:polyline[@id='forecast']", NS) is not None
    assert len(root.findall(".//s:g[@id='observed']/s:circle", NS)) == 2
    empty = series_svg({"spot_id": "cove", "pairs": []})
    assert "no pairs" in empty and "Follow lifeguards" in empty
    ET.fromstring(scatter_svg({"spot_id": "cove", "pairs": []}))
