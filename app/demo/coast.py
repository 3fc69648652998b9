"""The fictional demo coast: four invented spots, their bathymetry files and their profiles.

Everything here is invented. The "Skellmarrow coast" and its place names do not exist; the
position is nominal, in the open South Pacific far from any land (about 41.7° S, 127.3° W, where
the real ocean is some 4 km deep), chosen only so that latitude/longitude conversions have
something to work on.

Each spot has its own grid in local metres (x east, y north) about the spot's nominal position,
depth positive down and land <= 0, built from analytic shapes:

* a **shelf** (a plain 1:55 slope for the beach) whose depth is a function of the distance to the shoreline (slope ``1:45`` at the
  shore (``1:100`` round the point), levelling off toward ``110 m``), so contours follow the coast round
  headlands and islands;
* the spot's **feature** (headland, a finite offshore ridge with a salient behind it, island, plain beach);
* gentle **smooth noise** (a sum of long plane waves with phases from a fixed seed, about 1 %
  of the depth, none in the surf zone), so the grids look like survey data but stay deterministic.

The coast faces west (seaward normal 270°); the deep (~80-100 m) open-ocean edges are west, north
and south. The bay is different: its beach faces north-north-west behind Tavish Isle (a long rocky
island with a hook at its north end) and a headland that hides the sound between them, all on a
flat 24 m floor, so swell crosses the bay in straight lines and only the land decides what gets in:
west and south-west swell is shut out, north-west swell comes straight in. Files are written the way a user would have them: ESRI ASCII depth grids in local metres
for three spots and a GEBCO-style NetCDF (``elevation``, negative below sea level, on a regular
lat/lon grid) for the ridge.

The open coast also has a **regional grid** (``skellmarrow-shelf.nc``, GEBCO-style, about 300 m
cells): the outer shelf and the continental slope west of the ridge and the beach, down to some
700 m, so long-period rays leaving their local grids (which end at 45-95 m) reach the wave base on
data instead of assumed straight contours. Inside each of those local grids it holds the local
seabed (coarsened), blended over the 600 m around it into the shelf, so both grids agree where
they overlap. The point and the bay keep their local grids alone.
"""

from __future__ import annotations

import functools
import math
import os
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import ndimage
from scipy.interpolate import RegularGridInterpolator

from models.geodesy import to_local, to_lonlat

__all__ = [
    "COAST_NAME",
    "DEMO_SOURCE_IDS",
    "DEMO_TIDE",
    "SPOTS",
    "DemoSpot",
    "LocalGrid",
    "spot_depth_function",
    "spot_grid",
    "region_depth",
    "write_coast",
]

COAST_NAME = "Skellmarrow coast (fictional)"
DEMO_SOURCE_IDS = ("demo-offshore-1", "demo-model-1", "demo-shore-1", "demo-wind-1")
# The coast's invented tide table (mixed, mainly semi-diurnal; amplitudes [m], Greenwich phase lags
# [deg], UTC) about mean sea level, the demo grids' datum (docs/tide-wind.md §1).
DEMO_TIDE = (("M2", 0.92, 214.0), ("S2", 0.31, 247.0), ("N2", 0.19, 196.0), ("K1", 0.24, 112.0), ("O1", 0.16, 97.0))

SEED = 20261201  # fixed: the demo coast is the same on every machine
FINE_M = 10.0  # resolution of the signed-distance field behind every shape [m]
SHORE_SLOPE = 1.0 / 45.0  # seabed slope at the waterline (common practice for a sandy shelf: 1:30-1:60)
SHELF_DEPTH_M = 110.0  # depth the shelf levels off toward
LAND_SLOPE = 1.0 / 20.0
LAND_MIN_M = -25.0  # highest land [m above datum], clipped so grids stay small numbers
POINT_SHORE_SLOPE = 1.0 / 100.0  # a long, gently shoaling point: the crest wraps along its curved contours
BEACH_SLOPE = 1.0 / 55.0  # the exposed beach: one plain slope out to ~95 m at the grid's west edge
BREAK_DEPTH_M = 2.5  # break points sit on this contour
BAR_DEPTH_M = 0.55  # ... but the ridge's bar section sits this shallow
PERIOD_MIN_S, PERIOD_MAX_S, PERIOD_COUNT = 5.0, 20.0, 12  # table periods of the demo profiles
LAUNCH_SPACING_DEG = 0.25

