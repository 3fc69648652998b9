"""Bathymetry grid files: ESRI ASCII raster, CF/GEBCO-style NetCDF, XYZ soundings.

Readers return a `GridData` in the file's own coordinates (cell centres, row 0 = south, no-data as
NaN, values with the file's sign). `to_depth_grid` converts one to the model's
`models.bathymetry.DepthGrid`: depth positive down on a regular grid in local metres about the
spot's origin (WGS 84 transverse Mercator from `models.geodesy`; scale error 3e-5 at 50 km).

Formats (see docs/formats.md §5):

* ESRI ASCII: header keys NCOLS, NROWS, XLLCORNER|XLLCENTER, YLLCORNER|YLLCENTER, CELLSIZE (or DX
  and DY), optional NODATA_VALUE, in any case; then NROWS×NCOLS values, first row = north, line
  breaks anywhere. Centre = corner + cellsize/2.
* NetCDF: a 2-D variable (`elevation`, `depth`, `z`, `Band1`, a CF bathymetry standard_name, or the
  one named) on 1-D cell-centre coordinates lat/lon (degrees) or x/y (metres), either order and
  either direction; `_FillValue`/`missing_value`/`valid_*` masked, `scale_factor`/`add_offset`
  applied. NetCDF-4 (HDF5) is read with h5netcdf, classic NetCDF-3 with scipy, chosen by the
  file's magic bytes.
* XYZ: headerless ``x y z`` lines (whitespace or comma separated, ``#`` comments allowed), gridded
  by linear interpolation on the Delaunay triangulation (scipy `griddata`); cells outside the
  points' convex hull are NaN. Bad lines are rejected with their line number and the rest kept;
  more than 5 % bad lines refuse the file.

Every failure raises `GridError` naming the file (and line where there is one) and the reason.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray
from scipy.interpolate import RegularGridInterpolator, griddata
from scipy.spatial import QhullError, cKDTree

from app.formats.records import Reject
from models.bathymetry import DepthGrid
from models.geodesy import to_local, to_lonlat

__all__ = [
    "MAX_BAD_LINE_FRACTION",
    "MAX_CELLS",
    "MAX_NODATA_FRACTION",
    "GridData",
    "GridError",
    "format_esri_ascii",
    "parse_esri_ascii",
    "parse_xyz",
    "read_esri_ascii",
    "read_netcdf_grid",
    "read_xyz",
    "to_depth_grid",
]

MAX_BAD_LINE_FRACTION = 0.05  # XYZ: more bad lines than this and the file is refused
MAX_NODATA_FRACTION = 0.5  # a depth grid with more no-data cells than this is refused
MAX_CELLS = 4_000_000  # 2000 x 2000: far above a spot grid; guards against a mistyped spacing

Crs = Literal["local", "lonlat"]


class GridError(ValueError):
    """A bathymetry file cannot be used; `file`, `line` (1-based or None) and `reason` say why."""

    def __init__(self, file: str, reason: str, *, line: int | None = None) -> None:
        self.file = file
        self.line = line
        self.reason = reason
        where = f"{file}:{line}" if line is not None else file
        super().__init__(f"{where}: {reason}")


@dataclass(frozen=True, eq=False)
class GridData:
    """A grid as read from a file, in the file's coordinates and sign convention.

    values[j, i] is at (x[i], y[j]); x and y are strictly ascending cell centres (row 0 = south).
    crs "local": x east, y north in metres about the spot origin; "lonlat": x = longitude,
    y = latitude in degrees (WGS 84). No-data is NaN. `source` names the file; `variable` the
    NetCDF variable read (None otherwise); `rejects` lists XYZ lines left out.
    """

    values: NDArray[np.float64]
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    crs: Crs
    source: str
    variable: str | None = None
    rejects: tuple[Reject, ...] = ()

    def __post_init__(self) -> None:
        v = np.array(self.values, dtype=float)
        x = np.array(self.x, dtype=float)
        y = np.array(self.y, dtype=float)
        if self.crs not in ("local", "lonlat"):
            raise ValueError(f"`crs` must be 'local' or 'lonlat', got {self.crs!r}")
        if v.ndim != 2 or x.ndim != 1 or y.ndim != 1 or v.shape != (y.size, x.size):
            raise ValueError(
                f"`values` shape {v.shape} does not match (len(y), len(x)) = ({y.size}, {x.size})"
            )
        for name, c in (("x", x), ("y", y)):
            if not np.all(np.isfinite(c)) or np.any(np.diff(c) <= 0):
                raise ValueError(f"`{name}` must be finite and strictly ascending")
        if np.any(np.isinf(v)):
            raise ValueError("`values` must be finite or NaN (no data)")
        for a in (v, x, y):
            a.flags.writeable = False
        object.__setattr__(self, "values", v)
        object.__setattr__(self, "x", x)
        object.__setattr__(self, "y", y)
        object.__setattr__(self, "rejects", tuple(self.rejects))

    @property
    def shape(self) -> tuple[int, int]:
        return self.values.shape  # type: ignore[return-value]

    def spacing(self) -> tuple[float, float] | None:
        """(dx, dy) if both axes are evenly spaced (to 1e-6 of a cell), else None."""
        out = []
        for c in (self.x, self.y):
            if c.size < 2:
                return None
            d = np.diff(c)
            if np.max(np.abs(d - d.mean())) > 1e-6 * d.mean():
                return None
            out.append(float((c[-1] - c[0]) / (c.size - 1)))
        return out[0], out[1]


# ---------------------------------------------------------------------------------------------
# ESRI ASCII raster


_ASC_KEYS = (
    "ncols",
    "nrows",
    "xllcorner",
    "xllcenter",
    "yllcorner",
    "yllcenter",
    "cellsize",
    "dx",
    "dy",
    "nodata_value",
)
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$|^[+-]?(nan|inf(inity)?)$", re.IGNORECASE)


def parse_esri_ascii(text: str, *, name: str = "<text>", crs: Crs = "local") -> GridData:
    """Parse an ESRI ASCII raster (text) into a `GridData` (see module docstring).

    The header does not record the CRS: ``crs`` says whether x/y are local metres ("local") or
    longitude/latitude degrees ("lonlat"; a `.prj` sidecar is not read).
    """
    if crs not in ("local", "lonlat"):
        raise ValueError(f"`crs` must be 'local' or 'lonlat', got {crs!r}")
    lines = text.splitlines()
    header: dict[str, tuple[str, int]] = {}
    data_start: tuple[int, int] | None = None  # (line index, token index) of the first value
    for li, line in enumerate(lines):
        toks = line.split()
        ti = 0
        while ti < len(toks):
            key = toks[ti].lower()
            if key not in _ASC_KEYS:
                if not _NUMBER.match(toks[ti]):
                    raise GridError(
                        name, f"unknown header key or non-numeric token {toks[ti]!r}", line=li + 1
                    )
                data_start = (li, ti)
                break
            if key in header:
                raise GridError(name, f"header key {toks[ti]!r} given twice", line=li + 1)
            if ti + 1 >= len(toks):
                raise GridError(name, f"header key {toks[ti]!r} has no value", line=li + 1)
            header[key] = (toks[ti + 1], li + 1)
            ti += 2
        if data_start is not None:
            break
    data_line = data_start[0] + 1 if data_start else (len(lines) or None)  # None: the file is empty

    def number(key: str, *, integer: bool = False, positive: bool = False) -> float:
        raw, ln = header[key]
        try:
            val = float(raw)
        except ValueError:
            raise GridError(name, f"{key.upper()} value {raw!r} is not a number", line=ln) from None
        if not math.isfinite(val) or (integer and val != int(val)) or (positive and val <= 0):
            kind = "a positive integer" if integer else ("positive" if positive else "finite")
            raise GridError(name, f"{key.upper()} must be {kind}, got {raw!r}", line=ln)
        return val

    for key in ("ncols", "nrows"):
        if key not in header:
            raise GridError(name, f"missing header key {key.upper()}", line=data_line)
    ncols = int(number("ncols", integer=True, positive=True))
    nrows = int(number("nrows", integer=True, positive=True))
    if "cellsize" in header:
        dx = dy = number("cellsize", positive=True)
    elif "dx" in header and "dy" in header:
        dx, dy = number("dx", positive=True), number("dy", positive=True)
    else:
        raise GridError(name, "missing header key CELLSIZE (or DX and DY)", line=data_line)
    origin = []
    for axis, step in (("x", dx), ("y", dy)):
        corner, centre = f"{axis}llcorner", f"{axis}llcenter"
        if corner in header and centre in header:
            raise GridError(name, f"both {corner.upper()} and {centre.upper()} given", line=header[centre][1])
        if centre in header:
            origin.append(number(centre))
        elif corner in header:
            origin.append(number(corner) + step / 2.0)  # corner of the lower-left cell -> its centre
        else:
            raise GridError(name, f"missing header key {corner.upper()} or {centre.upper()}", line=data_line)
    nodata = number("nodata_value") if "nodata_value" in header else None

    if data_start is None:
        raise GridError(
            name, f"no values after the header (expected NROWS×NCOLS = {nrows * ncols})", line=data_line
        )
    li0, ti0 = data_start
    first = " ".join(lines[li0].split()[ti0:])
    tokens = (first + " " + " ".join(lines[li0 + 1 :])).split()
    try:
        flat = np.array(tokens, dtype=float)
    except ValueError:
        flat = None
    if flat is None or not np.all(np.isfinite(flat) | np.isnan(flat)):
        _raise_bad_token(lines, li0, ti0, name)
    expected = nrows * ncols
    if flat.size != expected:
        raise GridError(
            name,
            f"expected NROWS×NCOLS = {nrows}×{ncols} = {expected} values, found {flat.size}",
            line=_last_nonblank(lines),
        )
    values = flat.reshape(nrows, ncols)[::-1]  # file row 1 is north; ours row 0 is south
    if nodata is not None:
        values = np.where(values == nodata, np.nan, values)
    x = origin[0] + dx * np.arange(ncols)
    y = origin[1] + dy * np.arange(nrows)
    for axis, c in (("x", x), ("y", y)):
        # a huge origin with a small cell size overflows or stops increasing in floating point
        if not np.all(np.isfinite(c)) or np.any(np.diff(c) <= 0):
            raise GridError(name, f"{axis} coordinates from the origin and cell size overflow or do not increase",
                            line=data_line)  # fmt: skip
    return GridData(values=values, x=x, y=y, crs=crs, source=name)


def _raise_bad_token(lines: list[str], li0: int, ti0: int, name: str) -> None:
    for li in range(li0, len(lines)):
        for tok in lines[li].split()[ti0 if li == li0 else 0 :]:
            try:
                val = float(tok)
            except ValueError:
                raise GridError(name, f"value {tok!r} is not a number", line=li + 1) from None
            if math.isinf(val):
                raise GridError(name, f"value {tok!r} is not finite", line=li + 1)
    raise GridError(name, "unreadable values")  # unreachable: np.array failed on some token


def _last_nonblank(lines: list[str]) -> int:
    for li in range(len(lines) - 1, -1, -1):
        if lines[li].strip():
            return li + 1
    return 1


def read_esri_ascii(path: str | Path, *, crs: Crs = "local") -> GridData:
    """Read an ESRI ASCII raster file (see `parse_esri_ascii`)."""
    return parse_esri_ascii(_read_text(path), name=str(path), crs=crs)


def format_esri_ascii(
    grid: GridData, *, nodata_value: float = -9999.0, registration: Literal["corner", "center"] = "center"
) -> str:
    """Write a regular `GridData` as ESRI ASCII text (values in shortest round-trip form)."""
    spacing = grid.spacing()
    if spacing is None:
        raise GridError(grid.source, "grid is not evenly spaced; ESRI ASCII needs a regular grid")
    dx, dy = spacing
    if np.any(grid.values == nodata_value):
        raise GridError(grid.source, f"a value equals the NODATA_VALUE {nodata_value!r}")
    ny, nx = grid.shape
    if registration == "center":
        head = [f"XLLCENTER {float(grid.x[0])!r}", f"YLLCENTER {float(grid.y[0])!r}"]
    else:
        head = [f"XLLCORNER {float(grid.x[0]) - dx / 2.0!r}", f"YLLCORNER {float(grid.y[0]) - dy / 2.0!r}"]
    size = [f"CELLSIZE {dx!r}"] if dx == dy else [f"DX {dx!r}", f"DY {dy!r}"]
    out = [f"NCOLS {nx}", f"NROWS {ny}", *head, *size, f"NODATA_VALUE {nodata_value!r}"]
    filled = np.where(np.isnan(grid.values), nodata_value, grid.values)
    for row in filled[::-1]:
        out.append(" ".join(repr(v) for v in row.tolist()))
    return "\n".join(out) + "\n"


# ---------------------------------------------------------------------------------------------
# NetCDF (CF / GEBCO style)


_NC3_MAGIC = (b"CDF\x01", b"CDF\x02")
_HDF5_MAGIC = b"\x89HDF\r\n\x1a\n"
_GRID_NAMES = ("elevation", "depth", "z", "Band1", "bathymetry", "topo")
_GRID_STANDARD_NAMES = {
    "sea_floor_depth_below_sea_surface",
    "sea_floor_depth_below_geoid",
    "sea_floor_depth_below_mean_sea_level",
    "height_above_mean_sea_level",
    "height_above_reference_ellipsoid",
    "altitude",
}
_LAT = {"lat", "latitude", "y_lat"}
_LON = {"lon", "long", "longitude", "x_lon"}
_DEG_N = {"degrees_north", "degree_north", "degree_n", "degrees_n", "degreen", "degreesn"}
_DEG_E = {"degrees_east", "degree_east", "degree_e", "degrees_e", "degreee", "degreese"}
_METRE_UNITS = {"m": 1.0, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0, "km": 1000.0}


class _Var:
    """The part of a NetCDF variable we need, the same for both backends."""

    def __init__(self, dims: tuple[str, ...], attrs: dict[str, Any], data: Any) -> None:
        self.dims = dims
        self.attrs = attrs
        self.data = data  # sliceable (h5py dataset / numpy array)


def read_netcdf_grid(
    path: str | Path,
    *,
    variable: str | None = None,
    bbox: tuple[float, float, float, float] | None = None,
) -> GridData:
    """Read a 2-D grid from a NetCDF-3 or NetCDF-4 file into a `GridData`.

    Parameters
    ----------
    path : file path.
    variable : name of the grid variable; default the first of `elevation`, `depth`, `z`, `Band1`,
        `bathymetry`, `topo`, else the one 2-D variable with a CF bathymetry/height standard_name.
    bbox : optional (xmin, ymin, xmax, ymax) in the file's coordinates (lon/lat degrees or metres);
        only that window is read (plus nothing else), so a large GEBCO tile can be cut to a spot.
    """
    name = str(path)
    try:
        with open(path, "rb") as fh:
            magic = fh.read(8)
    except OSError as exc:
        raise GridError(name, f"cannot open file: {exc.strerror or exc}") from exc
    if magic[:4] in _NC3_MAGIC:
        return _read_nc3(path, name, variable, bbox)
    if magic == _HDF5_MAGIC:
        return _read_nc4(path, name, variable, bbox)
    if magic[:4] == b"CDF\x05":
        raise GridError(name, "NetCDF-3 CDF-5 (64-bit data) is not supported; convert the file to NetCDF-4")
    raise GridError(name, f"not a NetCDF file (starts with {magic[:4]!r}, expected b'CDF' or HDF5)")


def _read_nc4(path, name, variable, bbox) -> GridData:
    import h5netcdf  # local import: only needed for NetCDF-4 files

    try:
        with h5netcdf.File(path, "r") as f:
            variables = {k: _Var(tuple(v.dimensions), dict(v.attrs), v) for k, v in f.variables.items()}
            return _grid_from_variables(variables, name, variable, bbox)
    except GridError:
        raise
    except (OSError, ValueError, KeyError) as exc:
        raise GridError(name, f"unreadable NetCDF-4 file: {exc}") from exc


def _read_nc3(path, name, variable, bbox) -> GridData:
    from scipy.io import netcdf_file

    try:
        with netcdf_file(path, "r", mmap=False, maskandscale=False) as f:
            variables = {}
            for k, v in f.variables.items():
                attrs = {
                    a: (val.decode() if isinstance(val, bytes) else val) for a, val in v._attributes.items()
                }
                variables[k] = _Var(tuple(v.dimensions), attrs, v.data)
            return _grid_from_variables(variables, name, variable, bbox)
    except GridError:
        raise
    except (OSError, ValueError, TypeError, KeyError) as exc:
        raise GridError(name, f"unreadable NetCDF-3 file: {exc}") from exc


def _attr_str(attrs: dict[str, Any], key: str) -> str:
    val = attrs.get(key, "")
    if isinstance(val, bytes):
        val = val.decode(errors="replace")
    return str(val).strip().lower()


def _pick_variable(variables: dict[str, _Var], name: str, variable: str | None) -> str:
    two_d = [k for k, v in variables.items() if len(v.dims) >= 2]
    if variable is not None:
        if variable not in variables:
            raise GridError(name, f"no variable {variable!r}; 2-D variables: {', '.join(two_d) or 'none'}")
        return variable
    for cand in _GRID_NAMES:
        if cand in variables and len(variables[cand].dims) >= 2:
            return cand
    by_std = [k for k in two_d if _attr_str(variables[k].attrs, "standard_name") in _GRID_STANDARD_NAMES]
    if len(by_std) == 1:
        return by_std[0]
    raise GridError(
        name,
        "no elevation or depth variable found; name one with `variable` "
        f"(2-D variables: {', '.join(two_d) or 'none'})",
    )


def _axis_kind(var_name: str, var: _Var) -> str | None:
    """'lat', 'lon', 'x', 'y' or None from the coordinate's name, units, standard_name and axis."""
    units = _attr_str(var.attrs, "units").replace(" ", "")
    std = _attr_str(var.attrs, "standard_name")
    axis = _attr_str(var.attrs, "axis")
    low = var_name.lower()
    if units in _DEG_N or std == "latitude" or (low in _LAT and units in ("", "degrees", "degree")):
        return "lat"
    if units in _DEG_E or std == "longitude" or (low in _LON and units in ("", "degrees", "degree")):
        return "lon"
    if std == "projection_x_coordinate" or low in ("x", "easting") or (axis == "x" and units in _METRE_UNITS):
        return "x"
    if (
        std == "projection_y_coordinate"
        or low in ("y", "northing")
        or (axis == "y" and units in _METRE_UNITS)
    ):
        return "y"
    return None


