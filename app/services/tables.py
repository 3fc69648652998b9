"""Transfer tables in the database: what is missing or stale, building it (locally in a process pool
or on a Dask cluster), loading it back, and the swell-window view of it.

A table's input hash covers the bathymetry (its sha256, and every regional grid's, in order), every
profile field that changes the result, the break point and the engine version; a build computes only the points whose stored hash
differs. Each new table replaces the old one in its own transaction after it is computed, so a build
killed half-way leaves the old tables in use and the next build redoes only what is still stale.
"""

from __future__ import annotations

import dataclasses
import io
import os
import time
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Executor, ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from app.db.session import session_scope
from app.db.tables import BreakPoint, Spot, TransferTableRow, utcnow
from app.errors import BadInput, NotFound
from app.observability import TABLE_BUILDS
from app.runtime import limit_blas_threads
from app.services.spots import depth_grid_of, regional_grids_of
from models import refdif, transfer
from models.errors import InvalidInput

__all__ = [
    "WINDOW_THRESHOLD",
    "BuildReport",
    "build_tables",
    "executor_for",
    "load_table",
    "point_options",
    "stale_points",
    "table_arrays_blob",
    "window_body",
]


def point_options(spot: Spot, bp: BreakPoint) -> dict[str, Any]:
    """Every input of a break point's table except the grid itself."""
    m = dict(spot.profile.get("model") or {})
    periods = np.round(np.geomspace(m.get("period_min_s", 4.0), m.get("period_max_s", 25.0), int(m.get("period_count", 32))), 3)
    return {
        "periods_s": periods.tolist(),
        "direction_bin_deg": float(m.get("direction_bin_deg", 2.0)),
        "launch_spacing_deg": float(m.get("launch_spacing_deg", 0.25)),
        "smoothing_m": m.get("smoothing_m"),
        "method": str(m.get("method", "rays")),
        "reference_depth_m": float(bp.reference_depth_m),
        "break_x": float(bp.x),
        "break_y": float(bp.y),
    }


def _hash(spot: Spot, options: dict[str, Any]) -> str:
    assert spot.bathymetry is not None
    regional = [r.sha256.encode() for r in spot.regional_grids]
    return transfer.input_hash(spot.bathymetry.sha256.encode(), regional=regional, **options)


@dataclass
class PointTask:
    spot_id: str
    point_id: int
    point_name: str
    options: dict[str, Any]
    input_hash: str


def stale_points(session: Session, spot_ids: Sequence[str] | None = None, *, force: bool = False) -> list[PointTask]:
    """Break points whose table is missing, built from other inputs, or by another engine version."""
    q = select(Spot).options(selectinload(Spot.bathymetry), selectinload(Spot.regional_grids),
                             selectinload(Spot.break_points).selectinload(BreakPoint.table))  # fmt: skip
    if spot_ids:
        q = q.where(Spot.id.in_(list(spot_ids)))
    spots = list(session.scalars(q.order_by(Spot.id)))
    if spot_ids:
        missing = sorted(set(spot_ids) - {s.id for s in spots})
        if missing:
            raise NotFound(f"no spot with id {', '.join(repr(m) for m in missing)}")
    tasks = []
    for spot in spots:
        for bp in spot.break_points:
            opts = point_options(spot, bp)
            digest = _hash(spot, opts)
            row = bp.table
            if force or row is None or row.input_hash != digest or row.engine_version != transfer.ENGINE_VERSION:
                tasks.append(PointTask(spot.id, bp.id, bp.name, opts, digest))
    return tasks


def table_arrays_blob(table: transfer.TransferTable) -> bytes:
    buf = io.BytesIO()
    np.savez_compressed(buf, **{k: np.asarray(v) for k, v in table.to_arrays().items()})
    return buf.getvalue()


def load_table(row: TransferTableRow) -> transfer.TransferTable:
    with np.load(io.BytesIO(row.arrays), allow_pickle=False) as z:
        data = {k: (z[k].item() if z[k].ndim == 0 else z[k]) for k in z.files}
    return transfer.TransferTable.from_arrays(data)


@dataclass
class BuildReport:
    built: list[dict[str, Any]] = field(default_factory=list)  # spot, point, seconds, lost_fraction
    skipped: int = 0  # up-to-date points
    failed: list[dict[str, str]] = field(default_factory=list)  # spot, point, reason
    seconds: float = 0.0


