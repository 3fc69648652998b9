"""The spot registry: import a profile + bathymetry file into the database, list and remove spots.

Everything is read and checked before the database is touched, and a spot is replaced in one
transaction, so a bad profile leaves the database exactly as it was.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from app.db.tables import Bathymetry, BreakPoint, RegionalBathymetry, Spot, TransferTableRow
from app.errors import NotFound, ProfileError
from app.schemas.profile import BathymetrySpec, SpotProfile
from app.schemas.spots import BreakPointPublic, GridSummary, SpotPublic
from app.schemas.toml import parse_toml_model
from models.bathymetry import DepthGrid
from models.geodesy import to_local, to_lonlat
from models.transfer import wave_base_period_s

__all__ = [
    "LoadedSpot",
    "delete_spot",
    "depth_grid_of",
    "get_spot",
    "regional_grids_of",
    "spot_row",
    "import_spot",
    "list_spots",
    "load_profile",
    "parse_profile_text",
    "spot_public",
]


@dataclass(frozen=True)
class LoadedPoint:
    name: str
    x: float
    y: float
    latitude: float
    longitude: float
    depth_m: float
    reference_depth_m: float


@dataclass(frozen=True)
class LoadedSpot:
    """A validated profile with its bathymetry on the local grid, ready to store."""

    profile: SpotProfile
    grid: DepthGrid
    points: list[LoadedPoint]
    bathymetry_file: str
    regional: tuple[DepthGrid, ...] = ()  # one per `regional_bathymetry` entry, in profile order


def parse_profile_text(text: str, *, where: str) -> SpotProfile:
    return parse_toml_model(text, SpotProfile, where=where, error=ProfileError)


def _inside(base: Path, relative: str, *, where: str, field: str = "bathymetry.file") -> Path:
    if Path(relative).is_absolute():
        raise ProfileError(f"{where}: field `{field}`: must be a path relative to the profile, got {relative!r}", field=field)
    target = (base / relative).resolve()
    if not target.is_relative_to(base.resolve()):
        raise ProfileError(f"{where}: field `{field}`: {relative!r} leaves the profile's folder", field=field)
    if not target.is_file():
        raise ProfileError(f"{where}: field `{field}`: no such file {relative!r}", field=field)
    return target


def _read_grid(
    profile: SpotProfile, path: Path, spec: BathymetrySpec | None = None, field: str = "bathymetry.file", *, complete: bool = False
) -> DepthGrid:
    """The grid a spec names, on the local frame of the profile's origin. `complete`: refuse a file
    with no-data cells (holes), naming the first; cells the projection leaves empty at the rim are
    filled from their nearest neighbour."""
    from app.formats import grids

    spec = spec or profile.bathymetry
    origin = profile.origin
    try:
        if spec.format == "esri-ascii":
            text = path.read_text(encoding="utf-8", errors="replace")
            data = grids.parse_esri_ascii(text, name=path.name, crs=spec.crs)
        elif spec.format == "netcdf":
            data = grids.read_netcdf_grid(path, variable=spec.variable)
        else:  # soundings are projected before gridding, so they arrive in local metres
            text = path.read_text(encoding="utf-8", errors="replace")
            data = grids.parse_xyz(
                text, name=path.name, spacing_m=spec.spacing_m, crs=spec.crs, origin=(origin.latitude, origin.longitude)
            )
        if complete:
            _refuse_holes(data, spec, field)
        grid = grids.to_depth_grid(
            data, values=spec.values, origin=(origin.latitude, origin.longitude), spacing_m=spec.spacing_m
        )
        return _fill_rim(grid) if complete else grid
    except ValueError as exc:  # GridError and friends name the file and line
        raise ProfileError(f"field `{field}`: {exc}", field=field) from exc
    except OSError as exc:
        raise ProfileError(f"bathymetry {path.name}: cannot read: {exc}", field=field) from exc


def _refuse_holes(data: Any, spec: BathymetrySpec, field: str) -> None:
    holes = np.isnan(data.values)
    if holes.any():
        j, i = (int(v) for v in np.argwhere(holes)[0])
        unit = "°" if data.crs == "lonlat" else " m"
        raise ProfileError(
            f"field `{field}`: {spec.file} has {int(holes.sum())} no-data cell(s) (holes), the first at row {j}, "
            f"column {i} (x {data.x[i]:.5g}{unit}, y {data.y[j]:.5g}{unit}); a regional grid must be complete "
            f"(land as elevation above the datum, not as no-data)", field=field)


def _fill_rim(grid: DepthGrid) -> DepthGrid:
    from scipy import ndimage

    empty = np.isnan(grid.depth)
    if not empty.any():
        return grid
    idx = ndimage.distance_transform_edt(empty, return_distances=False, return_indices=True)
    return DepthGrid(grid.depth[tuple(idx)], grid.x0, grid.y0, grid.dx, grid.dy, grid.meta)


def load_profile(path: Path | str) -> LoadedSpot:
    """Read and check a profile and its bathymetry; raise ProfileError naming the field or file."""
    path = Path(path)
    where = path.name
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise ProfileError(f"{where}: cannot read profile: {exc}") from exc
    except UnicodeDecodeError as exc:
        raise ProfileError(f"{where}: profile is not UTF-8 text") from exc
    profile = parse_profile_text(text, where=where)
    grid_path = _inside(path.parent, profile.bathymetry.file, where=where)
    grid = _read_grid(profile, grid_path)
    points = _locate_points(profile, grid, where=where)
    regional = []
    for n, spec in enumerate(profile.regional_bathymetry):
        field = f"regional_bathymetry.{n}"
        path_n = _inside(path.parent, spec.file, where=where, field=f"{field}.file")
        if spec.origin is not None and spec.origin != profile.origin:
            raise ProfileError(f"{where}: field `{field}.origin`: a regional grid is placed on the local grid's "
                               f"origin; leave it out or give the same", field=f"{field}.origin")  # fmt: skip
        g = _read_grid(profile, path_n, spec, f"{field}.file", complete=True)
        _check_regional(profile, grid, g, spec, field=field, where=where)
        regional.append(g)
    return LoadedSpot(profile=profile, grid=grid, points=points, bathymetry_file=profile.bathymetry.file,
                      regional=tuple(regional))  # fmt: skip


# A regional grid agrees with the local one when, over the local water cells deeper than this that
# it covers, the median depth difference is within max(_AGREE_M, _AGREE_FRACTION·median depth):
# a coarse grid smooths the seabed but does not move it (common practice for a consistency check).
_AGREE_DEPTH_M, _AGREE_M, _AGREE_FRACTION = 5.0, 3.0, 0.25


def _check_regional(profile: SpotProfile, local: DepthGrid, g: DepthGrid, spec: BathymetrySpec, *, field: str, where: str) -> None:
    """Refuse a regional grid that does not overlap the local one, has holes, or disagrees with it
    (another datum, or depth/elevation swapped)."""
    name = spec.file
    if spec.datum != profile.bathymetry.datum:
        raise ProfileError(
            f"{where}: field `{field}.datum`: {name} is on datum {spec.datum!r} but the local grid on "
            f"{profile.bathymetry.datum!r}; convert one of them so both use the same datum", field=f"{field}.datum")
    lx0, lx1, ly0, ly1 = local.extent
    gx0, gx1, gy0, gy1 = g.extent
    if gx1 <= lx0 or gx0 >= lx1 or gy1 <= ly0 or gy0 >= ly1:
        raise ProfileError(
            f"{where}: field `{field}.file`: {name} (x {gx0:.0f}..{gx1:.0f} m, y {gy0:.0f}..{gy1:.0f} m) does not "
            f"overlap the local grid (x {lx0:.0f}..{lx1:.0f} m, y {ly0:.0f}..{ly1:.0f} m)", field=f"{field}.file")
    # compare depths where both have water deep enough that the coarse coastline does not matter
    X, Y = np.meshgrid(local.x, local.y)
    use = (local.depth > _AGREE_DEPTH_M) & g.contains(X, Y)
    if use.sum() < 4:
        return
    from scipy.interpolate import RegularGridInterpolator

    # the file's own values (land negative, not clipped), bilinear at the local cells
    theirs = RegularGridInterpolator((g.y, g.x), g.depth)(np.column_stack([Y[use], X[use]]))
    ours = local.depth[use]
    diff = float(np.median(theirs - ours))
    limit = max(_AGREE_M, _AGREE_FRACTION * float(np.median(ours)))
    if abs(diff) > limit and abs(float(np.median(-theirs - ours))) < abs(diff):
        raise ProfileError(
            f"{where}: field `{field}.values`: {name} matches the local grid only with its sign reversed (median "
            f"{np.median(theirs):.1f} m where the local grid has {np.median(ours):.1f} m of water): is it elevation "
            f"rather than depth (or the reverse)?", field=f"{field}.values")
    if abs(diff) > limit:
        raise ProfileError(
            f"{where}: field `{field}.datum`: {name} is {diff:+.1f} m deeper than the local grid where they overlap "
            f"(median; at most {limit:.1f} m expected): an inconsistent datum or vertical unit", field=f"{field}.datum")


def _locate_points(profile: SpotProfile, grid: DepthGrid, *, where: str) -> list[LoadedPoint]:
    origin = profile.origin
    xmax = grid.x0 + (grid.depth.shape[1] - 1) * grid.dx
    ymax = grid.y0 + (grid.depth.shape[0] - 1) * grid.dy
    out = []
    for n, bp in enumerate(profile.break_points):
        field = f"break_points.{n}"
        if bp.x is not None and bp.y is not None:
            x, y = bp.x, bp.y
            lon, lat = (float(v) for v in to_lonlat(x, y, origin.latitude, origin.longitude))
        else:
            assert bp.latitude is not None and bp.longitude is not None
            lat, lon = bp.latitude, bp.longitude
            x, y = (float(v) for v in to_local(lat, lon, origin.latitude, origin.longitude))
        if not (grid.x0 <= x <= xmax and grid.y0 <= y <= ymax):
            raise ProfileError(
                f"{where}: field `{field}` ({bp.name!r}): position x={x:.0f} m, y={y:.0f} m is off the grid "
                f"(x {grid.x0:.0f}..{xmax:.0f}, y {grid.y0:.0f}..{ymax:.0f})",
                field=field,
            )
        depth = float(grid.depth_at(np.array([x]), np.array([y]))[0])
        if not np.isfinite(depth) or depth <= 0:
            raise ProfileError(
                f"{where}: field `{field}` ({bp.name!r}): the break point is on land or in no-data (depth {depth:.2f} m)",
                field=field,
            )
        ref = bp.reference_depth_m or profile.model.reference_depth_m
        out.append(LoadedPoint(bp.name, float(x), float(y), lat, lon, depth, ref))
    return out


def _sha256(*parts: bytes) -> str:
    h = hashlib.sha256()
    for p in parts:
        h.update(p)
    return h.hexdigest()


def grid_sha256(grid: DepthGrid) -> str:
    depth = np.ascontiguousarray(grid.depth, dtype=np.float64)
    geometry = json.dumps([depth.shape, grid.x0, grid.y0, grid.dx, grid.dy]).encode()
    return _sha256(depth.tobytes(), geometry)


def import_spot(session: Session, path: Path | str) -> Spot:
    """Import (or atomically replace) the spot a profile file describes."""
    loaded = load_profile(path)
    return store_spot(session, loaded)


def _grid_row(cls: type, grid: DepthGrid, **kw: Any) -> Any:
    return cls(depth=np.asarray(grid.depth, dtype=np.float64), nx=int(grid.depth.shape[1]), ny=int(grid.depth.shape[0]),
               x0=float(grid.x0), y0=float(grid.y0), dx=float(grid.dx), dy=float(grid.dy), sha256=grid_sha256(grid), **kw)  # fmt: skip


def store_spot(session: Session, loaded: LoadedSpot) -> Spot:
    profile, grid = loaded.profile, loaded.grid
    dump = profile.model_dump(mode="json")
    existing = session.get(Spot, profile.id)
    kept_tables: dict[str, TransferTableRow] = {}
    if existing is not None:
        # keep each break point's table in use until a rebuild replaces it (its input hash says
        # whether it is stale); only the new spot's points of the same name inherit one
        kept_tables = {
            bp.name: TransferTableRow(
                spot_id=profile.id, input_hash=bp.table.input_hash, engine_version=bp.table.engine_version,
                built_at=bp.table.built_at, build_seconds=bp.table.build_seconds, arrays=bp.table.arrays,
                meta=dict(bp.table.meta),
            )
            for bp in existing.break_points
            if bp.table is not None
        }
        session.delete(existing)
        session.flush()
    origin = profile.origin
    spot = Spot(
        id=profile.id,
        name=profile.name,
        latitude=profile.latitude,
        longitude=profile.longitude,
        faces_deg=profile.faces_deg,
        timezone=profile.timezone,
        profile=dump,
        profile_sha256=_sha256(json.dumps(dump, sort_keys=True).encode()),
        sources=list(profile.sources),
    )
    spot.bathymetry = Bathymetry(
        depth=np.asarray(grid.depth, dtype=np.float64),
        nx=int(grid.depth.shape[1]),
        ny=int(grid.depth.shape[0]),
        x0=float(grid.x0),
        y0=float(grid.y0),
        dx=float(grid.dx),
        dy=float(grid.dy),
        origin_latitude=origin.latitude,
        origin_longitude=origin.longitude,
        datum=profile.bathymetry.datum,
        source_file=loaded.bathymetry_file,
        source_format=profile.bathymetry.format,
        sha256=grid_sha256(grid),
    )
    spot.regional_grids = [
        _grid_row(RegionalBathymetry, g, position=n, datum=spec.datum, source_file=spec.file, source_format=spec.format)
        for n, (spec, g) in enumerate(zip(profile.regional_bathymetry, loaded.regional, strict=True))
    ]
    spot.break_points = [
        BreakPoint(
            position=i,
            name=p.name,
            x=p.x,
            y=p.y,
            latitude=p.latitude,
            longitude=p.longitude,
            depth_m=p.depth_m,
            reference_depth_m=p.reference_depth_m,
            table=kept_tables.get(p.name),
        )
        for i, p in enumerate(loaded.points)
    ]
    session.add(spot)
    session.flush()
    return spot


def _spot_query():  # type: ignore[no-untyped-def]
    return select(Spot).options(
        selectinload(Spot.bathymetry), selectinload(Spot.regional_grids),
        selectinload(Spot.break_points).selectinload(BreakPoint.table),
    )  # fmt: skip


def list_spots(session: Session) -> list[Spot]:
    return list(session.scalars(_spot_query().order_by(Spot.id)))


def get_spot(session: Session, spot_id: str) -> Spot:
    spot = session.scalars(_spot_query().where(Spot.id == spot_id)).first()
    if spot is None:
        raise NotFound(f"no spot with id {spot_id!r}")
    return spot


def spot_row(session: Session, spot_id: str) -> Spot:
    """The spot's own row, without its grids and tables (`get_spot` loads those): for answers that
    need only its name, time zone or existence, such as a page's ETag."""
    spot = session.get(Spot, spot_id)
    if spot is None:
        raise NotFound(f"no spot with id {spot_id!r}")
    return spot


