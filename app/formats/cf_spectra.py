"""CF-convention NetCDF point spectra: reader (NetCDF4/HDF5 and NetCDF3) and writer (NetCDF4).

Reader: frequency or frequency-direction density, one or many stations, a time axis and an optional
forecast issue time (`forecast_reference_time`). Variables are found by standard_name first, then by
common names (NDBC THREDDS, CDIP-like, wavespectra). The file kind is chosen by magic bytes:
`CDF\\x01`/`CDF\\x02` -> scipy.io.netcdf_file, `\\x89HDF` -> h5netcdf. CF decoding is our own and small:
_FillValue/missing_value, scale_factor/add_offset, `<unit> since <date>` times (standard calendar),
Hz or rad/s frequency, per-degree or per-radian directional density, radian or degree directions.
Directions must be FROM (a `_to_direction` coordinate is turned around).

Writer: the DSG timeSeries orthogonal multidimensional layout of docs/formats.md §2.2
(`time` unlimited and first, `station`, `frequency`, `direction`), Conventions CF-1.11; the
standard_names used are all in `app.formats.cf_names.WRITTEN_STANDARD_NAMES`.
"""

from __future__ import annotations

import io
import math
import re
from collections.abc import Iterable, Mapping
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from app.formats.records import ParseResult, Reject, SpectrumRecord, band_widths

__all__ = ["parse_cf_spectra", "read_cf_spectra", "write_cf_spectra"]

_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)
_TIME_UNITS = {"s": 1, "sec": 1, "secs": 1, "second": 1, "seconds": 1, "min": 60, "mins": 60, "minute": 60,
               "minutes": 60, "h": 3600, "hr": 3600, "hrs": 3600, "hour": 3600, "hours": 3600,
               "d": 86400, "day": 86400, "days": 86400}
_REF = re.compile(r"(\d{1,4})-(\d{1,2})-(\d{1,2})(?:[ T](\d{1,2}):(\d{1,2})(?::(\d{1,2}(?:\.\d*)?))?)?"
                  r"\s*(Z|UTC|GMT|[+-]\d{1,2}(?::?\d{2})?)?\s*$")


class _FileError(Exception):
    """A whole-file problem: reported as one Reject."""

    def __init__(self, field: str, reason: str):
        super().__init__(reason)
        self.field = field
        self.reason = reason


class _Var:
    def __init__(self, name, dims, attrs, data):
        self.name = name
        self.dims = tuple(dims)
        self.attrs = {k: (v.decode("utf-8", "replace") if isinstance(v, bytes) else v) for k, v in attrs.items()}
        self.raw = data

    def attr(self, key, default=None):
        v = self.attrs.get(key, default)
        if isinstance(v, np.ndarray) and v.size == 1:
            v = v.item()
        return v

    @property
    def std(self) -> str:
        return str(self.attr("standard_name", "") or "")

    @property
    def units(self) -> str:
        return str(self.attr("units", "") or "").strip()

    def values(self) -> np.ndarray:
        """Decoded float values: fill -> NaN, then scale_factor/add_offset."""
        raw = np.asarray(self.raw)
        if raw.dtype.kind in "SUO":
            raise _FileError(self.name, "expected numbers, found text")
        out = raw.astype(np.float64)
        for key in ("_FillValue", "missing_value"):
            fv = self.attrs.get(key)
            if fv is not None:
                for f in np.atleast_1d(np.asarray(fv, dtype=np.float64)):
                    out[raw == f if not np.isnan(f) else np.isnan(out)] = np.nan
        scale = self.attr("scale_factor")
        offset = self.attr("add_offset")
        if scale is not None:
            out = out * float(scale)
        if offset is not None:
            out = out + float(offset)
        return out

    def text(self) -> list[str]:
        raw = np.asarray(self.raw)
        if raw.dtype.kind == "S" and raw.ndim >= 1 and raw.dtype.itemsize == 1:
            rows = raw.reshape(-1, raw.shape[-1]) if raw.ndim > 1 else raw.reshape(1, -1)
            return [b"".join(r.tolist()).decode("utf-8", "replace").strip("\x00 ") for r in rows]
        return [(x.decode("utf-8", "replace") if isinstance(x, bytes) else str(x)).strip("\x00 ")
                for x in raw.reshape(-1)]