def _grid_from_variables(variables: dict[str, _Var], name: str, variable: str | None, bbox) -> GridData:
    vname = _pick_variable(variables, name, variable)
    var = variables[vname]
    shape = tuple(var.data.shape)
    dims = [d for d, n in zip(var.dims, shape, strict=True) if n != 1]  # drop e.g. a length-1 time axis
    if len(dims) != 2:
        raise GridError(name, f"variable {vname!r} has dimensions {var.dims} {shape}; need a 2-D grid")
    kinds: dict[str, tuple[str, NDArray[np.float64], float]] = {}
    for d in dims:
        cvar = variables.get(d)
        if cvar is None or len(cvar.dims) != 1:
            raise GridError(name, f"dimension {d!r} of {vname!r} has no 1-D coordinate variable")
        kind = _axis_kind(d, cvar)
        if kind is None:
            raise GridError(
                name,
                f"coordinate {d!r} is neither latitude/longitude (degrees) nor x/y (metres): "
                f"units {_attr_str(cvar.attrs, 'units')!r}",
            )
        scale = (
            _METRE_UNITS.get(_attr_str(cvar.attrs, "units").replace(" ", ""), 1.0) if kind in "xy" else 1.0
        )
        kinds[d] = (kind, np.asarray(cvar.data[...], dtype=float) * scale, scale)
    found = {k[0] for k in kinds.values()}
    if found == {"lat", "lon"}:
        crs: Crs = "lonlat"
        ydim = next(d for d in dims if kinds[d][0] == "lat")
    elif found == {"x", "y"}:
        crs = "local"
        ydim = next(d for d in dims if kinds[d][0] == "y")
    else:
        raise GridError(name, f"coordinates of {vname!r} must be lat/lon or x/y, got {sorted(found)}")
    xdim = next(d for d in dims if d != ydim)
    xc, yc = kinds[xdim][1], kinds[ydim][1]
    for d, c in ((xdim, xc), (ydim, yc)):
        if c.size < 2 or not np.all(np.isfinite(c)):
            raise GridError(name, f"coordinate {d!r} needs at least 2 finite values")
        step = np.diff(c)
        if not (np.all(step > 0) or np.all(step < 0)):
            raise GridError(name, f"coordinate {d!r} is not strictly monotonic")

    # Index window (in file order) before reading the data, so big tiles are cut cheaply.
    xs, ys = slice(None), slice(None)
    if bbox is not None:
        x_lo, y_lo, x_hi, y_hi = (float(b) for b in bbox)
        xs = _window(xc, x_lo, x_hi, name, xdim)
        ys = _window(yc, y_lo, y_hi, name, ydim)
    index: list[Any] = []
    for d, n in zip(var.dims, shape, strict=True):
        index.append(0 if n == 1 else (xs if d == xdim else ys))
    raw = np.asarray(var.data[tuple(index)])
    xc, yc = xc[xs], yc[ys]
    kept = [d for d in var.dims if d in (xdim, ydim)]
    if kept == [xdim, ydim]:
        raw = raw.T  # stored (x, y): make it (y, x)
    values = _decode(raw, var.attrs)
    if xc[0] > xc[-1]:
        xc, values = xc[::-1], values[:, ::-1]
    if yc[0] > yc[-1]:
        yc, values = (
            yc[::-1],
            values[::-1, :],
        )  # north-up files (descending latitude) flipped to row 0 = south
    if np.all(np.isnan(values)):
        raise GridError(name, f"variable {vname!r} has no data (all values are fill/missing)")
    return GridData(values=values, x=xc, y=yc, crs=crs, source=name, variable=vname)