# The regional grid of the open coast (ridge and beach): x, y relative to the beach's position [m]
REGION_FILE = "skellmarrow-shelf.nc"
REGION_SPOTS = ("quenning-ridge", "ostravel-strand")
REGION_X_M, REGION_Y_M = (-30000.0, 3000.0), (-10000.0, 28000.0)
REGION_SPACING_M = 300.0
REGION_SHORE_X_M = 850.0  # the open coast's shoreline (both spots' mainland begins near here)
REGION_BLEND_M = 600.0  # local seabed blended into the shelf over this margin round each local grid
REGION_SLOPE_BREAK_X_M = -5000.0  # the shelf (1:55 from the shore) gives way to a 1:40 slope here
REGION_MAX_DEPTH_M = 1200.0


@dataclass(frozen=True)
class LocalGrid:
    """Cell-centred grid in local metres: depth[j, i] at x[i], y[j], row 0 = south."""

    x: np.ndarray
    y: np.ndarray
    depth: np.ndarray

    @property
    def spacing(self) -> float:
        return float(self.x[1] - self.x[0])


@dataclass(frozen=True)
class DemoSpot:
    """One invented spot: what kind it is, where, its grid and how its file is written."""

    id: str
    name: str
    kind: str  # point | ridge | bay | beach
    latitude: float
    longitude: float
    faces_deg: float
    description: str
    file_format: str  # esri-ascii | netcdf
    x_range: tuple[float, float]  # grid extent (cell centres) [m]
    y_range: tuple[float, float]
    spacing_m: float
    # break points: (name, seaward start (x, y), landward end (x, y)[, depth]); each point is placed
    # where the line from start to end first reaches BREAK_DEPTH_M (or the line's own depth)
    break_lines: tuple[tuple, ...]
    reference_depth_m: float = 10.0
    noise_seed: int = 0  # offset of this spot's smooth noise from SEED (fixed, so renames keep the seabed)
    method: str = "rays"  # how its tables are computed ([model] method; docs/refraction-diffraction.md)

    @property
    def file_name(self) -> str:
        return f"{self.id}.asc" if self.file_format == "esri-ascii" else f"{self.id}.nc"


_LON = -127.30
SPOTS: tuple[DemoSpot, ...] = (
    DemoSpot(
        id="vorrel-point",
        name="Vorrel Point",
        kind="point",
        latitude=-41.620,
        longitude=_LON,
        faces_deg=330.0,
        description="Headland point: west swell wraps round the tip and peels east along its north flank.",
        file_format="esri-ascii",
        x_range=(-5000.0, 2000.0),
        y_range=(-3000.0, 2400.0),
        spacing_m=40.0,
        break_lines=(
            ("tip", (-2700.0, -950.0), (-1000.0, -950.0)),
            ("outside", (-2400.0, 100.0), (-1300.0, -1000.0)),
            ("middle", (-1400.0, 600.0), (-1400.0, -1500.0)),
            ("inside", (-1100.0, 600.0), (-1100.0, -1500.0)),
            ("deep inside", (-800.0, 800.0), (-800.0, -1500.0)),
        ),
        noise_seed=1265,
    ),
    DemoSpot(
        id="quenning-ridge",
        name="Quenning Ridge",
        kind="ridge",
        latitude=-41.700,
        longitude=_LON,
        faces_deg=270.0,
        description="A submarine ridge offshore focuses long-period swell into a peak that peels both ways.",
        file_format="netcdf",
        x_range=(-4500.0, 1500.0),
        y_range=(-3000.0, 3000.0),
        spacing_m=40.0,
        break_lines=(
            # a shallow bar section south of the peak: 0.55 m below mean sea level, so it has enough
            # water to ride only above about mid tide (docs/tide-wind.md §2)
            ("south bar", (-1000.0, -800.0), (1500.0, -800.0), BAR_DEPTH_M),
            ("south shoulder", (-1000.0, -400.0), (1500.0, -400.0)),
            ("peak", (-1000.0, 0.0), (1500.0, 0.0)),
            ("north shoulder", (-1000.0, 400.0), (1500.0, 400.0)),
        ),
        noise_seed=1437,
    ),
    DemoSpot(
        id="quillance-bay",
        name="Quillance Bay",
        kind="bay",
        latitude=-41.780,
        longitude=_LON,
        faces_deg=330.0,
        description=("A bay behind Tavish Isle, opening north-north-west: sheltered from west and south-west "
                     "swell, open to the north-west."),
        file_format="esri-ascii",
        x_range=(-3700.0, 2300.0),
        y_range=(-3300.0, 3900.0),
        spacing_m=40.0,
        # break lines run toward 150° (square to the beach)
        break_lines=(
            ("bay centre", (500.0, 716.0), (1250.0, -583.0)),
            ("east end", (1200.0, 1120.0), (1950.0, -179.0)),
        ),
        noise_seed=1126,
        # the island's shadow is what rays cannot do: diffraction fills it (README, "the demo")
        method="refraction-diffraction",
    ),
    DemoSpot(
        id="ostravel-strand",
        name="Ostravel Strand",
        kind="beach",
        latitude=-41.860,
        longitude=_LON,
        faces_deg=270.0,
        description="A long straight beach on a plain slope: swell square to the beach closes out.",
        file_format="esri-ascii",
        x_range=(-4500.0, 1500.0),
        y_range=(-3000.0, 3000.0),
        spacing_m=40.0,
        break_lines=(
            ("south", (-1000.0, -400.0), (1500.0, -400.0)),
            ("centre", (-1000.0, 0.0), (1500.0, 0.0)),
            ("north", (-1000.0, 400.0), (1500.0, 400.0)),
        ),
        noise_seed=1449,
    ),
)


