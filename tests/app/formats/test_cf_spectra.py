"""CF NetCDF spectra: our files open in xarray with the right names/units/values; round trips;
NetCDF3 (scipy) input with CF packing and per-degree density; bad files give rejects."""

from __future__ import annotations

import io
import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
import xarray as xr

from app.formats.cf_names import WRITTEN_STANDARD_NAMES
from app.formats.cf_spectra import parse_cf_spectra, read_cf_spectra, write_cf_spectra
from app.formats.records import SpectrumRecord, hm0

FREQ = np.array([0.05, 0.08, 0.1, 0.15, 0.2])
DIRS = np.arange(0.0, 360.0, 30.0)
T0 = datetime(2031, 2, 1, tzinfo=UTC)
ISSUE = datetime(2031, 1, 31, 18, tzinfo=UTC)


def directional(station, h, *, issue=ISSUE):
    k = np.arange(FREQ.size)[:, None]
    spread = np.cos(np.radians(DIRS - 270.0) / 2.0)[None, :] ** 8  # invented shape peaked FROM 270°
    efth = (0.2 + 0.1 * k) * spread * (1 + h)
    density = efth.sum(axis=1) * np.radians(30.0)
    return SpectrumRecord(station=station, time=T0 + timedelta(hours=h), frequency=FREQ, density=density,
                          directions_deg=DIRS, efth=efth, issue_time=issue)


def with_coeffs(station, h):
    return SpectrumRecord(station=station, time=T0 + timedelta(hours=h), frequency=FREQ,
                          density=np.array([0.1, 0.9, 1.4, 0.5, 0.1]) * (h + 1),
                          r1=[np.nan, 0.8, 0.85, 0.7, 0.5], r2=[np.nan, 0.5, 0.6, 0.4, 0.3],
                          alpha1_deg=[np.nan, 265.0, 270.0, 99.0, 290.0],
                          alpha2_deg=[np.nan, 262.0, 268.0, 280.0, 288.0], separation_frequency=0.12)


def written(records, **kw):
    buf = io.BytesIO()
    write_cf_spectra(buf, records, **kw)
    return buf.getvalue()


def test_xarray_opens_our_file_with_cf_names_units_values():
    recs = [directional(s, h) for s in ("north", "south") for h in range(3)]
    data = written(recs, positions={"north": (10.0, 19.5), "south": (9.5, 19.6)})
    ds = xr.open_dataset(io.BytesIO(data), engine="h5netcdf")
    try:
        assert ds.attrs["Conventions"] == "CF-1.11" and ds.attrs["featureType"] == "timeSeries"
        assert ds.efth.dims == ("time", "station", "frequency", "direction")
        assert ds.efth.attrs["standard_name"] == "sea_surface_wave_directional_variance_spectral_density"
        assert ds.efth.attrs["units"] == "m2 s rad-1"
        assert ds.ef.attrs["standard_name"] == "sea_surface_wave_variance_spectral_density"
        assert ds.ef.attrs["units"] == "m2 s"
        assert ds.frequency.attrs["standard_name"] == "sea_surface_wave_frequency"
        assert ds.direction.attrs["units"] == "degree"
        assert [s.decode() for s in ds.station_name.values] == ["north", "south"]
        assert ds.station_name.attrs["cf_role"] == "timeseries_id"
        assert ds.time.values[0] == np.datetime64("2031-02-01T00:00:00")
        assert ds.forecast_reference_time.values == np.datetime64("2031-01-31T18:00:00")
        np.testing.assert_allclose(ds.efth.values[1, 1], recs[4].efth)
        # ∫ efth dθ (θ in radians) = ef (docs/formats.md §2 "how to test")
        np.testing.assert_allclose(ds.efth.values.sum(axis=-1) * np.radians(30.0), ds.ef.values)
        np.testing.assert_allclose(ds.hs.values[2, 0], hm0(FREQ, recs[2].density))
        names = {v.attrs["standard_name"] for v in ds.variables.values() if "standard_name" in v.attrs}
        assert names <= WRITTEN_STANDARD_NAMES, names - WRITTEN_STANDARD_NAMES
        assert len(names) >= 7
    finally:
        ds.close()


def test_every_written_standard_name_is_in_the_frozen_list():
    data = written([with_coeffs("a", h) for h in range(2)])
    ds = xr.open_dataset(io.BytesIO(data), engine="h5netcdf")
    try:
        names = {v.attrs["standard_name"] for v in ds.variables.values() if "standard_name" in v.attrs}
        assert {"sea_surface_wave_mean_from_direction", "sea_surface_wave_principal_from_direction"} <= names
        assert names <= WRITTEN_STANDARD_NAMES
        assert "standard_name" not in ds.r1.attrs and ds.r1.attrs["units"] == "1"  # no CF name exists
    finally:
        ds.close()