def _window(c: NDArray[np.float64], lo: float, hi: float, name: str, dim: str) -> slice:
    idx = np.nonzero((c >= min(lo, hi)) & (c <= max(lo, hi)))[0]
    if idx.size < 2:
        raise GridError(name, f"bbox selects fewer than 2 cells along {dim!r} ({c.min():g}..{c.max():g})")
    return slice(int(idx[0]), int(idx[-1]) + 1)


def _decode(raw: NDArray[Any], attrs: dict[str, Any]) -> NDArray[np.float64]:
    """CF decoding: mask fill/missing/invalid raw values, then value = raw*scale_factor + add_offset."""
    if np.ma.isMaskedArray(raw):
        raw = raw.filled(np.nan) if raw.dtype.kind == "f" else raw.data
    mask = np.zeros(raw.shape, dtype=bool)
    for key in ("_FillValue", "missing_value"):
        if key in attrs:
            for fv in np.atleast_1d(np.asarray(attrs[key])).ravel():
                mask |= raw == fv
    if "valid_range" in attrs:
        lo, hi = np.asarray(attrs["valid_range"]).ravel()[:2]
        mask |= (raw < lo) | (raw > hi)
    if "valid_min" in attrs:
        mask |= raw < np.asarray(attrs["valid_min"]).ravel()[0]
    if "valid_max" in attrs:
        mask |= raw > np.asarray(attrs["valid_max"]).ravel()[0]
    values = raw.astype(float)
    if "scale_factor" in attrs:
        values = values * float(np.asarray(attrs["scale_factor"]).ravel()[0])
    if "add_offset" in attrs:
        values = values + float(np.asarray(attrs["add_offset"]).ravel()[0])
    values[mask | ~np.isfinite(values)] = np.nan
    return values


