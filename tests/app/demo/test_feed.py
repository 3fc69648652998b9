"""The synthetic offshore feed: real dispersion, a rising-then-falling swell, two directions, valid files."""

from __future__ import annotations

import math
import tomllib
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest

from app.demo import feed
from app.formats.cf_spectra import read_cf_spectra
from app.formats.ndbc_realtime import read_realtime_set
from app.formats.records import band_widths, hm0
from models import spectra
from models.constants import G

NOW = datetime(2026, 3, 14, 9, 20, tzinfo=UTC)


@pytest.fixture(scope="module")
def scenario():
    return feed.default_scenario(NOW)


@pytest.fixture(scope="module")
def obs(scenario):
    return feed.observation_records(scenario)


@pytest.fixture(scope="module")
def fc(scenario):
    return feed.forecast_records(scenario)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    directory = tmp_path_factory.mktemp("feed")
    return feed.write_feed(directory, now=NOW)


def test_dispersion_slope_matches_the_reference_check_value():
    # docs/check-values.md §8 (C, from df/dt = g/(4πΔ), Munk 1947): 0.01 Hz/day <-> Δ = 6745 km (g = 9.81 there)
    sw = feed.Swell("x", 6745e3, 0.05, 0.06, 0.01, 1.0, 270.0, 270.0, 40.0)
    assert sw.dispersion_slope_hz_per_s * 86400.0 * (9.81 / G) == pytest.approx(0.01, rel=1e-3)


def test_station_sees_frequency_rise_linearly_with_the_storm_distance(obs, scenario):
    # Munk (1947), Snodgrass et al. (1966) via docs/check-values.md §8: at a fixed site the arriving frequency
    # rises linearly in time with slope g/(4πΔ). Measured from the written band densities (with their
    # sampling noise) as the energy-weighted mean frequency of the swell band, before the second
    # swell arrives; the wind sea lies above 0.1 Hz.
    west = scenario.swells[0]
    f = obs[0].frequency
    band = (f > 0.025) & (f < 0.1)
    df = band_widths(f)[band]
    t_h = np.array([(r.time - NOW).total_seconds() / 3600.0 for r in obs])
    centroid = np.array([np.sum(f[band] * r.density[band] * df) / np.sum(r.density[band] * df) for r in obs])
    slope_per_h, _ = np.polyfit(t_h, centroid, 1)
    slope = slope_per_h / 3600.0
    assert slope == pytest.approx(G / (4 * math.pi * west.distance_m), rel=0.03)
    distance = G / (4 * math.pi * slope)  # invert as a forecaster would, to find the storm
    assert distance == pytest.approx(west.distance_m, rel=0.03)
    # and linear: residuals small against the frequency range swept
    resid = centroid - np.polyval(np.polyfit(t_h, centroid, 1), t_h)
    assert np.abs(resid).max() < 0.1 * (centroid.max() - centroid.min())
    assert centroid[-1] - centroid[0] > 0.015  # long periods first


def test_observations_are_hourly_up_to_now(obs):
    times = [r.time for r in obs]
    assert times == sorted(times) and times[-1] <= NOW and NOW - times[-1] < timedelta(hours=1)
    assert all(b - a == timedelta(hours=1) for a, b in zip(times, times[1:], strict=False))
    assert all(r.issue_time is None and r.station == feed.STATION_ID for r in obs)
    assert obs[0].frequency.size == 47  # the agency's 47-band grid (docs/formats.md §1.5)


def _sector_hs(record, lo_deg, hi_deg, f_max):
    d = record.directions_deg
    sel_d = (d >= lo_deg) & (d <= hi_deg)
    sel_f = record.frequency < f_max
    e = record.efth[np.ix_(sel_f, sel_d)].sum(axis=1) * math.radians(5.0)
    return hm0(record.frequency[sel_f], e)


