"""CF NetCDF water level and wind series: files written by xarray (an independent CF encoder) are read
with the CF standard names' meanings (CF standard name table: `eastward_wind` is the velocity
component toward the east, `wind_from_direction` the direction the wind comes from); units converted
(1 ft = 0.3048 m, 1 knot = 1852 m / 3600 s, both exact by definition); bad values rejected by name."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
import xarray as xr

from app.db.session import session_scope
from app.db.tables import Observation, Source
from app.formats.cf_met import parse_cf_file, parse_cf_met
from app.formats.cf_spectra import write_cf_spectra
from app.formats.records import MetRecord, SpectrumRecord
from app.ingest.store import parse_payload, store_result

T0 = datetime(2031, 2, 1, tzinfo=UTC)


def nc(variables: dict, *, issue: datetime | None = None, n: int = 4) -> bytes:
    times = np.array([np.datetime64((T0 + timedelta(hours=h)).replace(tzinfo=None), "ns") for h in range(n)])
    ds = xr.Dataset({k: ("time", np.asarray(v, dtype=float), attrs) for k, (v, attrs) in variables.items()},
                    coords={"time": times})  # fmt: skip
    ds.time.encoding["units"] = "hours since 2031-01-01 00:00:00"
    if issue is not None:
        ds["forecast_reference_time"] = ((), np.datetime64(issue.replace(tzinfo=None), "ns"),
                                         {"standard_name": "forecast_reference_time"})  # fmt: skip
    return ds.to_netcdf()  # NetCDF3 bytes (scipy)


def test_level_in_cm_and_wind_speed_with_from_direction() -> None:
    data = nc({
        "zeta": ([10.0, 52.0, 104.0, np.nan], {"standard_name": "sea_surface_height", "units": "cm"}),
        "ws": ([4.0, 6.0, 8.0, 9.0], {"standard_name": "wind_speed", "units": "m s-1"}),
        "wd": ([80.0, 90.0, 250.0, 270.0], {"standard_name": "wind_from_direction", "units": "degree"}),
    })  # fmt: skip
    res = parse_cf_met(data, name="shore.nc")
    assert not res.rejects
    assert [r.time for r in res.records] == [T0 + timedelta(hours=h) for h in range(4)]
    levels = [r.water_level_m for r in res.records]
    assert levels[:3] == pytest.approx([0.10, 0.52, 1.04], abs=1e-9) and levels[3] is None
    assert [r.wind_speed_ms for r in res.records] == [4.0, 6.0, 8.0, 9.0]
    assert [r.wind_dir_deg for r in res.records] == [80.0, 90.0, 250.0, 270.0]
    assert all(r.issue_time is None for r in res.records)


def test_wind_components_in_knots_become_speed_and_from_direction_and_a_forecast_keeps_its_issue() -> None:
    issue = T0 - timedelta(hours=6)
    data = nc({
        "u10": ([10.0, 0.0, -10.0, 0.0], {"standard_name": "eastward_wind", "units": "knots"}),
        "v10": ([0.0, 10.0, 0.0, -10.0], {"standard_name": "northward_wind", "units": "knots"}),
    }, issue=issue)  # fmt: skip
    res = parse_cf_met(data, name="model.nc")
    assert not res.rejects
    kn = 1852.0 / 3600.0
    assert [r.wind_speed_ms for r in res.records] == pytest.approx([10 * kn] * 4)
    # toward the east = from the west (270); toward the north = from the south (180)
    assert [r.wind_dir_deg for r in res.records] == pytest.approx([270.0, 180.0, 90.0, 0.0])
    assert {r.issue_time for r in res.records} == {issue}


def test_bad_units_and_out_of_range_values_are_named_and_the_good_rows_kept() -> None:
    bad_units = nc({"h": ([1.0] * 4, {"standard_name": "sea_surface_height", "units": "furlong"})})
    res = parse_cf_met(bad_units, name="a.nc")
    assert not res.records and res.rejects[0].field == "h" and "furlong" in res.rejects[0].reason
    spike = nc({"h": ([0.5, 99.0, 0.7, 0.8], {"standard_name": "sea_surface_height", "units": "m"})})
    res = parse_cf_met(spike, name="b.nc")
    assert [r.water_level_m for r in res.records] == [0.5, 0.7, 0.8]
    assert len(res.rejects) == 1 and res.rejects[0].field == "water_level_m" and "2031-02-01T01:00Z" in res.rejects[0].reason
    none = nc({"x": ([1.0] * 4, {"units": "m"})})
    assert "no water level" in parse_cf_met(none, name="c.nc").rejects[0].reason


def _spectra_with_wind() -> bytes:
    import io

    freq = np.array([0.05, 0.1, 0.2])
    recs = [SpectrumRecord(station="m", time=T0 + timedelta(hours=h), frequency=freq, density=np.array([0.1, 1.0, 0.2]))
            for h in range(2)]  # fmt: skip
    buf = io.BytesIO()
    write_cf_spectra(buf, recs)
    ds = xr.open_dataset(io.BytesIO(buf.getvalue()), engine="h5netcdf").load()
    ds["ws"] = (("time",), np.array([5.0, 7.0]), {"standard_name": "wind_speed", "units": "m s-1"})
    ds["wd"] = (("time",), np.array([90.0, 100.0]), {"standard_name": "wind_from_direction", "units": "degree"})
    return ds.to_netcdf(engine="h5netcdf")


def test_a_file_with_spectra_and_wind_gives_both_and_the_store_keeps_both_kinds(migrated_db: str) -> None:
    data = _spectra_with_wind()
    res = parse_cf_file(data, name="both.nc")
    kinds = sorted(type(r).__name__ for r in res.records)
    assert kinds == ["MetRecord", "MetRecord", "SpectrumRecord", "SpectrumRecord"] and not res.rejects
    with session_scope(migrated_db) as s:
        src = Source(id="m", name="m", format="cf-netcdf", latitude=0.0, longitude=0.0, depth_m=None, urls=[], config={})
        s.add(src)
        s.flush()
        rep = store_result(s, src, parse_payload("cf-netcdf", {"both.nc": data}), files=["both.nc"])
        assert rep.stored == 4
        again = store_result(s, src, parse_payload("cf-netcdf", {"both.nc": data}), files=["both.nc"])
        assert again.stored == 0 and again.unchanged == 4
        rows = s.query(Observation).order_by(Observation.kind, Observation.time).all()
        assert [r.kind for r in rows] == ["met", "met", "spectrum", "spectrum"]
        assert rows[0].values["wind_speed_ms"] == 5.0 and rows[0].values["wind_dir_deg"] == 90.0


def test_met_rows_stored_before_the_new_fields_keep_their_hash() -> None:
    r = MetRecord(time=T0, wind_speed_ms=3.0)
    assert r.content_hash() != MetRecord(time=T0, wind_speed_ms=3.0, water_level_m=0.2).content_hash()
    assert r.content_hash() == MetRecord(time=T0, wind_speed_ms=3.0, source_file="x").content_hash()