# ---------------------------------------------------------------------------------------------
# XYZ soundings


_XYZ_SPLIT = re.compile(r"[\s,;]+")


def parse_xyz(
    text: str,
    *,
    name: str = "<text>",
    spacing_m: float | None = None,
    crs: Crs = "local",
    origin: tuple[float, float] | None = None,
) -> GridData:
    """Grid headerless ``x y z`` soundings onto a regular grid in local metres.

    crs "local": x, y are metres east/north of the spot origin. crs "lonlat": x = longitude,
    y = latitude (WGS 84 degrees); they are projected about ``origin`` = (lat0, lon0) (required)
    before gridding, so the result is always crs "local". The spacing defaults to the median
    nearest-neighbour distance of the (de-duplicated) soundings; duplicate positions are averaged.
    z keeps its sign (say depth or elevation to `to_depth_grid`).
    """
    if crs not in ("local", "lonlat"):
        raise ValueError(f"`crs` must be 'local' or 'lonlat', got {crs!r}")
    if crs == "lonlat" and origin is None:
        raise ValueError("`origin` (lat0, lon0) is required to grid lon/lat soundings")
    rows: list[tuple[float, float, float]] = []
    rejects: list[Reject] = []
    n_data = 0
    for ln, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        n_data += 1
        toks = [t for t in _XYZ_SPLIT.split(s) if t]
        if len(toks) != 3:
            rejects.append(Reject(name, ln, "x y z", f"expected 3 values, found {len(toks)}", s[:80]))
            continue
        try:
            x, y, z = (float(t) for t in toks)
        except ValueError:
            bad = next(t for t in toks if not _NUMBER.match(t))
            rejects.append(Reject(name, ln, "x y z", f"{bad!r} is not a number", s[:80]))
            continue
        if not (math.isfinite(x) and math.isfinite(y) and math.isfinite(z)):
            rejects.append(Reject(name, ln, "x y z", "values must be finite", s[:80]))
            continue
        if crs == "lonlat" and abs(y) > 90:
            rejects.append(Reject(name, ln, "y", f"latitude {y!r} outside [-90, 90]", s[:80]))
            continue
        rows.append((x, y, z))
    if n_data and len(rejects) > MAX_BAD_LINE_FRACTION * n_data:
        first = "; ".join(f"line {r.line}: {r.reason}" for r in rejects[:3])
        raise GridError(
            name,
            f"{len(rejects)} of {n_data} lines are bad (more than {MAX_BAD_LINE_FRACTION:.0%}): {first}",
            line=rejects[0].line,
        )
    if len(rows) < 3:
        raise GridError(name, f"need at least 3 soundings to grid, found {len(rows)}")
    pts = np.array(rows)
    px, py, pz = pts[:, 0], pts[:, 1], pts[:, 2]
    if crs == "lonlat":
        assert origin is not None
        try:
            px, py = to_local(py, px, origin[0], origin[1])
        except ValueError as exc:
            raise GridError(name, f"cannot project soundings about origin {origin}: {exc}") from exc
    xy, inverse = np.unique(np.column_stack([px, py]), axis=0, return_inverse=True)
    inverse = inverse.ravel()
    z = np.bincount(inverse, weights=pz) / np.bincount(inverse)
    if xy.shape[0] < 3:
        raise GridError(name, f"need at least 3 distinct sounding positions, found {xy.shape[0]}")
    if spacing_m is None:
        dist, _ = cKDTree(xy).query(xy, k=2)
        spacing = float(np.median(dist[:, 1]))
    else:
        spacing = float(spacing_m)
        if not (math.isfinite(spacing) and spacing > 0):
            raise ValueError(f"`spacing_m` must be a positive length [m], got {spacing_m!r}")
    (xmin, ymin), (xmax, ymax) = xy.min(axis=0), xy.max(axis=0)
    with np.errstate(over="ignore", invalid="ignore"):
        spans = (float(xmax - xmin) / spacing, float(ymax - ymin) / spacing)
    if not all(math.isfinite(v) for v in spans) or not math.isfinite(spacing):
        raise GridError(name, "soundings span more than a grid can hold (positions out of range)")
    nx = int(math.floor((xmax - xmin) / spacing + 1e-9)) + 1
    ny = int(math.floor((ymax - ymin) / spacing + 1e-9)) + 1
    if nx < 2 or ny < 2:
        raise GridError(
            name, f"soundings span less than 2 cells of {spacing:g} m in x or y (a line, not an area)"
        )
    if nx * ny > MAX_CELLS:
        raise GridError(
            name,
            f"grid of {nx}×{ny} cells at {spacing:g} m exceeds {MAX_CELLS} cells; give a coarser spacing",
        )
    gx = xmin + spacing * np.arange(nx)
    gy = ymin + spacing * np.arange(ny)
    try:
        values = griddata(xy, z, (gx[None, :], gy[:, None]), method="linear")
    except (QhullError, ValueError) as exc:
        raise GridError(name, f"cannot triangulate the soundings (all on one line?): {exc}") from exc
    if np.all(np.isnan(values)):
        raise GridError(name, "gridded soundings have no data inside their convex hull")
    return GridData(values=values, x=gx, y=gy, crs="local", source=name, rejects=tuple(rejects))