# ---------------------------------------------------------------- shapes (land masks in local metres)

def _gauss(u):
    return np.exp(-(u**2))


def _land_point(x, y):
    """Mainland east of x = 1400 m, with a headland reaching west to x ~ -1700 m around y = -1000 m."""
    shore = 1400.0 - 3100.0 * _gauss((y + 1000.0) / 750.0)
    return x >= shore


# The ridge: a finite submarine ridge (an elongated shoal) on the shelf west of a straight beach,
# aligned with the west swell, that tapers out well before the 10 m contour. Swell slows over it
# and its crest bends round it like light through a lens, converging behind it toward the beach:
# long periods feel the shoal more (they are "shallower" waves in 30-60 m), so the focusing grows
# with period. The shoreline bulges seaward in its lee (a salient, as behind real offshore
# shoals) on a gentle inshore slope, so the focused peak breaks first, well seaward of its
# shoulders, and peels both ways.
RIDGE_CENTRE_X_M = -2000.0  # the shoal's centre on y = 0, in about 30 m of shelf [m]
RIDGE_HALF_LENGTH_M = 900.0  # e-folding half-length along the axis (east-west) [m]
RIDGE_HALF_WIDTH_M = 250.0  # e-folding half-width across it [m]
RIDGE_RELIEF = 0.2  # the crest rises to 80 % of the surrounding depth (a low shoal: a stronger one focuses
# the long periods inshore of the break, and the crest then arrives nearly flat along it)
RIDGE_SALIENT_M, RIDGE_SALIENT_HALF_WIDTH_M = 500.0, 200.0  # the shoreline's seaward bulge behind it [m]
# gentle inshore, so a larger (focused) breaker breaks well seaward of a smaller one and the peak
# breaks first; deepening by RIDGE_OUTER_DROP_M across RIDGE_OUTER_DROP_RANGE_M (distance from the
# shore) to about 30 m where the ridge sits
RIDGE_SHORE_SLOPE = 1.0 / 150.0
RIDGE_OUTER_DROP_M, RIDGE_OUTER_DROP_RANGE_M = 12.0, (1000.0, 2500.0)


def _land_ridge(x, y):
    return x >= 900.0 - RIDGE_SALIENT_M * _gauss(y / RIDGE_SALIENT_HALF_WIDTH_M)


# The bay: a beach facing north-north-west behind an island, on a flat floor. Flat, so swell
# crosses the bay in straight lines and only the island and the headland decide what gets in
# (a shelf deepening seaward would bend long-period swell round the island's tips).
BAY_FLOOR_M = 24.0
BAY_SHORE_SLOPE = 1.0 / 15.0
BAY_ISLAND_SLOPE = 1.0 / 4.0
BAY_ISLAND = ((-1700.0, -850.0), (-1300.0, 1350.0))  # Tavish Isle's south and north tips [m]
BAY_ISLAND_HALF_WIDTH_M = 380.0
BAY_STACK = (-2650.0, 1600.0, 450.0)  # a rock stack west of the island's north tip: x, y, radius [m]