@contextmanager
def executor_for(workers: int | None = None, dask_address: str | None = None) -> Iterator[Executor | None]:
    """A process pool (default) or a Dask cluster's executor; None = build in this process."""
    if dask_address:
        try:
            from distributed import Client
        except ImportError as exc:  # pragma: no cover - dask is an optional extra
            raise BadInput("--dask needs the optional dependency: pip install 'shoalcast[dask]'") from exc
        client = Client(dask_address)
        try:
            yield client.get_executor()
        finally:
            client.close()
        return
    n = workers if workers is not None else (os.cpu_count() or 1)
    if n <= 1:
        yield None
        return
    with ProcessPoolExecutor(max_workers=n, initializer=limit_blas_threads) as pool:
        yield pool


Progress = Callable[[str, int, int], None]  # (label, done, total)


def build_tables(
    url: str,
    spot_ids: Sequence[str] | None = None,
    *,
    executor: Executor | None = None,
    force: bool = False,
    progress: Progress | None = None,
) -> BuildReport:
    """Build every missing or stale table of the given spots (all spots by default)."""
    t0 = time.perf_counter()
    report = BuildReport()
    with session_scope(url) as session:
        all_points = sum(len(s.break_points) for s in session.scalars(
            select(Spot).options(selectinload(Spot.break_points)).where(Spot.id.in_(list(spot_ids))) if spot_ids else select(Spot).options(selectinload(Spot.break_points))
        ))
        tasks = stale_points(session, spot_ids, force=force)
    report.skipped = all_points - len(tasks)
    by_spot: dict[str, list[PointTask]] = {}
    for t in tasks:
        by_spot.setdefault(t.spot_id, []).append(t)
    for n_spot, (spot_id, point_tasks) in enumerate(by_spot.items(), start=1):
        with session_scope(url) as session:
            spot = session.scalars(select(Spot).options(selectinload(Spot.bathymetry), selectinload(Spot.regional_grids))
                                   .where(Spot.id == spot_id)).one()  # fmt: skip
            grid = depth_grid_of(spot)
            regional = regional_grids_of(spot)
        label = f"{spot_id} ({n_spot}/{len(by_spot)})"
        refs, ok = [], []
        for t in point_tasks:
            try:
                xr, yr, _ = transfer.reference_point(grid, t.options["break_x"], t.options["break_y"], t.options["reference_depth_m"])
            except InvalidInput as exc:
                report.failed.append({"spot": spot_id, "point": t.point_name, "reason": str(exc)})
                continue
            refs.append((xr, yr))
            ok.append(t)
        if not ok:
            continue
        opts = {k: v for k, v in ok[0].options.items() if k not in ("reference_depth_m", "break_x", "break_y", "method")}
        t_spot = time.perf_counter()
        try:
            if ok[0].options.get("method") == refdif.METHOD:  # regional grids: in its rays and start lines
                tables = refdif.build_tables(
                    grid, refs, executor=executor, regional=regional,
                    progress=(lambda done, total, what, _l=label: progress(f"{_l} {what}", done, total)) if progress else None,
                    **opts,
                )  # fmt: skip
            else:
                tables = transfer.build_tables(
                    grid, refs, executor=executor, regional=regional,
                    progress=(lambda done, total, _l=label: progress(_l, done, total)) if progress else None,
                    **opts,
                )  # fmt: skip
        except InvalidInput as exc:
            report.failed.extend({"spot": spot_id, "point": t.point_name, "reason": str(exc)} for t in ok)
            TABLE_BUILDS.inc(len(ok), outcome="failed")
            continue
        seconds = (time.perf_counter() - t_spot) / len(ok)
        for t, (xr, yr), table in zip(ok, refs, tables, strict=True):
            _store(url, t, table, seconds=seconds, reference=(xr, yr))
            TABLE_BUILDS.inc(outcome="ok")
            report.built.append({"spot": spot_id, "point": t.point_name, "seconds": round(seconds, 2),
                                 "lost_fraction": round(table.lost_fraction, 5),
                                 "method": table.meta.get("method", "rays")})
    report.seconds = round(time.perf_counter() - t0, 2)
    return report