def read_xyz(
    path: str | Path,
    *,
    spacing_m: float | None = None,
    crs: Crs = "local",
    origin: tuple[float, float] | None = None,
) -> GridData:
    """Read and grid an XYZ soundings file (see `parse_xyz`)."""
    return parse_xyz(_read_text(path), name=str(path), spacing_m=spacing_m, crs=crs, origin=origin)


def _read_text(path: str | Path) -> str:
    try:
        return Path(path).read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise GridError(str(path), f"not a UTF-8 text file (byte {exc.start})") from exc
    except OSError as exc:
        raise GridError(str(path), f"cannot open file: {exc.strerror or exc}") from exc


# ---------------------------------------------------------------------------------------------
# conversion to the model grid


def to_depth_grid(
    grid: GridData,
    *,
    values: Literal["depth", "elevation"],
    origin: tuple[float, float] | None = None,
    spacing_m: float | Sequence[float] | None = None,
) -> DepthGrid:
    """Convert a `GridData` to a `DepthGrid` in local metres, depth positive down.

    values "depth": the file holds depth (positive down); "elevation": height (positive up), so
    depth = -elevation. crs "local" grids are used as they are when regular (resampled when
    `spacing_m` is given or the axes are uneven). crs "lonlat" grids are projected about
    ``origin`` = (lat0, lon0) with `models.geodesy` (transverse Mercator, WGS 84) and resampled
    bilinearly onto the largest regular metric grid inside the projected footprint; the default
    spacing is the native cell size in metres at the origin (dx from the longitude step, dy from the
    latitude step). `spacing_m` may be one number or (dx, dy).

    Raises `GridError` if the grid has no data, more than `MAX_NODATA_FRACTION` no-data cells, or no
    water (no depth > 0).
    """
    if values not in ("depth", "elevation"):
        raise ValueError(f"`values` must be 'depth' or 'elevation', got {values!r}")
    name = grid.source
    v = grid.values if values == "depth" else -grid.values
    if np.all(np.isnan(v)):
        raise GridError(name, "grid has no data (every cell is no-data)")
    meta: dict[str, Any] = {"source": name, "values": values, "native_crs": grid.crs}
    if grid.variable:
        meta["variable"] = grid.variable
    target = _spacing_pair(spacing_m)

    if grid.crs == "local":
        native = grid.spacing()
        if native is not None and target is None:
            depth, x0, y0, (dx, dy) = v, float(grid.x[0]), float(grid.y[0]), native
        else:
            if target is None:
                target = (float(np.median(np.diff(grid.x))), float(np.median(np.diff(grid.y))))
            dx, dy = target
            gx = _nodes(grid.x[0], grid.x[-1], dx, name)
            gy = _nodes(grid.y[0], grid.y[-1], dy, name)
            depth = _interp(grid.x, grid.y, v, gx[None, :], gy[:, None])
            x0, y0 = float(gx[0]), float(gy[0])
        meta["projection"] = "none (file already in local metres)"
    else:
        if origin is None:
            raise ValueError("`origin` (lat0, lon0) is required to convert a lon/lat grid")
        lat0, lon0 = float(origin[0]), float(origin[1])
        try:
            depth, x0, y0, dx, dy = _project_lonlat(grid, v, lat0, lon0, target)
        except ValueError as exc:
            if isinstance(exc, GridError):
                raise
            raise GridError(name, f"cannot project about origin ({lat0}, {lon0}): {exc}") from exc
        meta["projection"] = "transverse Mercator on WGS 84 about the origin (models.geodesy)"
        meta["origin"] = (lat0, lon0)

    if depth.shape[0] < 2 or depth.shape[1] < 2:
        raise GridError(name, f"grid is {depth.shape[1]}×{depth.shape[0]} cells; need at least 2×2")
    nodata = float(np.mean(np.isnan(depth)))
    if nodata > MAX_NODATA_FRACTION:
        raise GridError(name, f"{nodata:.0%} of the cells are no-data (more than {MAX_NODATA_FRACTION:.0%})")
    if not np.any(depth > 0):
        hint = " (is `values` right? elevation is positive up)" if np.any(depth < 0) else ""
        raise GridError(name, f"grid has no water: no cell with depth > 0{hint}")
    return DepthGrid(depth, x0, y0, dx, dy, meta)