def _bay_coast_y(x):
    """The mainland's shoreline y(x): a straight coast running 60°/240° through (1000, -150)
    with a headland west of the bay (around x = -500 m)."""
    return -150.0 + math.tan(math.radians(30.0)) * (x - 1000.0) + 1000.0 * _gauss((x + 500.0) / 500.0)


def _bay_island(x, y):
    (x0, y0), (x1, y1) = BAY_ISLAND
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    half = math.hypot(x1 - x0, y1 - y0) / 2
    ux, uy = (x1 - x0) / (2 * half), (y1 - y0) / (2 * half)
    along = (x - cx) * ux + (y - cy) * uy
    across = -(x - cx) * uy + (y - cy) * ux
    body = (along / half) ** 2 + (across / BAY_ISLAND_HALF_WIDTH_M) ** 2 <= 1.0
    # a hook at the north end, from the tip west to a rounded knoll: it catches west swell
    # bent round the tip
    sx, sy, sr = BAY_STACK
    knoll = (x - sx) ** 2 + (y - sy) ** 2 <= sr**2
    vx, vy = sx - x1, sy - y1
    t = np.clip(((x - x1) * vx + (y - y1) * vy) / (vx * vx + vy * vy), 0.0, 1.0)
    neck = (x - x1 - t * vx) ** 2 + (y - y1 - t * vy) ** 2 <= 160.0**2
    return body | knoll | neck


def _land_bay(x, y):
    """Mainland south-east of the coast line (with its headland) and Tavish Isle off the headland.

    Seen from the bay beach the headland hides the sound between it and the island, and the
    island covers the bearings from the headland up to about 290-300°: west and south-west swell
    has no straight way in, north-west swell has."""
    return (y <= _bay_coast_y(x)) | _bay_island(x, y)


def _land_beach(x, y):
    return x >= 800.0


_LAND: dict[str, Callable] = {"point": _land_point, "ridge": _land_ridge, "bay": _land_bay, "beach": _land_beach}


def _shelf(signed_distance, slope=SHORE_SLOPE, depth=SHELF_DEPTH_M):
    """Depth [m] from signed distance to the shore [m] (positive at sea): `slope` at the
    waterline, levelling off toward `depth`; land rises at LAND_SLOPE up to -LAND_MIN_M."""
    d = np.asarray(signed_distance, dtype=float)
    sea = depth * np.tanh(slope * np.maximum(d, 0.0) / depth)
    land = np.maximum(LAND_SLOPE * np.minimum(d, 0.0), LAND_MIN_M)
    return np.where(d >= 0.0, sea, land)


def _noise_field(seed: int, n_waves: int = 14):
    """Smooth noise: a sum of plane waves (wavelengths 1-3 km), unit rms, as a function of (x, y)."""
    rng = np.random.default_rng(seed)
    k = 2.0 * np.pi / rng.uniform(1000.0, 3000.0, n_waves)
    ang = rng.uniform(0.0, 2.0 * np.pi, n_waves)
    phase = rng.uniform(0.0, 2.0 * np.pi, n_waves)
    kx, ky = k * np.cos(ang), k * np.sin(ang)
    scale = math.sqrt(2.0 / n_waves)

    def noise(x, y):
        x = np.asarray(x, dtype=float)[..., None]
        y = np.asarray(y, dtype=float)[..., None]
        return scale * np.sin(kx * x + ky * y + phase).sum(axis=-1)

    return noise


def _smoothstep(v, lo, hi):
    t = np.clip((np.asarray(v, dtype=float) - lo) / (hi - lo), 0.0, 1.0)
    return t * t * (3.0 - 2.0 * t)