def _store(url: str, task: PointTask, table: transfer.TransferTable, *, seconds: float, reference: tuple[float, float]) -> None:
    meta = dict(table.meta)
    meta.update(reference_x=reference[0], reference_y=reference[1], reference_depth_m=table.reference_depth_m,
                lost_fraction=table.lost_fraction, options=task.options)
    with session_scope(url) as session:
        bp = session.get(BreakPoint, task.point_id)
        if bp is None:  # the spot was replaced or removed while we computed: drop the result
            return
        row = session.scalars(select(TransferTableRow).where(TransferTableRow.break_point_id == bp.id)).first()
        if row is None:
            row = TransferTableRow(break_point_id=bp.id, spot_id=task.spot_id)
            session.add(row)
        row.input_hash = task.input_hash
        row.engine_version = transfer.ENGINE_VERSION
        row.built_at = utcnow()
        row.build_seconds = float(seconds)
        row.arrays = table_arrays_blob(table)
        row.meta = _jsonable(meta)


def _jsonable(v: Any) -> Any:
    if isinstance(v, dict):
        return {str(k): _jsonable(x) for k, x in v.items()}
    if isinstance(v, list | tuple):
        return [_jsonable(x) for x in v]
    if isinstance(v, np.ndarray):
        return _jsonable(v.tolist())
    if isinstance(v, np.generic):
        return v.item()
    if isinstance(v, float) and not np.isfinite(v):
        return None
    return v


def _nulls(a: np.ndarray, digits: int) -> list[Any]:
    return [_nulls(r, digits) if np.ndim(r) else (None if not np.isfinite(r) else round(float(r), digits)) for r in a]


# A direction counts as open when K exceeds this: K² = 0.0225, about 2 % of the offshore energy
# (rays grazing a headland or island tip leave a converged but tiny leak below it).
WINDOW_THRESHOLD = 0.15


def _continued_arcs(t: transfer.TransferTable, threshold: float) -> list[list[tuple[float, float]]]:
    """Per period, the open arcs whose energy comes mostly (over half) from rays continued beyond a
    grid edge over assumed straight contours (docs/methods.md §3)."""
    marked = (t.coefficient > threshold) & (t.continued_fraction > 0.5)
    return transfer.swell_window(dataclasses.replace(t, coefficient=marked.astype(float)), threshold=0.5)


def window_body(session: Session, spot_id: str, *, threshold: float = WINDOW_THRESHOLD) -> dict[str, Any]:
    """The swell window of every break point (`shoalcast window --json`, GET /v1/spots/{id}/window)."""
    spot = session.scalars(
        select(Spot).options(selectinload(Spot.bathymetry), selectinload(Spot.regional_grids),
                             selectinload(Spot.break_points).selectinload(BreakPoint.table)).where(Spot.id == spot_id)
    ).first()  # fmt: skip
    if spot is None:
        raise NotFound(f"no spot with id {spot_id!r}")
    reach = transfer.wave_base_period_s([depth_grid_of(spot), *regional_grids_of(spot)])
    points = []
    for bp in spot.break_points:
        if bp.table is None:
            points.append({"name": bp.name, "reference_depth_m": bp.reference_depth_m, "built": False})
            continue
        t = load_table(bp.table)
        arcs = transfer.swell_window(t, threshold=threshold)
        points.append({
            "name": bp.name,
            "reference_depth_m": round(t.reference_depth_m, 2),
            "reference_x_m": round(t.reference_x, 1),
            "reference_y_m": round(t.reference_y, 1),
            "built": True,
            "built_at": bp.table.built_at,
            "engine_version": bp.table.engine_version,
            "lost_fraction": round(t.lost_fraction, 5),
            "periods_s": [round(float(p), 3) for p in t.periods_s],
            "directions_deg": [round(float(d), 3) for d in t.directions_deg],
            "coefficient": _nulls(t.coefficient, 4),
            "nearshore_direction_deg": _nulls(np.where(t.coefficient > 0, t.nearshore_direction_deg, np.nan), 1),
            "open_arcs_deg": [[[round(a, 1), round(b, 1)] for a, b in row] for row in arcs],
            "continued_arcs_deg": [[[round(a, 1), round(b, 1)] for a, b in row] for row in _continued_arcs(t, threshold)],
        })  # fmt: skip
    return {"spot_id": spot.id, "name": spot.name, "faces_deg": spot.faces_deg, "threshold": threshold,
            "wave_base_period_s": None if reach is None else round(reach, 1), "points": points}  # fmt: skip