def _spacing_pair(spacing_m: float | Sequence[float] | None) -> tuple[float, float] | None:
    if spacing_m is None:
        return None
    pair = tuple(float(s) for s in np.atleast_1d(np.asarray(spacing_m, dtype=float)))
    if len(pair) == 1:
        pair = pair * 2
    if len(pair) != 2 or not all(math.isfinite(s) and s > 0 for s in pair):
        raise ValueError(f"`spacing_m` must be a positive length or (dx, dy) [m], got {spacing_m!r}")
    return pair  # type: ignore[return-value]


def _nodes(lo: float, hi: float, step: float, name: str) -> NDArray[np.float64]:
    n = int(math.floor((hi - lo) / step + 1e-9)) + 1
    if n > 20_000:
        raise GridError(name, f"{n} nodes along an axis at {step:g} m; give a coarser spacing")
    return lo + step * np.arange(max(n, 1))


def _interp(xs, ys, v, qx, qy) -> NDArray[np.float64]:
    """Bilinear interpolation of v[j, i] on (ys, xs) at query points; NaN outside or next to no-data."""
    f = RegularGridInterpolator((ys, xs), v, method="linear", bounds_error=False, fill_value=np.nan)
    qx, qy = np.broadcast_arrays(qx, qy)
    return f(np.stack([qy.ravel(), qx.ravel()], axis=-1)).reshape(qx.shape)