def _open(data: bytes) -> tuple[dict[str, _Var], dict]:
    if data[:4] in (b"CDF\x01", b"CDF\x02"):
        from scipy.io import netcdf_file

        with netcdf_file(io.BytesIO(data), "r", mmap=False, maskandscale=False) as f:
            vs = {n: _Var(n, v.dimensions, dict(v._attributes), np.array(v.data, copy=True))
                  for n, v in f.variables.items()}
            return vs, dict(f._attributes)
    if data[:8] == b"\x89HDF\r\n\x1a\n":
        import h5netcdf

        with h5netcdf.File(io.BytesIO(data), "r") as f:
            vs = {n: _Var(n, v.dimensions, dict(v.attrs), np.asarray(v[...])) for n, v in f.variables.items()}
            return vs, dict(f.attrs)
    raise _FileError("file", "not a NetCDF file (expected CDF\\x01, CDF\\x02 or HDF5 magic bytes)")


def _find(vs: Mapping[str, _Var], std: Iterable[str] = (), names: Iterable[str] = (), ndim_min=1) -> _Var | None:
    std = tuple(std)
    for v in vs.values():
        if v.std in std and len(v.dims) >= ndim_min:
            return v
    low = {n.lower(): v for n, v in vs.items()}
    for n in names:
        if n.lower() in low and len(low[n.lower()].dims) >= ndim_min:
            return low[n.lower()]
    return None


def _decode_times(var: _Var) -> list[datetime]:
    units = var.units
    cal = str(var.attr("calendar", "standard") or "standard").lower()
    if cal not in ("standard", "gregorian", "proleptic_gregorian"):
        raise _FileError(var.name, f"calendar {cal!r} not supported (standard calendar only)")
    m = re.match(r"\s*(\w+)\s+since\s+(.+)$", units)
    if m is None or m.group(1).lower() not in _TIME_UNITS:
        raise _FileError(var.name, f"time units {units!r} not of the form '<unit> since <date>'")
    r = _REF.match(m.group(2).strip())
    if r is None:
        raise _FileError(var.name, f"reference date in {units!r} not understood")
    y, mo, d, h, mi = (int(g) if g else 0 for g in r.groups()[:5])
    sec = float(r.group(6) or 0.0)
    tz = r.group(7)
    offset = timedelta(0)
    if tz and tz not in ("Z", "UTC", "GMT"):
        sign = -1 if tz[0] == "-" else 1
        digits = tz[1:].replace(":", "")
        hh = int(digits[:-2] or 0) if len(digits) > 2 else int(digits)
        mm = int(digits[-2:]) if len(digits) > 2 else 0
        offset = sign * timedelta(hours=hh, minutes=mm)
    ref = datetime(y, mo, d, h, mi, tzinfo=UTC) + timedelta(seconds=sec) - offset
    step = _TIME_UNITS[m.group(1).lower()]
    vals = var.values().reshape(-1)
    out = []
    for v in vals:
        if not np.isfinite(v):
            out.append(None)
        else:
            # round to the microsecond: float seconds since epoch carry tiny binary noise
            out.append(ref + timedelta(microseconds=round(float(v) * step * 1e6)))
    return out


def _arrange(var: _Var, roles: dict[str, str], order: tuple[str, ...]) -> np.ndarray:
    """Values of `var` with axes in `order` (roles), inserting size-1 axes for absent roles."""
    vals = var.values()
    axes_roles = []
    for dim, n in zip(var.dims, vals.shape, strict=True):
        role = roles.get(dim)
        if role is None:
            if n != 1:
                raise _FileError(var.name, f"unexpected dimension {dim!r} of size {n}")
            role = "squeeze:" + dim
        axes_roles.append(role)
    keep = [i for i, r in enumerate(axes_roles) if not r.startswith("squeeze:")]
    vals = vals.reshape([vals.shape[i] for i in keep]) if len(keep) != vals.ndim else vals
    present = [axes_roles[i] for i in keep]
    if len(set(present)) != len(present):
        raise _FileError(var.name, "two dimensions play the same role")
    for r in present:
        if r not in order:
            raise _FileError(var.name, f"dimension role {r!r} not expected here")
    vals = np.transpose(vals, [present.index(r) for r in order if r in present])
    for k, r in enumerate(order):
        if r not in present:
            vals = np.expand_dims(vals, k)
    return vals


