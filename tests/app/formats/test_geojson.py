"""GeoJSON output (RFC 7946) of spots."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from app.formats.geojson import MEDIA_TYPE, spots_feature_collection

# A fictional spot west of a fictional coast: longitude negative and far larger in size than latitude,
# so swapping the two would be visible.
SPOT = {
    "id": "gull-ledge",
    "name": "Gull Ledge",
    "latitude": 12.3456789,
    "longitude": -70.9876543,
    "faces_deg": 270.0,
    "sources": ["buoy-a"],
}


def check_rfc7946(doc):
    """Structural rules of RFC 7946 §3.1.1, §3.2, §3.3, §4, §5 that our output must meet."""
    assert doc["type"] == "FeatureCollection" and isinstance(doc["features"], list)
    assert "crs" not in doc  # §4: the crs member was removed
    for f in doc["features"]:
        assert f["type"] == "Feature" and "crs" not in f
        assert set(f) <= {"type", "id", "geometry", "properties"}
        assert isinstance(f["properties"], dict)
        g = f["geometry"]
        assert g["type"] == "Point" and len(g["coordinates"]) == 2
        lon, lat = g["coordinates"]
        assert -180 <= lon <= 180 and -90 <= lat <= 90
    if "bbox" in doc:
        west, south, east, north = doc["bbox"]
        assert south <= north


def test_position_is_lon_lat_and_properties_carry_the_rest():
    doc = spots_feature_collection([SPOT])
    check_rfc7946(doc)
    f = doc["features"][0]
    # RFC 7946 §3.1.1: "longitude, latitude" order; 7 decimals (~1 cm).
    assert f["geometry"]["coordinates"] == [-70.9876543, 12.3456789]
    assert f["id"] == "gull-ledge"
    assert f["properties"] == {
        "id": "gull-ledge",
        "name": "Gull Ledge",
        "faces_deg": 270.0,
        "sources": ["buoy-a"],
    }
    assert doc["bbox"] == [-70.9876543, 12.3456789, -70.9876543, 12.3456789]


def test_serialises_as_strict_json_with_numpy_and_nan_values():
    spot = dict(SPOT, latitude=np.float64(1.5), faces_deg=np.float32(250.0), depth_m=float("nan"))
    spot["range_m"] = np.array([1.0, np.inf])
    text = json.dumps(spots_feature_collection([spot]), allow_nan=False)
    doc = json.loads(text)
    check_rfc7946(doc)
    props = doc["features"][0]["properties"]
    assert props["depth_m"] is None and props["range_m"] == [1.0, None] and props["faces_deg"] == 250.0
    assert MEDIA_TYPE == "application/geo+json"  # RFC 7946 §12


def test_bbox_west_south_east_north_and_antimeridian():
    a = dict(SPOT, id="a", longitude=10.0, latitude=-5.0)
    b = dict(SPOT, id="b", longitude=12.0, latitude=3.0)
    assert spots_feature_collection([a, b])["bbox"] == [10.0, -5.0, 12.0, 3.0]
    # RFC 7946 §5.2: a box across the antimeridian has west > east.
    c = dict(SPOT, id="c", longitude=179.5, latitude=0.0)
    d = dict(SPOT, id="d", longitude=-179.0, latitude=1.0)
    assert spots_feature_collection([c, d])["bbox"] == [179.5, 0.0, -179.0, 1.0]
    assert "bbox" not in spots_feature_collection([c], bbox=False)
    empty = spots_feature_collection([])
    assert empty == {"type": "FeatureCollection", "features": []}


@pytest.mark.parametrize(
    "change, message",
    [
        ({"latitude": 91.0}, r"spots\[1\] \('bad'\): `latitude` must be within \[-90, 90\]"),
        ({"longitude": math.nan}, r"`longitude` must be within"),
        ({"longitude": "west"}, r"`longitude` must be a number, got 'west'"),
        ({"latitude": None}, r"`latitude` must be a number"),
    ],
)
def test_bad_positions_name_the_spot_and_field(change, message):
    with pytest.raises(ValueError, match=message):
        spots_feature_collection([SPOT, dict(SPOT, id="bad", **change)])


def test_missing_position():
    spot = {k: v for k, v in SPOT.items() if k != "longitude"}
    with pytest.raises(ValueError, match=r"spots\[0\] \('gull-ledge'\): missing `longitude`"):
        spots_feature_collection([spot])