def test_west_swell_rises_then_falls(fc):
    hs = np.array([_sector_hs(r, 240.0, 290.0, 0.11) for r in fc])
    k = int(np.argmax(hs))
    assert 3 < k < len(hs) - 4  # peak inside the window
    assert hs[k] > 2.0
    assert hs[0] < 0.9 * hs[k] and hs[-1] < 0.2 * hs[k]
    assert np.all(np.diff(hs[: k + 1]) > -0.02) and np.all(np.diff(hs[k:]) < 0.02)  # one smooth hump


def test_second_swell_from_the_north_west_takes_over(fc):
    west = np.array([_sector_hs(r, 240.0, 290.0, 0.11) for r in fc])
    northwest = np.array([_sector_hs(r, 295.0, 330.0, 0.11) for r in fc])
    hours = np.array([(r.time - NOW).total_seconds() / 3600.0 for r in fc])
    early, late = (hours > 6) & (hours < 18), (hours > 38) & (hours < 48)
    assert west[early].min() > 2.0 and northwest[early].max() < 0.5
    assert northwest[late].min() > 1.5 and west[late].max() < 1.0


def test_main_swell_veers_slightly(obs):
    # α1 at the spectral peak band (NDBC mean direction of that band)
    a1 = np.array([r.alpha1_deg[np.argmax(np.where(r.frequency < 0.1, r.density, 0))] for r in obs])
    assert np.all(np.diff(a1) >= -0.5)
    assert 1.0 < a1[-1] - a1[0] < 10.0


def test_coefficients_match_cos2s_moments_and_models_spectra(obs, scenario):
    # cos-2s: a1 = s/(s+1), a2 = s(s-1)/((s+1)(s+2)) about the mean (Longuet-Higgins et al. 1963;
    # docs/check-values.md §6, C); in the peak band at `now` the west swell holds nearly all the energy
    r = obs[-1]
    s = scenario.swells[0].spreading_s
    k = int(np.argmax(np.where(r.frequency < 0.1, r.density, 0)))
    assert r.r1[k] == pytest.approx(s / (s + 1), abs=0.005)
    assert r.r2[k] == pytest.approx(s * (s - 1) / ((s + 1) * (s + 2)), abs=0.01)
    # the direct integration agrees with models.spectra's coefficients + NDBC conversion
    dirs = np.arange(0.5, 360.0, 1.0)
    e = feed.efth(scenario, -3.0, r.frequency, dirs)
    density, r1, r2, a1, a2 = feed.directional_moments(e, dirs)
    c = spectra.fourier_to_ndbc(*spectra.coefficients_from_spectrum(e, dirs))
    ok = np.isfinite(r1)
    np.testing.assert_allclose(r1[ok], c.r1[ok], atol=1e-9)
    np.testing.assert_allclose(r2[ok], c.r2[ok], atol=1e-9)
    np.testing.assert_allclose(((a1 - c.alpha1_deg + 180) % 360 - 180)[ok], 0.0, atol=1e-6)
    np.testing.assert_allclose(((2 * (a2 - c.alpha2_deg) + 180) % 360 - 180)[ok], 0.0, atol=1e-6)  # α2 mod 180


def test_forecast_has_an_issue_time_and_directional_spectra(fc):
    issued = fc[0].issue_time
    assert issued is not None and issued <= NOW and issued.hour % 6 == 0 and issued.minute == 0
    assert all(r.issue_time == issued for r in fc)
    assert fc[-1].time >= NOW + timedelta(hours=71)
    r = fc[10]
    np.testing.assert_allclose(r.efth.sum(axis=1) * math.radians(5.0), r.density)


def test_written_text_set_reads_back(files, obs):
    assert sorted(files.realtime) == ["data_spec", "swdir", "swdir2", "swr1", "swr2"]
    first = files.realtime["data_spec"].read_text().splitlines()[1]
    assert first.startswith(f"{obs[-1].time:%Y %m %d %H %M}")  # newest first
    parsed = read_realtime_set(files.realtime.values(), station=feed.STATION_ID)
    assert not parsed.rejects
    assert len(parsed.records) == len(obs)
    for got, want in zip(parsed.records, obs, strict=True):
        assert got.time == want.time and got.has_coefficients
        np.testing.assert_allclose(got.density, want.density, atol=6e-4)
        assert hm0(got.frequency, got.density) == pytest.approx(hm0(want.frequency, want.density), abs=0.02)