def _freq_hz(var: _Var) -> np.ndarray:
    f = var.values().reshape(-1)
    u = var.units.lower().replace(" ", "")
    if u in ("rad/s", "rads-1", "rad.s-1", "rad/sec"):
        f = f / (2 * math.pi)
    elif u not in ("", "hz", "s-1", "1/s", "s^-1", "/s", "s**-1"):
        raise _FileError(var.name, f"frequency units {var.units!r} not understood (Hz or s-1 expected)")
    return f


def _per_rad_factor(var: _Var) -> float:
    u = var.units.lower()
    if "deg" in u:
        return 180.0 / math.pi  # per degree -> per radian
    return 1.0


def _directions_deg(var: _Var) -> np.ndarray:
    d = var.values().reshape(-1)
    u = var.units.lower()
    if u.startswith("rad"):
        d = np.degrees(d)
    if "to_direction" in var.std:
        d = d + 180.0
    return np.mod(d, 360.0)


def _decode(vs: dict[str, _Var], gattrs: dict, name: str, rejects: list[Reject], notes: list[str]):
    fvar = _find(vs, ("sea_surface_wave_frequency", "wave_frequency"),
                 ("frequency", "freq", "waveFrequency", "f"))
    if fvar is None:
        raise _FileError("frequency", "no frequency coordinate (standard_name sea_surface_wave_frequency)")
    freq = _freq_hz(fvar)
    ef_var = _find(vs, ("sea_surface_wave_variance_spectral_density",),
                   ("ef", "spectral_wave_density", "waveEnergyDensity"), ndim_min=1)
    efth_var = _find(vs, ("sea_surface_wave_directional_variance_spectral_density",),
                     ("efth", "directionalWaveEnergyDensity"), ndim_min=2)
    if ef_var is None and efth_var is None:
        raise _FileError("density", "no variance spectral density variable (standard_name "
                         "sea_surface_wave_[directional_]variance_spectral_density)")
    tvar = None
    for v in vs.values():
        if len(v.dims) == 1 and "since" in v.units and (v.std == "time" or v.name.lower() in ("time", "wavetime")):
            tvar = v
            break
    if tvar is None:
        raise _FileError("time", "no time coordinate with units '<unit> since <date>'")
    times = _decode_times(tvar)
    roles = {fvar.dims[0]: "freq", tvar.dims[0]: "time"}
    dvar = None
    if efth_var is not None:
        for dim in efth_var.dims:
            if dim in roles:
                continue
            cand = vs.get(dim)
            if cand is None:
                cand = _find({k: v for k, v in vs.items() if v.dims == (dim,)}, (), ("direction", "dir",
                             "waveDirectionBins", "theta"))
            if cand is not None and cand.dims == (dim,) and (
                    "direction" in cand.std or cand.name.lower() in ("direction", "dir", "wavedirectionbins", "theta")):
                dvar = cand
                roles[dim] = "dir"
                break
        if dvar is None:
            raise _FileError(efth_var.name, "directional density without a direction coordinate")
    id_var = next((v for v in vs.values() if str(v.attr("cf_role", "")) == "timeseries_id"), None)
    if id_var is not None:
        roles[id_var.dims[0]] = "station"
        stations = id_var.text()
    else:
        data_var = efth_var or ef_var
        extra = [d for d, n in zip(data_var.dims, np.shape(data_var.raw), strict=True)
                 if d not in roles and n > 1]
        if len(extra) > 1:
            raise _FileError(data_var.name, f"cannot tell the station dimension among {extra}")
        base = gattrs.get("station_id", gattrs.get("station", "")) or Path(name).stem
        base = base.decode("utf-8", "replace") if isinstance(base, bytes) else str(base)
        if extra:
            roles[extra[0]] = "station"
            n = dict(zip(data_var.dims, np.shape(data_var.raw), strict=True))[extra[0]]
            stations = [f"{base}_{i}" for i in range(n)]
        else:
            stations = [base]
    nst = len(stations)
    order = ("time", "station", "freq")
    efth = None
    directions = None
    if efth_var is not None:
        directions = _directions_deg(dvar)
        efth = _arrange(efth_var, roles, order + ("dir",)) * _per_rad_factor(efth_var)
        sort = np.argsort(directions)
        directions, efth = directions[sort], efth[..., sort]
    if ef_var is not None:
        ef = _arrange(ef_var, roles, order)
    else:
        dtheta = np.radians(band_widths(directions)) if directions.size > 1 else np.array([2 * math.pi])
        ef = np.sum(efth * dtheta, axis=-1)
        notes.append(f"{name}: 1-D density integrated from {efth_var.name} over direction")

    def optional(std, names, by_freq=True):
        v = _find(vs, std, names)
        if v is None or (by_freq and fvar.dims[0] not in v.dims):
            return None
        return _arrange(v, roles, order if by_freq else order[:2])

    coeffs = {
        "alpha1_deg": optional(("sea_surface_wave_mean_from_direction",), ("alpha1", "mean_wave_dir")),
        "alpha2_deg": optional(("sea_surface_wave_principal_from_direction",), ("alpha2", "principal_wave_dir")),
        "r1": optional((), ("r1", "wave_spectrum_r1")),
        "r2": optional((), ("r2", "wave_spectrum_r2")),
    }
    have_coeffs = all(c is not None for c in coeffs.values())
    sep = optional((), ("separation_frequency",), by_freq=False)
    bw_var = _find(vs, (), ("bandwidth", "waveBandwidth"))
    bandwidth = bw_var.values().reshape(-1) if bw_var is not None and bw_var.dims == fvar.dims else None
    issue = None
    ivar = _find(vs, ("forecast_reference_time",), ("forecast_reference_time", "issue_time"), ndim_min=0)
    if ivar is not None:
        itimes = _decode_times(ivar)
        if len(ivar.dims) == 0 or len(itimes) == 1:
            issue = np.full((len(times), nst), itimes[0], dtype=object)
        else:
            issue = np.empty((len(times), nst), dtype=object)
            arr = np.array(itimes, dtype=object).reshape(np.shape(ivar.raw))
            iroles = [roles.get(d) for d in ivar.dims]
            if set(iroles) - {"time", "station"}:
                raise _FileError(ivar.name, "forecast_reference_time must vary along time/station only")
            arr = np.transpose(arr, [iroles.index(r) for r in ("time", "station") if r in iroles])
            if "time" not in iroles:
                arr = arr[None, :]
            if "station" not in iroles:
                arr = arr[:, None]
            issue[...] = arr
    n_empty = 0
    records = []
    for it, t in enumerate(times):
        for ks, stn in enumerate(stations):
            where = f"time index {it}, station {stn!r}"
            if t is None:
                rejects.append(Reject(name, None, tvar.name, f"missing time value at {where}"))
                continue
            dens = ef[it, ks]
            if np.all(np.isnan(dens)):
                n_empty += 1  # orthogonal layout: no data for this station at this time
                continue
            kw = {}
            if have_coeffs:
                kw = {k: np.mod(v[it, ks], 360.0) if k.startswith("alpha") else v[it, ks]
                      for k, v in coeffs.items()}
            if efth is not None:
                e = efth[it, ks]
                if np.any(np.isnan(e)) or np.any(e < 0):
                    rejects.append(Reject(name, None, efth_var.name,
                                          f"directional density has missing or negative values at {where}"))
                    continue
                kw.update(directions_deg=directions, efth=e)
            s = None if sep is None else float(sep[it, ks, 0] if sep.ndim == 3 else sep[it, ks])
            try:
                records.append(SpectrumRecord(
                    station=stn, time=t, frequency=freq, density=dens, bandwidth=bandwidth,
                    issue_time=None if issue is None else issue[it, ks],
                    separation_frequency=None if s is None or math.isnan(s) else s, source_file=name, **kw))
            except ValueError as exc:
                field = (ef_var or efth_var).name if "density" in str(exc) else "record"
                rejects.append(Reject(name, None, field, f"{exc} at {where}"))
    if n_empty:
        notes.append(f"{name}: {n_empty} (time, station) slot(s) hold only fill values; skipped")
    records.sort(key=lambda r: (r.time, r.station, r.issue_time or _EPOCH))
    return records


