"""app.services.outlook_cache: cache identity and the single-flight lock (the caching piece).

The stored-row behaviour (reuse while inputs are unchanged, recompute only the spots whose
inputs changed, one computation while pollers wait) is tested end to end in test_outlooks.py;
here the pieces it is built from, and that the public entry points stay importable from
app.services.outlooks (one import graph: models <- inputs/steps <- compute <- cache <- outlooks).
"""

from __future__ import annotations

import ast
import hashlib
import json
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path

import pytest

from app.errors import BadInput
from app.services import outlook_cache, outlook_compute, outlooks
from app.services.outlook_inputs import OutlookOptions

ROOT = Path(__file__).resolve().parents[3]


def test_variant_is_stable_and_tells_options_apart() -> None:
    t = datetime(2031, 1, 1, tzinfo=UTC)
    a = OutlookOptions(72, t, "metric", None, 0.0).variant()
    assert a == OutlookOptions(72, t, "metric", None, 0.0).variant() and len(a) == 40
    others = {OutlookOptions(*o).variant() for o in [(48, t, "metric", None, 0.0), (72, None, "metric", None, 0.0),
              (72, t, "imperial", None, 0.0), (72, t, "metric", "guards", 0.0), (72, t, "metric", None, 0.5)]}  # fmt: skip
    assert a not in others and len(others) == 5


def test_options_pin_the_variant_of_rows_stored_before_them() -> None:
    """The variant is the SHA-256 (FIPS 180-4, via hashlib) of the JSON [hours, start, units,
    agency, water level], cut to 40 hex digits, as stored rows were keyed before the options were
    one object: the literals are what the former `variant(...)` function gave for these options,
    so rows stored before keep being found."""
    t = datetime(2031, 1, 1, tzinfo=UTC)
    want = hashlib.sha256(json.dumps([72, t.isoformat(), "metric", None, 0.0]).encode()).hexdigest()[:40]
    assert OutlookOptions(72, t, "metric", None, 0.0).variant() == want == "c19d97a7706e83d43d1854f2458252d51aa34027"
    assert OutlookOptions().variant() == "81b0180fded4c3532154e92fb36a584dd1ac40df"  # 72 h from now, metric
    pairs = OutlookOptions(48, None, "imperial", "guards", [(t, 0.5)])
    assert pairs.variant() == "0b8a43cb67309890ee2b2f11a651ac63d924b171"


def test_options_are_checked_once_hash_alike_and_key_the_first_hour() -> None:
    t = datetime(2031, 1, 1, 6, tzinfo=UTC)
    a = OutlookOptions(hours=24, start=t.astimezone(timezone(timedelta(hours=2))), water_level_m=1)
    b = OutlookOptions.of(hours=24, start=t, water_level_m=1.0)
    assert a == b and hash(a) == hash(b) and a.variant() == b.variant()  # the same instant and level
    assert a.start == t and a.start.tzinfo is UTC and isinstance(a.water_level_m, float)
    assert OutlookOptions.of(a) is a and OutlookOptions.of(a, units="imperial").units == "imperial"
    pairs = OutlookOptions(water_level_m=[(t, 0.2), (t + timedelta(hours=1), 0.4)])
    assert isinstance(pairs.water_level_m, tuple) and hash(pairs) == hash(OutlookOptions(water_level_m=pairs.water_level_m))
    now = datetime(2031, 1, 1, 9, 41, tzinfo=UTC)
    assert OutlookOptions().first_hour(now) == datetime(2031, 1, 1, 9, tzinfo=UTC)
    assert OutlookOptions().key(OutlookOptions().first_hour(now))[1] == "2031-01-01T09:00:00+00:00"
    assert a.first_hour(now) == t and a.key(now)[1] == t.isoformat()  # a start given wins
    with pytest.raises(BadInput, match="hours"):
        OutlookOptions(hours=0)
    with pytest.raises(BadInput, match="units"):
        OutlookOptions(units="furlongs")
    with pytest.raises(BadInput, match="start"):
        OutlookOptions(start=datetime(2031, 1, 1))  # no timezone


def test_one_lock_per_spot_and_variant() -> None:
    lock = outlook_cache.inflight_lock("spot", "v1")
    assert outlook_cache.inflight_lock("spot", "v1") is lock
    assert outlook_cache.inflight_lock("spot", "v2") is not lock


def test_the_entry_points_are_the_same_objects_from_app_services_outlooks() -> None:
    assert outlooks.get_outlook is outlook_cache.get_outlook
    assert outlooks.refresh_stale is outlook_cache.refresh_stale
    assert outlooks.compute_outlook is outlook_compute.compute_outlook
    assert outlooks.OUTLOOK_VERSION == outlook_compute.OUTLOOK_VERSION


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text())
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module:
            out.add(node.module)
            out.update(f"{node.module}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return out


def test_the_outlook_modules_import_one_way() -> None:
    order = ["outlook_numbers", "outlook_inputs", "outlook_steps", "outlook_compute", "outlook_cache", "outlooks"]
    for i, name in enumerate(order):
        used = _imports(ROOT / "app" / "services" / f"{name}.py")
        later = {f"app.services.{m}" for m in order[i + 1 :]}
        assert not (used & later), f"{name} imports a module above it: {used & later}"
    for name in ("offshore", "nearshore", "surf", "surf_peel"):
        assert not any(m.startswith("app") for m in _imports(ROOT / "models" / f"{name}.py"))