def test_written_forecast_reads_back(files, fc):
    assert files.forecast is not None and files.forecast.name == f"{feed.MODEL_ID}.nc"
    parsed = read_cf_spectra(files.forecast)
    assert not parsed.rejects
    assert len(parsed.records) == len(fc)
    got, want = parsed.records[5], fc[5]
    assert got.issue_time == want.issue_time and got.time == want.time
    np.testing.assert_allclose(got.efth, want.efth, rtol=1e-5, atol=1e-9)


def test_feed_is_deterministic(tmp_path, files):
    again = feed.write_feed(tmp_path, now=NOW)
    for suffix, path in files.realtime.items():
        assert again.realtime[suffix].read_bytes() == path.read_bytes()
    same = [r.content_hash() for r in read_cf_spectra(again.forecast).records]
    assert same == [r.content_hash() for r in read_cf_spectra(files.forecast).records]
    # a rerun in the same hour leaves the files alone (stable ETag / Last-Modified for pollers)
    before = {p: p.stat().st_mtime_ns for p in tmp_path.iterdir()}
    feed.write_feed(tmp_path, now=NOW)
    assert {p: p.stat().st_mtime_ns for p in tmp_path.iterdir()} == before


def test_source_profiles(tmp_path):
    paths = feed.write_source_profiles(tmp_path, base_url="http://127.0.0.1:8765/")
    station, model, shore, wind = (tomllib.loads(p.read_text()) for p in paths)
    assert shore["format"] == "met-text" and shore["water_level_datum_m"] == 0.0
    assert wind["format"] == "cf-netcdf" and wind["urls"] == ["http://127.0.0.1:8765/demo-wind-1.nc"]
    for src in (station, model):
        for key in ("id", "name", "format", "latitude", "longitude", "depth_m", "urls", "poll_minutes"):
            assert key in src
        assert all(u.startswith("http://127.0.0.1:8765/") for u in src["urls"])
    assert station["format"] == "spectral-text-realtime" and len(station["urls"]) == 5
    assert model["format"] == "cf-netcdf" and model["urls"] == ["http://127.0.0.1:8765/demo-model-1.nc"]


def test_naive_now_is_refused():
    with pytest.raises(ValueError, match="`now`"):
        feed.observation_records(feed.default_scenario(datetime(2026, 3, 14, 9)))


def test_sea_breeze_is_offshore_in_the_morning_and_onshore_in_the_afternoon():
    # local solar time at 127.3° W is UTC − 8.49 h (15° of longitude per hour); the coast faces west (270°)
    from models.conditions import relative_wind

    morning = datetime(2031, 1, 10, 16, 30, tzinfo=UTC)  # ~08:00 local
    afternoon = datetime(2031, 1, 10, 23, 30, tzinfo=UTC)  # ~15:00 local
    (s_m, d_m), (s_a, d_a) = feed.sea_breeze(morning), feed.sea_breeze(afternoon)
    assert relative_wind([d_m, d_a], 270.0).tolist() == ["offshore", "onshore"]
    assert s_a > s_m + 3.0  # the sea breeze is the stronger wind


def test_shore_station_writes_tide_in_feet_and_the_wind_forecast_reads_back(files):
    from app.formats.cf_met import parse_cf_file
    from app.formats.ndbc_met import read_met

    met = read_met(files.directory / f"{feed.SHORE_ID}.txt")
    assert not met.rejects and len(met.records) >= 24
    levels = feed.shore_levels([r.time for r in met.records])
    np.testing.assert_allclose([r.tide_ft * 0.3048 for r in met.records], levels, atol=0.0016)  # 0.01 ft printed
    wind = parse_cf_file((files.directory / f"{feed.WIND_ID}.nc").read_bytes(), name="w.nc")
    assert not wind.rejects and {r.issue_time for r in wind.records} == {files.issue_time}
    assert [(r.wind_speed_ms, r.wind_dir_deg) for r in wind.records[:3]] == [feed.sea_breeze(r.time) for r in wind.records[:3]]