def parse_cf_spectra(data: bytes, *, name: str) -> ParseResult:
    """Parse NetCDF bytes into SpectrumRecords (sorted by time, station); problems become rejects."""
    rejects: list[Reject] = []
    notes: list[str] = []
    try:
        vs, gattrs = _open(bytes(data))
        records = _decode(vs, gattrs, name, rejects, notes)
    except _FileError as exc:
        return ParseResult(rejects=(Reject(name, None, exc.field, exc.reason),))
    except (OSError, ValueError, TypeError, KeyError, IndexError) as exc:  # corrupt container
        return ParseResult(rejects=(Reject(name, None, "file", f"cannot read NetCDF: {exc}"),))
    return ParseResult(records=tuple(records), rejects=tuple(rejects), notes=tuple(notes))


def read_cf_spectra(path: str | Path) -> ParseResult:
    """Read a NetCDF file's bytes and parse them."""
    return parse_cf_spectra(Path(path).read_bytes(), name=str(path))


# ---------------------------------------------------------------------------------------------- writer

def _seconds(t: datetime) -> float:
    return (t - _EPOCH).total_seconds()


def write_cf_spectra(target, records: Iterable[SpectrumRecord], *, title: str = "shoalcast wave spectra",
                     positions: Mapping[str, tuple[float, float]] | None = None,
                     institution: str | None = None, comment: str | None = None) -> None:
    """Write records as a CF-1.11 DSG timeSeries NetCDF4 file to a path or a binary buffer.

    All records must share one frequency grid (and one direction grid if directional); (station,
    time, issue time) must be unique and issue times, if any, one per (time, station). `positions`
    maps station -> (latitude, longitude) in degrees (NaN written when absent). Slots without a
    record hold fill values (NaN).
    """
    import h5netcdf

    recs = list(records)
    if not recs:
        raise ValueError("`records` is empty: nothing to write")
    freq = recs[0].frequency
    for i, r in enumerate(recs):
        if r.frequency.shape != freq.shape or not np.allclose(r.frequency, freq, rtol=1e-9, atol=0):
            raise ValueError(f"`records` must share one frequency grid: record {i} ({r.station} {r.time}) differs")
    directional = all(r.efth is not None for r in recs)
    if directional:
        dirs = recs[0].directions_deg
        for i, r in enumerate(recs):
            if r.directions_deg.shape != dirs.shape or not np.allclose(r.directions_deg, dirs):
                raise ValueError(f"`records` must share one direction grid: record {i} differs")
    with_coeffs = any(r.r1 is not None for r in recs)
    with_sep = any(r.separation_frequency is not None for r in recs)
    bw = recs[0].bandwidth
    with_bw = bw is not None and all(r.bandwidth is not None and np.allclose(r.bandwidth, bw) for r in recs)
    stations = sorted({r.station for r in recs})
    times = sorted({r.time for r in recs})
    si = {s: i for i, s in enumerate(stations)}
    ti = {t: i for i, t in enumerate(times)}
    nt, ns, nf = len(times), len(stations), freq.size
    slot: dict[tuple[int, int], SpectrumRecord] = {}
    for r in recs:
        key = (ti[r.time], si[r.station])
        if key in slot:
            raise ValueError(f"`records` has two records for station {r.station!r} at {r.time.isoformat()}")
        slot[key] = r
    issues = {r.issue_time for r in recs}
    with_issue = issues != {None}
    if with_issue and None in issues:
        raise ValueError("`records` mixes forecasts (issue_time set) and observations")

    def grid(fn, shape):
        out = np.full((nt, ns) + shape, np.nan)
        for (a, b), r in slot.items():
            v = fn(r)
            if v is not None:
                out[a, b] = v
        return out

    ef = grid(lambda r: r.density, (nf,))
    dfreq = bw if with_bw else band_widths(freq)
    hs = 4.0 * np.sqrt(np.sum(np.nan_to_num(ef) * dfreq, axis=-1))
    hs[np.all(np.isnan(ef), axis=-1)] = np.nan
    strlen = max(1, max(len(s.encode()) for s in stations))
    names = np.zeros((ns, strlen), dtype="S1")
    for i, s in enumerate(stations):
        b = s.encode()
        names[i, : len(b)] = np.frombuffer(b, dtype="S1")

    own = isinstance(target, (str, Path))
    f = h5netcdf.File(str(target) if own else target, "w")
    try:
        dims = {"time": None, "station": ns, "frequency": nf, "name_strlen": strlen}
        if directional:
            dims["direction"] = dirs.size
        f.dimensions = dims
        f.resize_dimension("time", nt)

        def var(vname, vdims, data, dtype="f8", **attrs):
            fill = np.nan if dtype == "f8" and vdims and vdims[0] == "time" else None
            v = f.create_variable(vname, vdims, dtype, fillvalue=fill)
            v[...] = data
            for k, a in attrs.items():
                v.attrs[k] = a
            return v

        var("station_name", ("station", "name_strlen"), names, dtype="S1", cf_role="timeseries_id",
            long_name="station identifier")
        pos = positions or {}
        var("lat", ("station",), [pos.get(s, (np.nan, np.nan))[0] for s in stations],
            standard_name="latitude", units="degrees_north")
        var("lon", ("station",), [pos.get(s, (np.nan, np.nan))[1] for s in stations],
            standard_name="longitude", units="degrees_east")
        var("time", ("time",), [_seconds(t) for t in times], standard_name="time",
            units="seconds since 1970-01-01T00:00:00Z", calendar="standard", axis="T")
        var("frequency", ("frequency",), freq, standard_name="sea_surface_wave_frequency", units="Hz",
            long_name="band centre frequency")
        if with_bw:
            var("bandwidth", ("frequency",), bw, units="Hz", long_name="frequency band width")
        coords = "lat lon station_name"
        if directional:
            var("direction", ("direction",), dirs, standard_name="sea_surface_wave_from_direction",
                units="degree", long_name="direction waves come from, clockwise from true north")
            var("efth", ("time", "station", "frequency", "direction"), grid(lambda r: r.efth, (nf, dirs.size)),
                standard_name="sea_surface_wave_directional_variance_spectral_density", units="m2 s rad-1",
                coordinates=coords)
        var("ef", ("time", "station", "frequency"), ef, standard_name="sea_surface_wave_variance_spectral_density",
            units="m2 s", coordinates=coords)
        var("hs", ("time", "station"), hs, standard_name="sea_surface_wave_significant_height", units="m",
            long_name="Hm0 = 4 sqrt(m0) from ef", coordinates=coords)
        if with_coeffs:
            var("alpha1", ("time", "station", "frequency"), grid(lambda r: r.alpha1_deg, (nf,)),
                standard_name="sea_surface_wave_mean_from_direction", units="degree", coordinates=coords)
            var("alpha2", ("time", "station", "frequency"), grid(lambda r: r.alpha2_deg, (nf,)),
                standard_name="sea_surface_wave_principal_from_direction", units="degree", coordinates=coords)
            for k in ("r1", "r2"):
                var(k, ("time", "station", "frequency"), grid(lambda r, k=k: getattr(r, k), (nf,)), units="1",
                    long_name=f"directional Fourier coefficient {k} (NDBC definition, 0..1)", coordinates=coords,
                    comment="no CF standard name exists for this quantity")
        if with_sep:
            var("separation_frequency", ("time", "station"), grid(lambda r: r.separation_frequency, ()),
                units="Hz", long_name="swell / wind-sea separation frequency", coordinates=coords)
        if with_issue:
            if len(issues) == 1:
                var("forecast_reference_time", (), _seconds(next(iter(issues))), standard_name="forecast_reference_time",
                    units="seconds since 1970-01-01T00:00:00Z", calendar="standard")
            else:
                var("forecast_reference_time", ("time", "station"),
                    grid(lambda r: _seconds(r.issue_time), ()), standard_name="forecast_reference_time",
                    units="seconds since 1970-01-01T00:00:00Z", calendar="standard")
        f.attrs["Conventions"] = "CF-1.11"
        f.attrs["featureType"] = "timeSeries"
        f.attrs["title"] = title
        f.attrs["source"] = "shoalcast"
        f.attrs["history"] = f"{datetime.now(UTC):%Y-%m-%dT%H:%M:%SZ} written by shoalcast"
        f.attrs["direction_convention"] = "nautical: direction waves come FROM, degrees clockwise from true north"
        if institution:
            f.attrs["institution"] = institution
        if comment:
            f.attrs["comment"] = comment
    finally:
        f.close()