def test_round_trip_directional_and_coefficients(tmp_path):
    recs = [directional(s, h) for s in ("north", "south") for h in range(3)]
    back = parse_cf_spectra(written(recs), name="x.nc")
    assert back.rejects == ()
    assert [r.content_hash() for r in back.records] == [r.content_hash() for r in sorted(recs, key=lambda r: (r.time, r.station))]
    recs2 = [with_coeffs("a", h) for h in range(3)]
    path = tmp_path / "c.nc"
    write_cf_spectra(path, recs2)
    back2 = read_cf_spectra(path)
    assert [r.content_hash() for r in back2.records] == [r.content_hash() for r in recs2]
    assert back2.records[0].alpha1_deg[3] == 99.0 and np.isnan(back2.records[0].r1[0])


def test_forecast_issue_times_per_time():
    recs = [directional("a", h, issue=ISSUE + timedelta(hours=6 * (h // 2))) for h in range(4)]
    back = parse_cf_spectra(written(recs), name="f.nc")
    assert [r.issue_time for r in back.records] == [r.issue_time for r in recs]


def test_missing_slots_are_skipped_not_invented():
    recs = [directional("a", 0), directional("b", 1)]
    back = parse_cf_spectra(written(recs), name="g.nc")
    assert [(r.station, r.time) for r in back.records] == [("a", recs[0].time), ("b", recs[1].time)]
    assert any("fill values" in n for n in back.notes)


def test_writer_rejects_inconsistent_input():
    a = directional("a", 0)
    b = SpectrumRecord(station="a", time=a.time + timedelta(hours=1), frequency=FREQ * 1.1, density=a.density)
    with pytest.raises(ValueError, match="`records` must share one frequency grid"):
        written([a, b])
    with pytest.raises(ValueError, match="two records"):
        written([a, a])
    with pytest.raises(ValueError, match="empty"):
        written([])


def _netcdf3(per_degree=True, packed=True, bad=False):
    from scipy.io import netcdf_file

    buf = io.BytesIO()
    f = netcdf_file(buf, "w", version=2)
    f.createDimension("time", 2)
    f.createDimension("freq", 3)
    f.createDimension("dir", 4)
    t = f.createVariable("time", "f8", ("time",))
    t[:] = [0.0, 1.5]
    t.units = "hours since 2031-03-01 00:00:00"
    fr = f.createVariable("freq", "f4", ("freq",))
    fr[:] = [0.05, 0.1, 0.2]
    fr.units = "Hz"
    fr.standard_name = "sea_surface_wave_frequency"
    d = f.createVariable("dir", "f4", ("dir",))
    d[:] = [0.0, 90.0, 180.0, 270.0]
    d.units = "degree"
    e = f.createVariable("efth", "i2", ("time", "freq", "dir"))
    raw = np.arange(24, dtype=np.int16).reshape(2, 3, 4)
    raw[1, 2, 3] = -32767  # fill
    if bad:
        raw[0, 0, 0] = -5
    e[:] = raw
    e._FillValue = np.int16(-32767)
    e.scale_factor = 0.01
    e.add_offset = 0.0
    e.units = "m2 s degree-1" if per_degree else "m2 s rad-1"
    e.standard_name = "sea_surface_wave_directional_variance_spectral_density"
    f.station_id = "buoy7"
    f.flush()
    data = buf.getvalue()
    f.close()
    return data


def test_netcdf3_packed_per_degree_input():
    res = parse_cf_spectra(_netcdf3(), name="n3.nc")
    (rec,) = res.records  # the second time has a fill value in efth: rejected
    assert rec.station == "buoy7" and rec.time == datetime(2031, 3, 1, tzinfo=UTC)
    expected = np.arange(12).reshape(3, 4) * 0.01 * 180.0 / math.pi  # per degree -> per radian
    np.testing.assert_allclose(rec.efth, expected)
    np.testing.assert_allclose(rec.density, expected.sum(axis=1) * math.pi / 2)
    (rej,) = res.rejects
    assert rej.field == "efth" and "time index 1" in rej.reason
    assert parse_cf_spectra(_netcdf3(per_degree=False), name="n3.nc").records[0].efth[0, 1] == pytest.approx(0.01)


def test_bad_files_give_rejects_not_exceptions():
    assert parse_cf_spectra(b"not a netcdf", name="x.nc").rejects[0].field == "file"
    assert parse_cf_spectra(b"\x89HDF\r\n\x1a\n" + b"\0" * 40, name="y.nc").rejects[0].field == "file"
    res = parse_cf_spectra(_netcdf3(bad=True), name="z.nc")
    assert res.records == () and {r.field for r in res.rejects} == {"efth"}
