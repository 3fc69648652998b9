"""CF NetCDF water level and wind time series -> MetRecord (docs/formats.md §2.3).

Variables by CF standard_name (then common names): `sea_surface_height` [m] (or
`sea_surface_height_above_mean_sea_level`, ..._above_geoid), `wind_speed` [m/s] with
`wind_from_direction` [deg], or the components `eastward_wind` / `northward_wind` [m/s] (the
velocity: toward). Units: m, cm, mm or ft for levels; m/s, knots or km/h for speeds. One station
per file (a time axis, optionally a station axis of length 1) and an optional
`forecast_reference_time` (a model forecast). A value that is missing (fill) leaves that field
None; a value outside its plausible range rejects the row with the variable and time named.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from app.formats.cf_spectra import _decode_times, _FileError, _find, _open, _Var
from app.formats.records import MetRecord, ParseResult, Reject

__all__ = ["MET_STANDARD_NAMES", "has_met_variables", "parse_cf_file", "parse_cf_met"]

LEVEL_NAMES = ("sea_surface_height", "sea_surface_height_above_mean_sea_level", "sea_surface_height_above_geoid",
               "tidal_sea_surface_height_above_mean_sea_level",
               "water_surface_height_above_reference_datum")  # fmt: skip
MET_STANDARD_NAMES = (*LEVEL_NAMES, "wind_speed", "wind_from_direction", "eastward_wind", "northward_wind")
_LEVEL_UNITS = {"m": 1.0, "meter": 1.0, "meters": 1.0, "metre": 1.0, "metres": 1.0, "cm": 0.01, "mm": 0.001,
                "ft": 0.3048, "feet": 0.3048, "foot": 0.3048}  # fmt: skip
_SPEED_UNITS = {"m/s": 1.0, "m s-1": 1.0, "ms-1": 1.0, "m.s-1": 1.0, "m s**-1": 1.0, "knots": 1852.0 / 3600.0,
                "knot": 1852.0 / 3600.0, "kt": 1852.0 / 3600.0, "kn": 1852.0 / 3600.0, "km/h": 1.0 / 3.6,
                "km h-1": 1.0 / 3.6}  # fmt: skip
_RANGE = {"water_level_m": (-30.0, 30.0), "wind_speed_ms": (0.0, 100.0)}


def _vars(vs: dict[str, _Var]) -> dict[str, _Var | None]:
    return {
        "level": _find(vs, LEVEL_NAMES, ("sea_surface_height", "ssh", "zeta", "water_level", "elevation_water")),
        "speed": _find(vs, ("wind_speed",), ("wind_speed", "wspd")),
        "from": _find(vs, ("wind_from_direction",), ("wind_from_direction", "wdir")),
        "east": _find(vs, ("eastward_wind",), ("uwnd", "u10", "eastward_wind")),
        "north": _find(vs, ("northward_wind",), ("vwnd", "v10", "northward_wind")),
    }


def has_met_variables(vs: dict[str, _Var]) -> bool:
    found = _vars(vs)
    return found["level"] is not None or (found["speed"] is not None and found["from"] is not None) or (
        found["east"] is not None and found["north"] is not None
    )


def _factor(var: _Var, table: dict[str, float], what: str) -> float:
    u = var.units.strip().lower()
    if u in table:
        return table[u]
    raise _FileError(var.name, f"{what} units {var.units!r} not understood (expected one of {', '.join(sorted(table))})")


def _series(var: _Var, ntime: int, time_dim: str) -> np.ndarray:
    v = var.values()
    if time_dim not in var.dims:
        raise _FileError(var.name, f"does not vary along the time dimension {time_dim!r}")
    others = [n for d, n in zip(var.dims, v.shape, strict=True) if d != time_dim]
    if any(n != 1 for n in others):
        raise _FileError(var.name, "one station per file for water level and wind series (found another axis "
                         f"of size {max(others)})")  # fmt: skip
    v = np.moveaxis(v, var.dims.index(time_dim), 0).reshape(ntime)
    return v


def decode_met(vs: dict[str, _Var], gattrs: dict, name: str, rejects: list[Reject]) -> list[MetRecord]:
    found = _vars(vs)
    probe = next(v for v in (found["level"], found["speed"], found["east"]) if v is not None)
    tdim = next((d for d in probe.dims if d in vs and "since" in vs[d].units), None)
    if tdim is None:
        tdim = next((v.dims[0] for v in vs.values() if len(v.dims) == 1 and "since" in v.units), None)
    if tdim is None:
        raise _FileError("time", "no time coordinate with units '<unit> since <date>'")
    tvar = vs.get(tdim) or next(v for v in vs.values() if v.dims == (tdim,) and "since" in v.units)
    times = _decode_times(tvar)
    n = len(times)
    cols: dict[str, np.ndarray] = {}
    if found["level"] is not None:
        cols["water_level_m"] = _series(found["level"], n, tdim) * _factor(found["level"], _LEVEL_UNITS, "water level")
    if found["speed"] is not None and found["from"] is not None:
        cols["wind_speed_ms"] = _series(found["speed"], n, tdim) * _factor(found["speed"], _SPEED_UNITS, "wind speed")
        d = _series(found["from"], n, tdim)
        cols["wind_dir_deg"] = np.degrees(d) if found["from"].units.lower().startswith("rad") else d
    elif found["east"] is not None and found["north"] is not None:
        ue = _series(found["east"], n, tdim) * _factor(found["east"], _SPEED_UNITS, "wind speed")
        vn = _series(found["north"], n, tdim) * _factor(found["north"], _SPEED_UNITS, "wind speed")
        cols["wind_speed_ms"] = np.hypot(ue, vn)
        cols["wind_dir_deg"] = np.mod(np.degrees(np.arctan2(-ue, -vn)), 360.0)  # FROM = against the velocity
    issue = None
    ivar = _find(vs, ("forecast_reference_time",), ("forecast_reference_time", "issue_time"), ndim_min=0)
    if ivar is not None:
        its = _decode_times(ivar)
        if len(its) != 1 or its[0] is None:
            raise _FileError(ivar.name, "one forecast_reference_time per water level / wind file")
        issue = its[0]
    station = gattrs.get("station_id", gattrs.get("station", "")) or Path(name).stem
    station = station.decode("utf-8", "replace") if isinstance(station, bytes) else str(station)
    out = []
    for i, t in enumerate(times):
        if t is None:
            rejects.append(Reject(name, None, tvar.name, f"missing time value at time index {i}"))
            continue
        vals: dict[str, float | None] = {}
        bad = None
        for key, arr in cols.items():
            x = float(arr[i])
            if not math.isfinite(x):
                vals[key] = None
                continue
            lo, hi = _RANGE.get(key, (-math.inf, math.inf))
            if not lo <= x <= hi:
                bad = Reject(name, None, key, f"value {x:g} outside {lo:g}..{hi:g} at {t:%Y-%m-%dT%H:%MZ}")
                break
            vals[key] = float(np.mod(x, 360.0)) if key == "wind_dir_deg" else x
        if bad is not None:
            rejects.append(bad)
            continue
        if "wind_speed_ms" in cols and (vals["wind_speed_ms"] is None or vals["wind_dir_deg"] is None):
            vals["wind_speed_ms"] = vals["wind_dir_deg"] = None  # half a wind is no wind
        if all(v is None for v in vals.values()):
            continue
        out.append(MetRecord(time=t, station=station, issue_time=issue, source_file=name,
                             **{k: v for k, v in vals.items() if k in cols}))  # fmt: skip
    return out


def parse_cf_met(data: bytes, *, name: str) -> ParseResult:
    """Parse NetCDF bytes into MetRecords (water level, wind); problems become rejects."""
    rejects: list[Reject] = []
    try:
        vs, gattrs = _open(bytes(data))
        if not has_met_variables(vs):
            raise _FileError("file", "no water level (sea_surface_height) or wind (wind_speed + wind_from_direction, "
                             "or eastward_wind + northward_wind) variables")  # fmt: skip
        records = decode_met(vs, gattrs, name, rejects)
    except _FileError as exc:
        return ParseResult(rejects=(Reject(name, None, exc.field, exc.reason),))
    except (OSError, ValueError, TypeError, KeyError, IndexError) as exc:
        return ParseResult(rejects=(Reject(name, None, "file", f"cannot read NetCDF: {exc}"),))
    return ParseResult(records=tuple(sorted(records, key=lambda r: r.time)), rejects=tuple(rejects))


def parse_cf_file(data: bytes, *, name: str) -> ParseResult:
    """A CF file's spectra and its water level / wind series, whichever it holds (a `cf-netcdf`
    source may carry either or both)."""
    from app.formats.cf_spectra import parse_cf_spectra

    spec = parse_cf_spectra(data, name=name)
    try:
        vs, _ = _open(bytes(data))
        has = has_met_variables(vs)
    except (_FileError, OSError, ValueError, TypeError, KeyError, IndexError):
        has = False
    if not has:
        return spec
    met = parse_cf_met(data, name=name)
    no_spectra = not spec.records and len(spec.rejects) == 1 and spec.rejects[0].field in ("frequency", "density")
    return ParseResult(
        records=tuple(sorted((*spec.records, *met.records), key=lambda r: r.time)),
        rejects=met.rejects + (() if no_spectra else spec.rejects),
        notes=spec.notes + met.notes,
    )
