"""models.surf: height classes shoaled to breaking at every break point (the outlook's breaking piece).

Outside values: for Rayleigh-distributed heights (Longuet-Higgins 1952, J. Mar. Res. 11) with
Hrms = Hm0/√2, the mean height is (√π/2) Hrms = 0.6267 Hm0 (exact, N = 1 in the expected-maximum
integral) and H1/10 = 1.80 Hrms = 1.273 Hm0 (the "1.27" of the sets class; table values from
memory). Breaking itself is `models.breaking.shoal_to_breaking` (Weggel 1972), checked against its
sources in tests/models/test_breaking.py; here each class must be exactly that call.
"""

from __future__ import annotations

import importlib.util
import math
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest

from models.breaking import shoal_to_breaking, wave_power
from models.errors import InvalidInput
from models.hazard import rip_current_likelihood
from models.offshore import prepare_offshore
from models.spectra import cos2s, jonswap
from models.statistics import expected_max_height_ratio
from models.surf import MIN_HEIGHT_M, SETS_RATIO, PointSetup, compute_spots, largest_ratio

_spec = importlib.util.spec_from_file_location("_surf_tables", Path(__file__).with_name("_surf_tables.py"))
tb = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_surf_tables", tb)
_spec.loader.exec_module(tb)

T0 = datetime(2031, 1, 1, tzinfo=UTC)


def _batch(hs: float = 1.0, tp: float = 11.0, from_deg: float = 270.0, nt: int = 2):  # type: ignore[no-untyped-def]
    e = jonswap(tb.FREQ, hs=hs, tp=tp)[:, None] * cos2s(tb.DIRS, mean_dir_deg=from_deg, s=40.0)[None, :]
    e = np.stack([e * (1.0 + 0.5 * k) for k in range(nt)])
    return prepare_offshore([T0 + timedelta(hours=k) for k in range(nt)], tb.FREQ, tb.DIRS, e, source="s",
                            kind="model-forecast")  # fmt: skip


def _point(name: str = "p", y: float = 0.0, **kw) -> PointSetup:  # type: ignore[no-untyped-def]
    return PointSetup(name, 0.0, y, tb.table(**kw), 2.0, 0.02, 270.0)  # a west-facing straight beach


def test_rayleigh_ratios() -> None:
    assert SETS_RATIO == pytest.approx(1.273, abs=1e-3)  # H1/10 / Hm0 (Longuet-Higgins 1952)
    assert float(largest_ratio(np.array([1.0]))[0]) == pytest.approx(math.sqrt(math.pi) / 2 / math.sqrt(2), rel=1e-9)
    n = np.array([[360.0, 300.0], [360.0, 1.0]])
    np.testing.assert_allclose(largest_ratio(n), expected_max_height_ratio(n, reference="hm0"), rtol=1e-12)


def test_each_class_is_one_shoal_to_breaking_call_from_the_reference_depth() -> None:
    b = _batch()
    arr = compute_spots(b, [[_point()]], water_level_m=0.5)[0]
    hs, tp, tm02 = arr.near_hs[0, :, 0], arr.near_tp[0, :, 0], arr.near_tm02[0]
    n = np.maximum(1.0, np.round(3600.0 / tm02))
    for cls, h in enumerate([hs, hs * SETS_RATIO, hs * largest_ratio(n)]):
        ref = shoal_to_breaking(h, tp, 0.0, 10.0 + 0.5, slope=0.02)  # normal incidence on the beach
        np.testing.assert_allclose(arr.hb[0, :, cls], ref.height, rtol=1e-6)
        np.testing.assert_allclose(arr.db[0, :, cls], ref.depth, rtol=1e-6)
        np.testing.assert_allclose(arr.kg[0, :, cls], ref.komar_gaudiano_height, rtol=1e-6)
    assert np.all(arr.hb[0, :, 0] < arr.hb[0, :, 1]) and np.all(arr.hb[0, :, 1] < arr.hb[0, :, 2])
    np.testing.assert_array_equal(arr.water_level, [0.5, 0.5])


def test_many_spots_at_once_equal_each_alone() -> None:
    b = _batch(from_deg=255.0)
    spots = [[_point("a")], [_point("b", k=0.6), _point("c", y=200.0, k=0.9)], [_point("d", blocked=True)]]
    together = compute_spots(b, spots)
    for pts, got in zip(spots, together, strict=True):
        alone = compute_spots(b, [pts])[0]
        for name in ("near_hs", "hb", "db", "angle_b", "iribarren", "kg"):
            np.testing.assert_allclose(getattr(got, name), getattr(alone, name), rtol=1e-12, equal_nan=True)
        np.testing.assert_array_equal(got.breaker_type, alone.breaker_type)


