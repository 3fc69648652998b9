"""NDBC text readers on hand-written fixtures (tests/app/formats/fixtures, invented numbers written
from the published layouts in docs/formats.md §1; never copied data)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest

from app.formats.ndbc_historical import parse_historical_set, read_historical_set
from app.formats.ndbc_met import parse_met, read_met
from app.formats.ndbc_realtime import kind_of, parse_realtime_set, read_realtime_set, write_realtime_set
from app.formats.records import SpectrumRecord, hm0

FX = Path(__file__).parent / "fixtures"
RT = [FX / f"fx01.{s}" for s in ("data_spec", "swdir", "swdir2", "swr1", "swr2")]
HIST = [FX / f"fx02{c}2029.txt" for c in "wdijk"]


def t(*a):
    return datetime(*a, tzinfo=UTC)


def test_kind_of_recognises_suffixes():
    assert kind_of("a/b/41x.data_spec") == "density"
    assert kind_of("x.swdir") == "alpha1" and kind_of("x.swdir2") == "alpha2"
    assert kind_of("x.swr1") == "r1" and kind_of("x.swr2") == "r2" and kind_of("x.spec") is None


def test_realtime_set_values_sorted_and_masked():
    res = read_realtime_set(RT)
    assert res.rejects == ()
    recs = res.records
    assert [r.time for r in recs] == [t(2031, 3, 14, 3, 50), t(2031, 3, 14, 4, 50), t(2031, 3, 14, 5, 50)]
    assert all(r.station == "fx01" for r in recs)
    newest = recs[-1]
    np.testing.assert_allclose(newest.frequency, [0.04, 0.05, 0.06, 0.08, 0.1, 0.125, 0.15, 0.2])
    np.testing.assert_allclose(newest.density, [0, 0.35, 2.1, 3.4, 1.25, 0.6, 0.3, 0.08])
    assert newest.separation_frequency == pytest.approx(0.13)
    assert recs[1].separation_frequency is None  # 999 sentinel
    # 999 masked to NaN in the coefficient files (first band of each)
    for arr in (newest.r1, newest.r2, newest.alpha1_deg, newest.alpha2_deg):
        assert np.isnan(arr[0]) and np.all(np.isfinite(arr[1:]))
    assert newest.alpha2_deg[1] == 99.0  # a real 99° is data
    np.testing.assert_allclose(newest.r1[1:4], [0.62, 0.88, 0.91])


def test_realtime_minute_mismatch_join_and_tolerance():
    # coefficient rows are at hh:40, density at hh:50: joined within the default ±20 min
    recs = read_realtime_set(RT).records
    assert all(r.has_coefficients for r in recs)
    tight = read_realtime_set(RT, tolerance=timedelta(minutes=5))
    assert not any(r.has_coefficients for r in tight.records)
    assert len(tight.records) == 3
    assert len(tight.rejects) == 12 and all(r.field == "time" for r in tight.rejects)  # 4 files x 3 orphans
    assert any("without directional coefficients" in n for n in tight.notes)


def test_realtime_grid_change_mid_file():
    oldest = read_realtime_set(RT).records[0]
    assert oldest.frequency.size == 9 and oldest.frequency[0] == pytest.approx(0.035)
    assert oldest.r1.size == 9 and oldest.alpha1_deg[-1] == 310.0


def test_hm0_matches_met_wvht():
    # Hm0 = 4 sqrt(sum S df), df from bin midpoints; rounding tolerance 0.05 m (common practice)
    spec = {r.time: r for r in read_realtime_set(RT).records}
    met = read_met(FX / "fx01.txt")
    assert met.rejects == ()
    matched = 0
    for m in met.records:
        s = spec[m.time]
        assert abs(hm0(s.frequency, s.density) - m.wvht_m) <= 0.05
        # DPD is the period of the peak band
        assert 1.0 / s.frequency[np.argmax(s.density)] == pytest.approx(m.dpd_s, abs=0.05)
        matched += 1
    assert matched == 3


def test_realtime_met_mm_ptdy_and_99_degrees():
    recs = read_met(FX / "fx01.txt").records
    assert recs[0].gust_ms is None and recs[0].pressure_tendency_hpa is None and recs[0].tide_ft is None
    assert recs[1].wind_dir_deg == 99.0 and recs[1].pressure_tendency_hpa == -0.3
    assert recs[2].pressure_tendency_hpa == 0.7 and recs[2].wind_speed_ms == 6.0


def test_historical_met_per_column_sentinels():
    res = read_met(FX / "fx02h2029.txt")
    assert res.rejects == ()
    a, b, c = res.records
    assert a.station == "fx02"
    assert a.wind_dir_deg == 99.0 and a.mwd_deg == 99.0  # 99 is a direction, not WDIR's sentinel (999)
    assert a.dewpoint_c is None and a.visibility_nmi is None and a.tide_ft is None
    assert b.wind_dir_deg is None and b.gust_ms is None and b.wvht_m is None and b.pressure_hpa is None
    assert b.air_temp_c is None and b.water_temp_c == 19.1
    assert c.wind_speed_ms is None and c.water_temp_c is None and c.tide_ft == 2.10 and c.dewpoint_c == 12.0


def test_historical_47_band_r_rescale_and_hm0():
    res = read_historical_set(HIST)
    assert res.rejects == ()
    assert any("divided by 100" in n for n in res.notes)
    r0, r1 = res.records
    assert r0.frequency.size == 47 and r0.frequency[0] == 0.02 and r0.frequency[-1] == 0.485
    assert r0.r1[1] == pytest.approx(0.90) and r0.r2[1] == pytest.approx(0.60)
    assert np.nanmax(r0.r1) <= 1 and np.isnan(r0.r1[0])
    assert r0.alpha1_deg[5] == 99.0  # real 99° kept
    met = {m.time: m for m in read_met(FX / "fx02h2029.txt").records}
    for r in res.records:  # 0.05 m rounding tolerance (common practice)
        assert abs(hm0(r.frequency, r.density) - met[r.time].wvht_m) <= 0.05


def test_historical_already_scaled_r_rule():
    hdr = "#YY  MM DD hh mm  .0500  .1000\n"
    files = {"zz9w2030.txt": hdr + "2030 01 01 00 00   0.50   0.20\n",
             "zz9j2030.txt": hdr + "2030 01 01 00 00   0.80   0.70\n"}
    res = parse_historical_set(files)
    assert any("no ×100 rescale" in n for n in res.notes)
    assert res.records[0].r1 is None  # only j given: no complete coefficient set
    assert any("lacks" in n for n in res.notes)


def test_historical_old_grid_no_minutes_and_two_digit_year():
    res = read_historical_set([FX / "fx03w2001.txt", FX / "fx04w1998.txt"])
    assert res.rejects == ()
    times = [r.time for r in res.records]
    assert times == [t(1998, 12, 31, 22), t(1998, 12, 31, 23), t(2001, 1, 1, 0), t(2001, 1, 1, 1), t(2001, 1, 1, 2)]
    assert all(r.frequency.size == 38 for r in res.records)
    assert res.records[-1].frequency[-1] == pytest.approx(0.40)


def test_historical_wrong_count_rejected_with_reason():
    hdr = "#YY  MM DD hh mm  .0500  .1000\n"
    res = parse_historical_set({"zz9w2030.txt": hdr + "2030 01 01 00 00   0.50\n2030 01 01 01 00 0.1 0.2\n"})
    assert len(res.records) == 1
    (rej,) = res.rejects
    assert (rej.file, rej.line, rej.field) == ("zz9w2030.txt", 2, "row") and "wrong count" in rej.reason


def _rec(h, *, coeffs=True, freq=(0.05, 0.1, 0.2)):
    nf = len(freq)
    kw = dict(r1=np.linspace(0.2, 0.9, nf).round(2), r2=np.linspace(0.1, 0.5, nf).round(2),
              alpha1_deg=np.linspace(90, 300, nf).round(1), alpha2_deg=np.linspace(80, 290, nf).round(1)) if coeffs else {}
    return SpectrumRecord(station="s1", time=t(2031, 1, 1) + timedelta(hours=h), frequency=np.array(freq),
                          density=np.round(np.linspace(0.1, 2.0, nf) * (h + 1), 3), separation_frequency=0.1,
                          **kw)


def test_writer_round_trip():
    recs = [_rec(h) for h in range(4)] + [_rec(4, freq=(0.04, 0.06, 0.1, 0.3))]
    files = write_realtime_set(recs)
    assert set(files) == {"data_spec", "swdir", "swdir2", "swr1", "swr2"}
    lines = files["data_spec"].splitlines()
    assert lines[0].startswith("#YY") and lines[0].endswith(">") and lines[1].startswith("2031 01 01 04 00")
    back = parse_realtime_set({f"s1.{k}": v for k, v in files.items()})
    assert back.rejects == ()
    assert [r.content_hash() for r in back.records] == [r.content_hash() for r in recs]


def test_writer_density_only_has_no_coefficient_files():
    files = write_realtime_set([_rec(0, coeffs=False)])
    assert set(files) == {"data_spec"}


def test_content_hash_ignores_source_file_but_not_values():
    a = _rec(0)
    b = SpectrumRecord(**{**a.__dict__, "source_file": "elsewhere"})
    c = SpectrumRecord(**{**a.__dict__, "density": a.density * 1.01})
    assert a.content_hash() == b.content_hash() != c.content_hash()


def test_met_bad_values_rejected_with_field():
    text = ("#YY  MM DD hh mm WDIR WSPD GST  WVHT   DPD   APD MWD   PRES  ATMP  WTMP  DEWP  VIS PTDY  TIDE\n"
            "2031 03 14 05 50 370  6.0  7.5   1.6  12.5   8.1 270 1015.2  14.1  15.0  10.2   MM +0.7    MM\n"
            "2031 03 14 06 50 310  x.0  7.5   1.6  12.5   8.1 270 1015.2  14.1  15.0  10.2   MM +0.7    MM\n"
            "2031 03 14 07 50 310  6.0  7.5   1.6  12.5   8.1 270 1015.2  14.1  15.0  10.2   MM +0.7    MM\n"
            "2031 03 14 07 50 310  6.0  7.5   1.6  12.5   8.1 270 1015.2  14.1  15.0  10.2   MM +0.7    MM\n")
    res = parse_met(text, name="q.txt")
    assert len(res.records) == 1
    assert [(r.line, r.field) for r in res.rejects] == [(2, "WDIR"), (3, "WSPD"), (5, "time")]