def _snap(q: NDArray[np.float64], lo: float, hi: float, tol: float) -> NDArray[np.float64]:
    q = np.where((q < lo) & (q > lo - tol), lo, q)
    return np.where((q > hi) & (q < hi + tol), hi, q)


def _project_lonlat(grid: GridData, v, lat0: float, lon0: float, target):
    lon, lat = grid.x, grid.y
    if target is None:
        dlon = float(np.median(np.diff(lon)))
        dlat = float(np.median(np.diff(lat)))
        ex, _ = to_local(lat0, lon0 + dlon, lat0, lon0)
        _, ny_ = to_local(lat0 + dlat / 2.0, lon0, lat0, lon0)
        _, sy_ = to_local(lat0 - dlat / 2.0, lon0, lat0, lon0)
        target = (float(ex), float(ny_ - sy_))
    dx, dy = target
    # Footprint of the lon/lat grid on the plane; keep the largest axis-aligned box inside it.
    west_x, _ = to_local(lat, np.full_like(lat, lon[0]), lat0, lon0)
    east_x, _ = to_local(lat, np.full_like(lat, lon[-1]), lat0, lon0)
    _, south_y = to_local(np.full_like(lon, lat[0]), lon, lat0, lon0)
    _, north_y = to_local(np.full_like(lon, lat[-1]), lon, lat0, lon0)
    xmin, xmax = float(np.max(west_x)), float(np.min(east_x))
    ymin, ymax = float(np.max(south_y)), float(np.min(north_y))
    if xmax - xmin < dx or ymax - ymin < dy:
        raise GridError(grid.source, "projected grid is smaller than one cell")
    gx = _nodes(xmin, xmax, dx, grid.source)
    gy = _nodes(ymin, ymax, dy, grid.source)
    if gx.size * gy.size > MAX_CELLS:
        raise GridError(grid.source, f"{gx.size}×{gy.size} cells exceed {MAX_CELLS}; give a coarser spacing")
    qlon, qlat = to_lonlat(gx[None, :], gy[:, None], lat0, lon0)
    mid = 0.5 * (lon[0] + lon[-1])
    qlon = qlon + 360.0 * np.round((mid - qlon) / 360.0)  # into the file's longitude range (e.g. 0..360)
    # Nodes on the footprint's edge may land a rounding error outside the file's range: snap them in.
    qlon = _snap(qlon, lon[0], lon[-1], 1e-6 * (lon[1] - lon[0]))
    qlat = _snap(qlat, lat[0], lat[-1], 1e-6 * (lat[1] - lat[0]))
    depth = _interp(lon, lat, v, qlon, qlat)
    return depth, float(gx[0]), float(gy[0]), dx, dy