@functools.lru_cache(maxsize=8)  # pure in `spot`; the signed-distance field is the costly part
def spot_depth_function(spot: DemoSpot) -> Callable[[np.ndarray, np.ndarray], np.ndarray]:
    """Depth [m, positive down] of `spot` as a function of local (x, y) [m], vectorised.

    The shoreline comes from a signed-distance field on a FINE_M grid (slightly smoothed, so
    contours are rounded rather than jagged); feature and noise terms are analytic.
    """
    pad = 600.0
    fx = np.arange(spot.x_range[0] - pad, spot.x_range[1] + pad + FINE_M / 2, FINE_M)
    fy = np.arange(spot.y_range[0] - pad, spot.y_range[1] + pad + FINE_M / 2, FINE_M)
    gx, gy = np.meshgrid(fx, fy)
    land = _LAND[spot.kind](gx, gy)
    sd = FINE_M * (ndimage.distance_transform_edt(~land) - ndimage.distance_transform_edt(land))
    sd = ndimage.gaussian_filter(sd, sigma=60.0 / FINE_M, mode="nearest")
    sd_at = RegularGridInterpolator((fy, fx), sd, bounds_error=False, fill_value=None)
    island_at = None
    if spot.kind == "bay":
        # the island's own distance field: its sides are steep (a rocky island), so little swell
        # is bent round its tips
        def field(mask):
            d = FINE_M * (ndimage.distance_transform_edt(~mask) - ndimage.distance_transform_edt(mask))
            d = ndimage.gaussian_filter(d, sigma=60.0 / FINE_M, mode="nearest")
            return RegularGridInterpolator((fy, fx), d, bounds_error=False, fill_value=None)

        island_at = field(_bay_island(gx, gy))
        sd_at = field(gy <= _bay_coast_y(gx))  # the mainland alone
    noise = _noise_field(SEED + spot.noise_seed)

    def depth(x, y):
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
        sd_xy = sd_at(np.stack([y.ravel(), x.ravel()], axis=-1)).reshape(x.shape)
        if spot.kind == "beach":
            # a plain planar slope with gentle cross-shore bumps only: contours stay straight and
            # parallel, and depth rises monotonically offshore everywhere
            bumps = 0.2 * noise(x, np.zeros_like(x)) * _smoothstep(BEACH_SLOPE * sd_xy, 6.0, 15.0)
            return np.where(sd_xy >= 0.0, BEACH_SLOPE * sd_xy + bumps, _shelf(sd_xy))
        if spot.kind == "bay":
            sdi = island_at(np.stack([y.ravel(), x.ravel()], axis=-1)).reshape(x.shape)
            h = np.minimum(_shelf(sd_xy, BAY_SHORE_SLOPE, BAY_FLOOR_M), _shelf(sdi, BAY_ISLAND_SLOPE, BAY_FLOOR_M))
        elif spot.kind == "point":
            h = _shelf(sd_xy, POINT_SHORE_SLOPE)
        elif spot.kind == "ridge":
            h = _shelf(sd_xy, RIDGE_SHORE_SLOPE) + RIDGE_OUTER_DROP_M * _smoothstep(sd_xy, *RIDGE_OUTER_DROP_RANGE_M)
        else:
            h = _shelf(sd_xy)
        if spot.kind == "ridge":
            # the finite ridge offshore (a lens); nearshore contours stay those of the beach and
            # its salient, so the break's reference points lie on the straight walk seaward
            h = h * (1.0 - RIDGE_RELIEF * _gauss((x - RIDGE_CENTRE_X_M) / RIDGE_HALF_LENGTH_M) * _gauss(y / RIDGE_HALF_WIDTH_M))
        elif spot.kind == "point":
            # a submerged spur continuing the headland out to sea (points usually have one)
            spur = _smoothstep(-x, 1500.0, 2200.0) * (1.0 - _smoothstep(-x, 3200.0, 4600.0))
            h = h * (1.0 - 0.25 * _gauss((y + 1000.0) / 500.0) * spur)
        # noise: 1 % of the depth (more would refract long swell into noisy caustics), none in the
        # surf zone (< 6 m) so break points stay where placed
        amp = 0.01 * h * _smoothstep(h, 6.0, 15.0)
        return np.where(h > 0.0, h + amp * noise(x, y), h)

    return depth


def spot_grid(spot: DemoSpot, *, spacing_m: float | None = None) -> LocalGrid:
    """The spot's depth on its local cell-centred grid."""
    step = spot.spacing_m if spacing_m is None else spacing_m
    x = np.arange(spot.x_range[0], spot.x_range[1] + step / 2, step)
    y = np.arange(spot.y_range[0], spot.y_range[1] + step / 2, step)
    gx, gy = np.meshgrid(x, y)
    return LocalGrid(x=x, y=y, depth=spot_depth_function(spot)(gx, gy))