def test_nothing_arriving_is_nan_not_zero_and_oblique_waves_break_at_an_angle() -> None:
    b = _batch(from_deg=250.0)
    blocked, open_ = compute_spots(b, [[_point(blocked=True)], [_point()]])
    assert np.all(np.isnan(blocked.hb)) and np.all(blocked.breaker_type == "")
    assert np.all(open_.near_hs[0, :, 0] >= MIN_HEIGHT_M)
    # from 250° on a beach whose seaward normal is 270°: the crest turns toward the normal (Snell)
    assert np.all((open_.angle_b[0, :, 0] < 0) & (open_.angle_b[0, :, 0] > -20.0))


def test_a_non_finite_water_level_is_refused() -> None:
    with pytest.raises(InvalidInput, match="water_level_m"):
        compute_spots(_batch(), [[_point()]], water_level_m=np.array([0.0, np.nan]))


def test_hazard_inputs_are_the_power_and_rip_formulas_at_each_point() -> None:
    """The per-point hazard inputs `compute_spots` fills equal `wave_power` (spectral, E Cg with
    E = ρ g Hm0²/16, at the reference depth + water level) and `rip_current_likelihood` applied to
    that point's nearshore values (the reference is those functions, tested in test_breaking.py and
    test_hazard.py)."""
    b = _batch(from_deg=255.0)
    wl = np.array([0.3, -0.2])
    arr = compute_spots(b, [[_point("a"), _point("b", y=100.0, k=0.7)], [_point("c", blocked=True)]],
                        water_level_m=wl)  # fmt: skip
    for got in arr:
        hs, tp, dr = got.near_hs[..., 0], got.near_tp[..., 0], got.near_dir[..., 0]
        for i in range(hs.shape[0]):
            ok = np.isfinite(tp[i]) & (hs[i] > 0)
            want = np.zeros(hs.shape[1])
            if ok.any():
                want[ok] = wave_power(hs[i][ok], tp[i][ok], depth=10.0 + wl[ok], kind="spectral") / 1000.0
            np.testing.assert_allclose(got.near_power_kw_m[i], want, rtol=1e-12)
            theta = np.where(np.isfinite(dr[i]), dr[i], 270.0) - 270.0
            np.testing.assert_allclose(got.rip[i], rip_current_likelihood(hs[i], theta, wl - wl.mean()), rtol=1e-12)
    assert np.all(arr[1].near_power_kw_m == 0.0) and np.all(arr[1].rip == 0.0)  # nothing arrives


def test_wind_moves_only_the_breaker_type_in_douglass_direction() -> None:
    # Douglass (1990): onshore wind spills, offshore wind plunges (direction tested; the size is ours,
    # models/breaking.py); heights and depths stay the still-air ones; no wind -> exactly as before
    rank = {"": -1, "spilling": 0, "plunging": 1, "collapsing": 2}
    b = _batch(hs=0.8, tp=9.0, nt=4)
    # slopes putting ξb near the still-air spilling/plunging boundary 0.4 (Battjes 1974)
    pts = [PointSetup(n, 0.0, y, tb.table(), 2.0, m, 270.0) for n, y, m in (("a", 0.0, 0.03), ("b", 300.0, 0.045))]
    still = compute_spots(b, [pts])[0]
    # west-facing beach (270): wind from 270 onshore, from 90 offshore; NaN: no wind at that step
    speed, frm = np.array([12.0, 12.0, np.nan, 6.0]), np.array([270.0, 90.0, 270.0, 0.0])
    windy = compute_spots(b, [pts], wind_speed_m_s=speed, wind_from_deg=frm)[0]
    for name in ("hb", "db", "iribarren", "kg"):
        np.testing.assert_array_equal(getattr(windy, name), getattr(still, name))
    np.testing.assert_array_equal(windy.breaker_type_still, still.breaker_type)
    r = np.vectorize(rank.get)
    assert np.all(r(windy.breaker_type[:, 0]) <= r(still.breaker_type[:, 0]))  # onshore
    assert np.all(r(windy.breaker_type[:, 1]) >= r(still.breaker_type[:, 1]))  # offshore
    np.testing.assert_array_equal(windy.breaker_type[:, 2], still.breaker_type[:, 2])  # no wind
    assert (windy.breaker_type[:, 0] != still.breaker_type[:, 0]).any()  # some plunging class now spills
    assert (windy.breaker_type[:, 1] != still.breaker_type[:, 1]).any()  # some spilling class now plunges
    np.testing.assert_allclose(windy.wind_onshore_m_s[:, :2], [[12.0, -12.0]] * 2, atol=1e-9)
    assert abs(windy.wind_onshore_m_s[0, 3]) < 1e-9  # from the north: along the shore, no shift
    assert np.isnan(windy.wind_onshore_m_s[:, 2]).all() and np.isnan(windy.spilling_limit[:, 2]).all()
    assert still.wind_onshore_m_s is None and still.breaker_type_still is None
    with pytest.raises(InvalidInput, match="go together"):
        compute_spots(b, [pts], wind_speed_m_s=speed)
    with pytest.raises(InvalidInput, match="shape"):
        compute_spots(b, [pts], wind_speed_m_s=speed[:2], wind_from_deg=frm[:2])
