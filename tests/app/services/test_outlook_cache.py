"""app.services.outlook_cache: cache identity and the single-flight lock (the caching piece).

The stored-row behaviour (reuse while inputs are unchanged, recompute only the spots whose
inputs changed, one computation while pollers wait) is tested end to end in test_outlooks.py;
here the pieces it is built from, and that the public entry points stay importable from
app.services.outlooks (one import graph: models <- inputs/steps <- compute <- cache <- outlooks).
"""

from __future__ import annotations

import ast
from datetime import UTC, datetime
from pathlib import Path

from app.services import outlook_cache, outlook_compute, outlooks

ROOT = Path(__file__).resolve().parents[3]


def test_variant_is_stable_and_tells_options_apart() -> None:
    t = datetime(2031, 1, 1, tzinfo=UTC)
    a = outlook_cache.variant(72, t, "metric", None, 0.0)
    assert a == outlook_cache.variant(72, t, "metric", None, 0.0) and len(a) == 40
    others = {outlook_cache.variant(*o) for o in [(48, t, "metric", None, 0.0), (72, None, "metric", None, 0.0),
              (72, t, "imperial", None, 0.0), (72, t, "metric", "guards", 0.0), (72, t, "metric", None, 0.5)]}  # fmt: skip
    assert a not in others and len(others) == 5


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