def break_points(spot: DemoSpot, depth_fn=None) -> list[tuple[str, float, float]]:
    """(name, x, y) of each break point: where its line first reaches BREAK_DEPTH_M (or the line's
    own depth), rounded to 1 m."""
    depth_fn = depth_fn or spot_depth_function(spot)
    out = []
    for name, (xs, ys), (xe, ye), *own in spot.break_lines:
        target = float(own[0]) if own else BREAK_DEPTH_M
        t = np.linspace(0.0, 1.0, 4001)
        px, py = xs + t * (xe - xs), ys + t * (ye - ys)
        h = depth_fn(px, py)
        if h[0] <= target:
            raise RuntimeError(f"demo spot {spot.id}: break line {name!r} starts too shallow ({h[0]:.1f} m)")
        idx = np.flatnonzero(h <= target)
        if idx.size == 0:
            raise RuntimeError(f"demo spot {spot.id}: break line {name!r} never reaches {target} m")
        i = idx[0]
        # linear interpolation between the last sample deeper and the first shallower
        w = (h[i - 1] - target) / (h[i - 1] - h[i])
        out.append((name, round(float(px[i - 1] + w * (px[i] - px[i - 1]))), round(float(py[i - 1] + w * (py[i] - py[i - 1])))))
    return out


# ---------------------------------------------------------------- writers

def _esri_ascii(grid: LocalGrid) -> str:
    """ESRI ASCII raster (first data row = north), corner-registered header, depth in metres."""
    ny, nx = grid.depth.shape
    cs = grid.spacing
    lines = [
        f"ncols {nx}",
        f"nrows {ny}",
        f"xllcorner {grid.x[0] - cs / 2:.1f}",
        f"yllcorner {grid.y[0] - cs / 2:.1f}",
        f"cellsize {cs:.1f}",
        "nodata_value -9999",
    ]
    for row in grid.depth[::-1]:
        lines.append(" ".join(f"{v:.2f}" for v in row))
    return "\n".join(lines) + "\n"


def _lonlat_axes(spot: DemoSpot):
    """Regular 1-D lat/lon cell centres covering the spot's local extent at about its spacing."""
    (x0, x1), (y0, y1) = spot.x_range, spot.y_range
    lon_c, lat_c = to_lonlat(np.array([x0, x1, 0.0, 0.0]), np.array([0.0, 0.0, y0, y1]), spot.latitude, spot.longitude)
    dlat = spot.spacing_m / 111_000.0
    dlon = dlat / math.cos(math.radians(spot.latitude))
    # round the steps so the file has tidy values a survey export would have
    dlat, dlon = round(dlat, 6), round(dlon, 6)
    nlat = int(math.floor((lat_c[3] - lat_c[2]) / dlat)) + 1
    nlon = int(math.floor((lon_c[1] - lon_c[0]) / dlon)) + 1
    lat = round(float(lat_c[2]), 6) + dlat * np.arange(nlat)
    lon = round(float(lon_c[0]), 6) + dlon * np.arange(nlon)
    return lat, lon


def _write_gebco_style(path: Path, spot: DemoSpot) -> None:
    """GEBCO-style NetCDF4 of the spot's own grid (see `_write_netcdf`)."""
    lat, lon = _lonlat_axes(spot)
    glon, glat = np.meshgrid(lon, lat)
    x, y = to_local(glat, glon, spot.latitude, spot.longitude)
    _write_netcdf(path, lat, lon, -spot_depth_function(spot)(x, y), f"{spot.name} demo bathymetry (fictional, synthetic)")


def _region_shelf(x):
    """Depth [m] of the open coast away from the spots: a 1:55 shelf from the shore, then a 1:40
    continental slope; land rises at LAND_SLOPE east of the shore."""
    x = np.asarray(x, dtype=float)
    shelf = BEACH_SLOPE * (REGION_SHORE_X_M - x)
    slope = BEACH_SLOPE * (REGION_SHORE_X_M - REGION_SLOPE_BREAK_X_M) + (REGION_SLOPE_BREAK_X_M - x) / 40.0
    sea = np.minimum(np.where(x >= REGION_SLOPE_BREAK_X_M, shelf, slope), REGION_MAX_DEPTH_M)
    land = np.maximum(LAND_SLOPE * (REGION_SHORE_X_M - x), LAND_MIN_M)
    return np.where(x <= REGION_SHORE_X_M, sea, land)


def _inside_weight(u, lo, hi):
    """1 inside [lo, hi], falling smoothly to 0 at REGION_BLEND_M outside."""
    out = np.maximum(lo - u, 0.0) + np.maximum(u - hi, 0.0)
    return 1.0 - _smoothstep(out, 0.0, REGION_BLEND_M)