def delete_spot(session: Session, spot_id: str) -> None:
    session.delete(get_spot(session, spot_id))


def depth_grid_of(spot: Spot) -> DepthGrid:
    b = spot.bathymetry
    if b is None:
        raise NotFound(f"spot {spot.id!r} has no bathymetry")
    return DepthGrid(depth=b.depth, x0=b.x0, y0=b.y0, dx=b.dx, dy=b.dy)


def regional_grids_of(spot: Spot) -> list[DepthGrid]:
    """The spot's regional grids in profile order (empty when it has none)."""
    return [DepthGrid(depth=r.depth, x0=r.x0, y0=r.y0, dx=r.dx, dy=r.dy) for r in spot.regional_grids]


def _summary(b: Any) -> GridSummary:
    depth = b.depth
    water = depth[np.isfinite(depth) & (depth > 0)]
    return GridSummary(
        nx=b.nx,
        ny=b.ny,
        dx_m=b.dx,
        dy_m=b.dy,
        x_range_m=(b.x0, b.x0 + (b.nx - 1) * b.dx),
        y_range_m=(b.y0, b.y0 + (b.ny - 1) * b.dy),
        depth_min_m=round(float(water.min()), 3) if water.size else 0.0,
        depth_max_m=round(float(water.max()), 3) if water.size else 0.0,
        land_fraction=round(1.0 - water.size / depth.size, 4),
        datum=b.datum,
        source_format=b.source_format,
        sha256=b.sha256,
    )


def spot_public(spot: Spot) -> SpotPublic:
    b = spot.bathymetry
    assert b is not None
    grid = _summary(b)
    regional = [_summary(r) for r in spot.regional_grids]
    reach = wave_base_period_s([depth_grid_of(spot), *regional_grids_of(spot)])
    points = [
        BreakPointPublic(
            name=p.name,
            x_m=round(p.x, 2),
            y_m=round(p.y, 2),
            latitude=round(p.latitude, 6),
            longitude=round(p.longitude, 6),
            depth_m=round(p.depth_m, 3),
            reference_depth_m=p.reference_depth_m,
            table_built_at=p.table.built_at if p.table is not None else None,
        )
        for p in spot.break_points
    ]
    return SpotPublic(
        id=spot.id,
        name=spot.name,
        latitude=spot.latitude,
        longitude=spot.longitude,
        faces_deg=spot.faces_deg,
        timezone=spot.timezone,
        sources=list(spot.sources),
        grid=grid,
        regional_grids=regional,
        wave_base_period_s=None if reach is None else round(reach, 1),
        break_points=points,
        updated_at=spot.updated_at,
    )


def profile_document(spot: Spot) -> dict[str, Any]:
    return dict(spot.profile)
