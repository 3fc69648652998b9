"""Synthetic coasts, tables and spectra for the outlook and hazard tests (small grids: ~3 km, 50 m)."""

from __future__ import annotations

import dataclasses
import io
from datetime import datetime
from functools import cache

import numpy as np

from app.services.outlooks import PointSetup
from models.bathymetry import DepthGrid
from models.spectra import cos2s, jonswap
from models.transfer import TransferTable, build_table, reference_point

DX = 50.0
SLOPE = 0.02  # local beach slope inshore of x = -500
SHORE_X = 300.0
# reef spurs: the bed raised by up to RISE m at the shore, fading out by the 10 m contour, e-folding width
REEFS = {"reef": (8.0, 120.0), "broad-reef": (5.0, 200.0)}  # kind: (RISE m, width m)
POINT_X = -200.0  # centre of the headland's round tip (on y = 0)
POINT_R = 300.0
PERIODS = (8.0, 10.0, 12.0, 14.0, 16.0)
FREQ = np.linspace(0.04, 0.25, 43)
DIRS = np.arange(0.0, 360.0, 2.0)


def _xy() -> tuple[np.ndarray, np.ndarray]:
    x = np.arange(-2500.0, 500.0 + DX / 2, DX)
    y = np.arange(-1500.0, 1500.0 + DX / 2, DX)
    return np.meshgrid(x, y)


def _profile(dist: np.ndarray) -> np.ndarray:
    """Depth at `dist` metres seaward of the shoreline: slope 0.02, steeper (0.05 more) beyond 800 m,
    so the offshore edge (~160 m) is beyond the wave base of every test period."""
    return SLOPE * dist + 0.05 * np.maximum(0.0, dist - 800.0)


def grid_of(kind: str) -> DepthGrid:
    X, Y = _xy()
    if kind == "beach":  # straight parallel contours, shore along y, facing west (270)
        depth = _profile(SHORE_X - X)
    elif kind == "ridge":  # the shoreline juts 400 m seaward around y = 0, symmetric in y
        depth = _profile(SHORE_X - 400.0 * np.exp(-((Y / 350.0) ** 2)) - X)
    elif kind in REEFS:  # the beach with a shallow spur about y = 0, fading out by the 10 m contour
        rise, width = REEFS[kind]
        base = _profile(SHORE_X - X)
        depth = base - rise * np.exp(-((Y / width) ** 2)) * np.clip(1.0 - base / 10.0, 0.0, None)
    elif kind == "point":  # a headland 500 m out from the beach (stadium, round tip): contours wrap its tip
        tip = np.where(X < POINT_X, np.hypot(X - POINT_X, Y) - POINT_R, np.abs(Y) - POINT_R)
        depth = _profile(np.maximum(np.minimum(tip, SHORE_X - X), -1.0))
    elif kind == "jetty":  # the beach with a land strip running 1.8 km seaward north of the point
        depth = _profile(SHORE_X - X)
        depth = np.where((Y >= 250.0) & (Y <= 400.0) & (X >= -1500.0), -1.0, depth)
    else:
        raise ValueError(kind)
    return DepthGrid(depth=depth, x0=float(X[0, 0]), y0=float(Y[0, 0]), dx=DX, dy=DX)


def break_x(kind: str, y: float, depth: float = 2.0) -> float:
    """x of the `depth` contour at y (inshore of the 800 m steepening)."""
    if kind in REEFS:  # base depth d with d - R e^(-(y/W)²) (1 - d/10) = depth
        rise, width = REEFS[kind]
        r = rise * np.exp(-((y / width) ** 2))
        return float(SHORE_X - (depth + r) / (1.0 + r / 10.0) / SLOPE)
    shore = SHORE_X - (400.0 * np.exp(-((y / 350.0) ** 2)) if kind == "ridge" else 0.0)
    return float(shore - depth / SLOPE)


@cache
def table_for(kind: str, x: float, y: float, reference_depth_m: float = 10.0) -> TransferTable:
    grid = grid_of(kind)
    xr, yr, _ = reference_point(grid, x, y, reference_depth_m)
    return build_table(
        grid, xr, yr, periods_s=PERIODS, direction_bin_deg=2.0, launch_spacing_deg=1.0, smoothing_m=0.0
    )


def _table(kind: str, x: float, y: float, profile: bool) -> TransferTable:
    """The cached table, without its surf-zone profile unless `profile` (the tests of the
    single-wave path keep their meaning: models.surf uses that path for tables without one)."""
    t = table_for(kind, x, y)
    return t if profile else dataclasses.replace(t, profile=None)


def points_for(
    kind: str, ys: tuple[float, ...], names: tuple[str, ...] | None = None, *, profile: bool = False
) -> list[PointSetup]:
    grid = grid_of(kind)
    names = names or tuple(f"p{i}" for i in range(len(ys)))
    out = []
    for name, y in zip(names, ys, strict=True):
        x = break_x(kind, y)
        geo = grid.contour_geometry(x, y)
        out.append(
            PointSetup(
                name, x, y, _table(kind, x, y, profile), float(geo.depth), float(geo.slope), float(geo.normal_deg)
            )
        )
    return out


def point_xy(depth: float, angles_deg: tuple[float, ...]) -> list[tuple[float, float]]:
    """Points on the `depth` contour round the headland's tip, at angles (math, from +x) about its centre."""
    r = POINT_R + depth / SLOPE
    return [(POINT_X + r * np.cos(np.radians(a)), r * np.sin(np.radians(a))) for a in angles_deg]


def points_at(kind: str, xys: list[tuple[float, float]], *, profile: bool = False) -> list[PointSetup]:
    grid = grid_of(kind)
    out = []
    for i, (x, y) in enumerate(xys):
        geo = grid.contour_geometry(x, y)
        out.append(
            PointSetup(
                f"p{i}", x, y, _table(kind, x, y, profile), float(geo.depth), float(geo.slope), float(geo.normal_deg)
            )
        )
    return out


def swell(hs: float, tp: float, from_deg: float, *, gamma: float = 20.0, s: float = 300.0) -> np.ndarray:
    """A narrow swell E(f, θ) on FREQ × DIRS [m²/Hz/rad] (JONSWAP × cos-2s)."""
    return (
        jonswap(FREQ, hs=hs, tp=tp, gamma=gamma)[:, None] * cos2s(DIRS, mean_dir_deg=from_deg, s=s)[None, :]
    )


def table_npz(table: TransferTable) -> bytes:
    buf = io.BytesIO()
    np.savez(buf, **table.to_arrays())
    return buf.getvalue()


def hours(t0: datetime, n: int) -> list[datetime]:
    from datetime import timedelta

    return [t0 + timedelta(hours=h) for h in range(n)]