def region_depth(lat, lon):
    """Depth [m] of the regional grid at (lat, lon): each open-coast spot's own seabed inside its
    local grid, blended into the regional shelf around it (see the module docstring)."""
    lat, lon = np.broadcast_arrays(np.asarray(lat, dtype=float), np.asarray(lon, dtype=float))
    spots = [s for s in SPOTS if s.id in REGION_SPOTS]
    ref = spots[-1]  # the beach: the frame of REGION_X_M / REGION_Y_M and of the shelf
    x, _ = to_local(lat, lon, ref.latitude, ref.longitude)
    total_w = np.zeros(lat.shape)
    acc = np.zeros(lat.shape)
    for spot in spots:
        xs, ys = to_local(lat, lon, spot.latitude, spot.longitude)
        w = _inside_weight(xs, *spot.x_range) * _inside_weight(ys, *spot.y_range)
        near = w > 0
        if near.any():
            acc[near] += w[near] * spot_depth_function(spot)(xs[near], ys[near])
        total_w += w
    return acc + (1.0 - np.minimum(total_w, 1.0)) * _region_shelf(x)


def _region_axes():
    ref = [s for s in SPOTS if s.id in REGION_SPOTS][-1]
    (x0, x1), (y0, y1) = REGION_X_M, REGION_Y_M
    lon_c, lat_c = to_lonlat(np.array([x0, x1, 0.0, 0.0]), np.array([0.0, 0.0, y0, y1]), ref.latitude, ref.longitude)
    dlat = round(REGION_SPACING_M / 111_000.0, 6)
    dlon = round(dlat / math.cos(math.radians(ref.latitude)), 6)
    lat = round(float(lat_c[2]), 5) + dlat * np.arange(int(math.floor((lat_c[3] - lat_c[2]) / dlat)) + 1)
    lon = round(float(lon_c[0]), 5) + dlon * np.arange(int(math.floor((lon_c[1] - lon_c[0]) / dlon)) + 1)
    return lat, lon


def _write_netcdf(path: Path, lat, lon, elevation, title: str) -> None:
    """GEBCO-style NetCDF4: elevation(lat, lon) [m], negative below sea level, 1-D lat/lon centres."""
    import h5netcdf

    with h5netcdf.File(path, "w", track_order=True) as f:
        f.dimensions = {"lat": lat.size, "lon": lon.size}
        v = f.create_variable("lat", ("lat",), "f8")
        v[:] = lat
        v.attrs.update({"standard_name": "latitude", "units": "degrees_north", "long_name": "latitude"})
        v = f.create_variable("lon", ("lon",), "f8")
        v[:] = lon
        v.attrs.update({"standard_name": "longitude", "units": "degrees_east", "long_name": "longitude"})
        v = f.create_variable("elevation", ("lat", "lon"), "f4")
        v[:] = elevation.astype(np.float32)
        v.attrs.update({
            "standard_name": "height_above_mean_sea_level",
            "long_name": "Elevation relative to sea level",
            "units": "m",
            "positive": "up",
        })
        f.attrs.update({
            "Conventions": "CF-1.11",
            "title": title,
            "source": "shoalcast app.demo.coast: analytic shapes + smooth noise; not a real place",
        })


def _write_region(path: Path) -> None:
    lat, lon = _region_axes()
    glon, glat = np.meshgrid(lon, lat)
    _write_netcdf(path, lat, lon, -region_depth(glat, glon), f"{COAST_NAME} regional bathymetry (fictional, synthetic)")


def _write_netcdf_atomic(out_dir: Path, name: str, write: Callable[[Path], None]) -> Path:
    target = out_dir / name
    with tempfile.TemporaryDirectory(dir=out_dir) as tmp:
        tmp_path = Path(tmp) / name
        write(tmp_path)
        _replace_if_changed(target, tmp_path.read_bytes())
    return target


def _replace_if_changed(path: Path, data: bytes) -> None:
    """Write atomically and only when the bytes differ, so a second demo run keeps file hashes."""
    if path.exists() and path.read_bytes() == data:
        return
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
    os.chmod(tmp, 0o644)  # mkstemp makes 0600; these are ordinary data files
    os.replace(tmp, path)


