"""GeoJSON (RFC 7946) for maps: spots as Point features.

Positions are ``[longitude, latitude]`` in WGS 84 decimal degrees (RFC 7946 §3.1.1), rounded to 7
decimals (~1 cm, §11.2 advises no more precision than needed); there is no ``crs`` member (§4).
Everything about a spot other than its position goes in ``properties``. The optional
FeatureCollection ``bbox`` is ``[west, south, east, north]`` (§5), with west > east when the
spots straddle the antimeridian (§5.2).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

__all__ = ["MEDIA_TYPE", "spot_feature", "spots_feature_collection"]

MEDIA_TYPE = "application/geo+json"  # RFC 7946 §12
_DECIMALS = 7
_POSITION_KEYS = ("latitude", "longitude")


def _json_value(value: Any) -> Any:
    """Plain JSON value: non-finite floats become null, tuples lists, numpy scalars Python numbers."""
    if hasattr(value, "item") and callable(value.item) and getattr(value, "ndim", None) == 0:
        value = value.item()
    if hasattr(value, "tolist") and callable(value.tolist):
        value = value.tolist()
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, Mapping):
        return {str(k): _json_value(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_json_value(v) for v in value]
    if value is None or isinstance(value, str | int | bool):
        return value
    return str(value)  # e.g. datetimes: callers should pass RFC 3339 strings; never fail on them


def _position(spot: Mapping[str, Any], where: str) -> tuple[float, float]:
    out = []
    for key, limit in (("longitude", 180.0), ("latitude", 90.0)):
        if key not in spot:
            raise ValueError(f"{where}: missing `{key}`")
        try:
            v = float(spot[key])
        except (TypeError, ValueError):
            raise ValueError(f"{where}: `{key}` must be a number, got {spot[key]!r}") from None
        if not (math.isfinite(v) and -limit <= v <= limit):
            raise ValueError(f"{where}: `{key}` must be within [-{limit:g}, {limit:g}] degrees, got {v!r}")
        out.append(round(v, _DECIMALS))
    return out[0], out[1]


def spot_feature(spot: Mapping[str, Any], *, where: str = "spot") -> dict[str, Any]:
    """One spot as a GeoJSON Point Feature; ``id`` (if present) is also the Feature id."""
    lon, lat = _position(spot, where)
    props = {k: _json_value(v) for k, v in spot.items() if k not in _POSITION_KEYS}
    feature: dict[str, Any] = {"type": "Feature", "geometry": {"type": "Point", "coordinates": [lon, lat]}}
    if isinstance(props.get("id"), str | int) and not isinstance(props.get("id"), bool):
        feature["id"] = props["id"]
    feature["properties"] = props
    return feature


def _bbox(positions: Sequence[tuple[float, float]]) -> list[float]:
    lons = sorted({p[0] for p in positions})
    lats = [p[1] for p in positions]
    # The smallest longitude interval holding every spot lies opposite the largest gap between
    # neighbouring longitudes (counting the gap that wraps through ±180).
    gaps = [(lons[i + 1] - lons[i], i) for i in range(len(lons) - 1)]
    wrap_gap = lons[0] + 360.0 - lons[-1]
    widest, at = max(gaps, default=(-1.0, -1))
    if widest > wrap_gap:
        west, east = lons[at + 1], lons[at]  # crosses the antimeridian: west > east
    else:
        west, east = lons[0], lons[-1]
    return [west, min(lats), east, max(lats)]


def spots_feature_collection(spots: Sequence[Mapping[str, Any]], *, bbox: bool = True) -> dict[str, Any]:
    """A FeatureCollection with one Point per spot (dicts with latitude, longitude and properties
    such as id, name, faces_deg). Raises ValueError naming the spot (index and id) and the field if
    a position is missing or out of range. ``bbox`` adds the collection's bounding box."""
    features = []
    for n, spot in enumerate(spots):
        where = f"spots[{n}]" + (f" ({spot['id']!r})" if "id" in spot else "")
        features.append(spot_feature(spot, where=where))
    out: dict[str, Any] = {"type": "FeatureCollection"}
    if bbox and features:
        out["bbox"] = _bbox([tuple(f["geometry"]["coordinates"]) for f in features])
    out["features"] = features
    return out
