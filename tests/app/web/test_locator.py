"""The locator picture: positions projected on a local plane (equirectangular about the group's
centre), north up, a scale bar in km; a text alternative naming every place."""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import pytest

from app.web.locator import EARTH_RADIUS_KM, Place, locator_svg

NS = {"s": "http://www.w3.org/2000/svg"}


def circles(svg: str) -> list[tuple[float, float]]:
    root = ET.fromstring(svg)
    return [(float(c.get("cx")), float(c.get("cy"))) for c in root.iterfind(".//s:circle", NS)]


def test_geometry_north_up_and_to_scale():
    # two spots 0.1° of latitude apart on one meridian, and one 0.1° of longitude east at 60° N,
    # where a degree of longitude is cos 60° = half a degree of latitude (spherical Earth)
    places = [Place("A", 60.0, 5.0, faces_deg=270, number=1), Place("B", 60.1, 5.0, number=2),
              Place("C", 60.0, 5.1, number=3)]
    svg = locator_svg(places)
    (ax, ay), (bx, by), (cx, cy) = circles(svg)
    assert bx == ax and by < ay  # north is up
    north = ay - by
    east = cx - ax
    assert east / north == pytest.approx(math.cos(math.radians(60.05)), rel=0.01)
    # the scale bar's length in px over its km matches the drawing's px per km
    km = float(re.search(r">([0-9.]+) km<", svg).group(1))
    bar = float(re.search(r'v5 h([0-9.]+) v-5', svg).group(1))
    px_per_km = north / (0.1 * math.pi / 180 * EARTH_RADIUS_KM)
    assert bar / km == pytest.approx(px_per_km, rel=1e-3)


def test_text_alternative_and_escaping():
    svg = locator_svg([Place("Reef <one> & co", 10.0, 20.0, number=1), Place("buoy", 10.0, 19.9, kind="source"),
                       Place("model", 10.0, 19.9, kind="source")])
    root = ET.fromstring(svg)  # well-formed despite the markup in the name
    assert root.get("role") == "img"
    title = root.find("s:title", NS).text
    desc = root.find("s:desc", NS).text
    assert title and "Reef <one> & co at 10.0000, 20.0000" in desc and "buoy" in desc and "model" in desc
    assert "2 sources" in svg  # co-located sources share one square
    assert len(root.findall(".//s:rect", NS)) == 2  # the frame and one source square


def test_one_place_and_none():
    assert locator_svg([]) == ""
    assert len(circles(locator_svg([Place("Solo", 0.0, 0.0, number=1)]))) == 1