def _toml_str(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'


def _profile_toml(spot: DemoSpot, points, sources) -> str:
    lines = [
        f"# {spot.name}: {spot.description}",
        f"# Part of the {COAST_NAME}: invented place, invented seabed, nominal position at sea.",
        f"id = {_toml_str(spot.id)}",
        f"name = {_toml_str(spot.name)}",
        f"latitude = {spot.latitude:.6f}",
        f"longitude = {spot.longitude:.6f}",
        f"faces_deg = {spot.faces_deg:.1f}",
        'timezone = "UTC"',
        "sources = [" + ", ".join(_toml_str(s) for s in sources) + "]",
        "",
        "[bathymetry]",
        f"file = {_toml_str(spot.file_name)}",
    ]
    if spot.file_format == "esri-ascii":
        lines += ['format = "esri-ascii"', 'values = "depth"', 'crs = "local"']
    else:
        lines += ['format = "netcdf"', 'values = "elevation"', 'crs = "lonlat"', 'variable = "elevation"',
                  f"spacing_m = {spot.spacing_m:.1f}"]
    lines += [
        f"origin = {{ latitude = {spot.latitude:.6f}, longitude = {spot.longitude:.6f} }}",
        'datum = "MSL"',
    ]
    if spot.id in REGION_SPOTS:
        lines += ["", "# the outer shelf and slope around this grid, so long-period rays reach the wave base on data",
                  "[[regional_bathymetry]]", f"file = {_toml_str(REGION_FILE)}", 'format = "netcdf"',
                  'values = "elevation"', 'crs = "lonlat"', 'variable = "elevation"',
                  f"spacing_m = {REGION_SPACING_M:.1f}", 'datum = "MSL"']  # fmt: skip
    for name, x, y in points:
        lines += ["", "[[break_points]]", f"name = {_toml_str(name)}", f"x = {x:.1f}", f"y = {y:.1f}"]
    cons = ", ".join(f"{{ name = {_toml_str(n)}, amplitude_m = {a:.2f}, phase_deg = {g:.1f} }}" for n, a, g in DEMO_TIDE)
    lines += ["", "# the coast's invented tide table (Greenwich phase lags, UTC)", "[tide]", "mean_level_m = 0.0",
              f"constituents = [{cons}]"]
    # table options sized for a quick demo build: 12 periods 5-20 s cover the demo's swells and
    # wind sea; 0.25° launch spacing keeps sheltered directions clean
    lines += ["", "[model]"]
    if spot.method != "rays":
        lines += ["# the island's shadow fills by diffraction, which rays cannot do (docs/refraction-diffraction.md)",
                  f"method = {_toml_str(spot.method)}"]
    lines += [f"reference_depth_m = {spot.reference_depth_m:.1f}",
              f"period_min_s = {PERIOD_MIN_S:g}", f"period_max_s = {PERIOD_MAX_S:g}", f"period_count = {PERIOD_COUNT}",
              f"launch_spacing_deg = {LAUNCH_SPACING_DEG:g}", ""]
    if spot.kind in ("point", "ridge"):
        # their swell bends round the point or converges over the salient inside the reference depth,
        # which the 1-D surf-zone profile does not follow (docs/surfzone.md §1): single-wave path
        lines.insert(-1, "surf_zone = false")
    return "\n".join(lines)


def write_coast(directory: str | os.PathLike, *, sources: tuple[str, ...] = DEMO_SOURCE_IDS) -> list[Path]:
    """Write every demo spot's bathymetry file and profile TOML into `directory`.

    Returns the profile paths in SPOTS order. Deterministic: the same bytes on every run (files
    already holding those bytes are left untouched, keeping their modification times).
    """
    out_dir = Path(directory)
    out_dir.mkdir(parents=True, exist_ok=True)
    profiles = []
    for spot in SPOTS:
        depth_fn = spot_depth_function(spot)
        points = break_points(spot, depth_fn)
        grid_path = out_dir / spot.file_name
        if spot.file_format == "esri-ascii":
            _replace_if_changed(grid_path, _esri_ascii(spot_grid(spot)).encode())
        else:
            _write_netcdf_atomic(out_dir, spot.file_name, lambda p, s=spot: _write_gebco_style(p, s))
        profile = out_dir / f"{spot.id}.toml"
        _replace_if_changed(profile, _profile_toml(spot, points, sources).encode())
        profiles.append(profile)
    _write_netcdf_atomic(out_dir, REGION_FILE, _write_region)
    return profiles
