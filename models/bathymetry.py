"""Depth grids in local metres: interpolation, gradient, smoothing, open-ocean edges.

A `DepthGrid` holds depth[j, i] at x = x0 + i*dx, y = y0 + j*dy (row 0 = south, x east, y north),
metres positive down; land is depth <= 0 and NaN (no data) is treated as land.

Interpolation: depth is bilinear in the grid values (land counted as depth 0, so the coastline sits
where the interpolant crosses 0). The gradient is the bilinear interpolant of centred-difference
gradient grids, so it is continuous across cell edges (ray curvature depends on it); over a planar
bottom both are exact. Points off the grid take the value at the nearest edge point.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.ndimage import gaussian_filter

from models.errors import InvalidInput

__all__ = ["ContourGeometry", "DepthGrid", "EdgeMasks"]

_CACHED = ("filled", "_fields")


class EdgeMasks(NamedTuple):
    """Per-edge boolean masks of open-ocean cells (depth >= the asked minimum).

    south/north have nx entries (west to east); west/east have ny entries (south to north).
    """

    south: NDArray[np.bool_]
    north: NDArray[np.bool_]
    west: NDArray[np.bool_]
    east: NDArray[np.bool_]

    def open_edges(self, *, min_fraction: float = 0.5) -> list[str]:
        """Names of the edges with at least `min_fraction` of their cells open."""
        return [name for name, m in self._asdict().items() if m.size and m.mean() >= min_fraction]


class ContourGeometry(NamedTuple):
    """Local bottom geometry at points: depth [m], slope |∇h| [-], seaward normal (nautical bearing
    of ∇h, degrees clockwise from north; NaN where the bottom is flat)."""

    depth: NDArray[np.float64]
    slope: NDArray[np.float64]
    normal_deg: NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class DepthGrid:
    """Regular depth grid in local metres (see module docstring for the layout)."""

    depth: NDArray[np.float64]
    x0: float
    y0: float
    dx: float
    dy: float
    meta: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        d = np.array(self.depth, dtype=float)  # own copy, then frozen
        if d.ndim != 2 or d.shape[0] < 2 or d.shape[1] < 2:
            raise InvalidInput(f"`depth` must be a 2-D array of at least 2x2, got shape {d.shape}")
        if np.any(np.isinf(d)):
            j, i = np.argwhere(np.isinf(d))[0]
            raise InvalidInput(f"`depth` must be finite or NaN (no data), got inf at row {j}, column {i}")
        for name in ("x0", "y0", "dx", "dy"):
            v = getattr(self, name)
            if not isinstance(v, int | float | np.floating | np.integer) or not math.isfinite(v):
                raise InvalidInput(f"`{name}` must be a finite number [m], got {v!r}")
            object.__setattr__(self, name, float(v))
        if self.dx <= 0 or self.dy <= 0:
            raise InvalidInput(f"`dx`, `dy` must be positive [m], got dx={self.dx!r}, dy={self.dy!r}")
        if not np.any(d > 0):
            raise InvalidInput("`depth` has no water (no cell with depth > 0)")
        d.flags.writeable = False
        object.__setattr__(self, "depth", d)
        object.__setattr__(self, "meta", dict(self.meta))

    # -- pickling: drop the derived caches (rebuilt on demand) so process pools ship less
    def __getstate__(self) -> dict[str, Any]:
        return {k: v for k, v in self.__dict__.items() if k not in _CACHED}

    def __setstate__(self, state: dict[str, Any]) -> None:
        self.__dict__.update(state)

    # -- shape and coordinates
    @property
    def shape(self) -> tuple[int, int]:
        return self.depth.shape  # type: ignore[return-value]

    @property
    def x(self) -> NDArray[np.float64]:
        return self.x0 + self.dx * np.arange(self.shape[1])

    @property
    def y(self) -> NDArray[np.float64]:
        return self.y0 + self.dy * np.arange(self.shape[0])

    @property
    def extent(self) -> tuple[float, float, float, float]:
        """(xmin, xmax, ymin, ymax) of the cell centres [m]."""
        ny, nx = self.shape
        return (self.x0, self.x0 + (nx - 1) * self.dx, self.y0, self.y0 + (ny - 1) * self.dy)

    @property
    def land_mask(self) -> NDArray[np.bool_]:
        """True where the cell is land or has no data (depth <= 0 or NaN)."""
        return ~(self.depth > 0)

    @cached_property
    def filled(self) -> NDArray[np.float64]:
        """Depth with land and no-data set to 0 (the field that is interpolated)."""
        f = np.where(self.depth > 0, self.depth, 0.0)
        f.flags.writeable = False
        return f

    @cached_property
    def _fields(self) -> NDArray[np.float64]:
        """(ny*nx, 3) table of [h, ∂h/∂x, ∂h/∂y] for one-gather bilinear interpolation."""
        h = self.filled
        hy, hx = np.gradient(h, self.dy, self.dx)
        return np.ascontiguousarray(np.stack([h, hx, hy], axis=-1).reshape(-1, 3))

    def contains(self, x: ArrayLike, y: ArrayLike) -> NDArray[np.bool_]:
        """True where (x, y) lies inside the grid's cell-centre rectangle."""
        xmin, xmax, ymin, ymax = self.extent
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        return (x >= xmin) & (x <= xmax) & (y >= ymin) & (y <= ymax)

    # -- interpolation
    def _corners(self, x: NDArray[np.float64], y: NDArray[np.float64]):
        ny, nx = self.shape
        fx = np.clip((x - self.x0) / self.dx, 0.0, nx - 1.0)
        fy = np.clip((y - self.y0) / self.dy, 0.0, ny - 1.0)
        i = np.minimum(fx.astype(np.intp), nx - 2)
        j = np.minimum(fy.astype(np.intp), ny - 2)
        tx = fx - i
        ty = fy - j
        k = j * nx + i
        return k, tx, ty, nx

    def sample(self, x: ArrayLike, y: ArrayLike) -> NDArray[np.float64]:
        """Bilinear [h, ∂h/∂x, ∂h/∂y] at points; shape (..., 3). Kernel used by the ray tracer."""
        xa = np.asarray(x, dtype=float)
        ya = np.asarray(y, dtype=float)
        xb, yb = np.broadcast_arrays(xa, ya)
        shape = xb.shape
        k, tx, ty, nx = self._corners(xb.ravel(), yb.ravel())
        f = self._fields
        tx = tx[:, None]
        ty = ty[:, None]
        lo = f[k] * (1.0 - tx) + f[k + 1] * tx
        hi = f[k + nx] * (1.0 - tx) + f[k + nx + 1] * tx
        return (lo * (1.0 - ty) + hi * ty).reshape(*shape, 3)

    def depth_at(self, x: ArrayLike, y: ArrayLike) -> NDArray[np.float64]:
        """Bilinear depth [m] at points (land counts as 0; off-grid points take the edge value)."""
        return self.sample(x, y)[..., 0]

    def gradient_at(self, x: ArrayLike, y: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """(∂h/∂x, ∂h/∂y) at points: bilinear interpolation of centred-difference gradient grids."""
        s = self.sample(x, y)
        return s[..., 1], s[..., 2]

    def contour_geometry(self, x: ArrayLike, y: ArrayLike) -> ContourGeometry:
        """Depth, bottom slope and seaward contour normal (bearing of ∇h) at points, for breaking."""
        s = self.sample(x, y)
        hx, hy = s[..., 1], s[..., 2]
        slope = np.hypot(hx, hy)
        with np.errstate(invalid="ignore"):
            normal = np.where(slope > 0, np.degrees(np.arctan2(hx, hy)) % 360.0, np.nan)
        return ContourGeometry(depth=s[..., 0], slope=slope, normal_deg=normal)

    # -- derived grids
    def smoothed(self, length_m: float) -> DepthGrid:
        """Gaussian-smoothed copy; `length_m` is the Gaussian standard deviation [m].

        Land and no-data enter the filter as depth 0 and are restored afterwards, so land stays
        land and water stays water (a water cell keeps positive weight on itself). The length is
        recorded in `meta["smoothing_m"]`.
        """
        if not isinstance(length_m, int | float | np.floating | np.integer) or not (
            math.isfinite(length_m) and length_m >= 0
        ):
            raise InvalidInput(f"`length_m` must be a finite length >= 0 [m], got {length_m!r}")
        meta = dict(self.meta, smoothing_m=float(length_m))
        if length_m == 0:
            return DepthGrid(self.depth, self.x0, self.y0, self.dx, self.dy, meta)
        sm = gaussian_filter(self.filled, sigma=(length_m / self.dy, length_m / self.dx), mode="nearest")
        water = self.depth > 0
        out = np.where(water, np.maximum(sm, 1e-3), self.depth)
        return DepthGrid(out, self.x0, self.y0, self.dx, self.dy, meta)

    def deep_edges(self, min_depth: float) -> EdgeMasks:
        """Which cells along each grid edge are open ocean (depth >= `min_depth`)."""
        if not (isinstance(min_depth, int | float | np.floating | np.integer) and math.isfinite(min_depth)):
            raise InvalidInput(f"`min_depth` must be a finite depth [m], got {min_depth!r}")
        d = np.nan_to_num(self.depth, nan=-np.inf)
        return EdgeMasks(
            south=d[0, :] >= min_depth,
            north=d[-1, :] >= min_depth,
            west=d[:, 0] >= min_depth,
            east=d[:, -1] >= min_depth,
        )

    def to_bytes(self) -> bytes:
        """Canonical bytes of the grid (layout + depth values) for input hashing."""
        head = np.array([*self.shape, self.x0, self.y0, self.dx, self.dy], dtype="<f8").tobytes()
        return head + np.ascontiguousarray(self.depth, dtype="<f8").tobytes()
