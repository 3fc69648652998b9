"""models.offshore: one input's spectra partitioned once (the outlook's first split piece).

Outside values: Hm0 = 4√m0 (the spectral significant height, WMO Guide to Wave Analysis and
Forecasting, WMO-No. 702, §1.3, from memory); deep-water wave power P = ρ g² Hm0² Te / (64π)
(Holthuijsen 2007, Waves in Oceanic and Coastal Waters, eq. 7.3.17, from memory), about
0.49 Hm0² Te kW/m for sea water (common practice).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest

from models.offshore import MAX_TRAINS, prepare_offshore
from models.spectra import cos2s, frequency_spectrum, jonswap

F = np.linspace(0.04, 0.3, 40)
D = np.arange(0.0, 360.0, 5.0)
T0 = datetime(2031, 1, 1, tzinfo=UTC)


def _two_swells(hs1: float = 1.5, hs2: float = 0.6) -> np.ndarray:
    return (
        jonswap(F, hs=hs1, tp=13.0)[:, None] * cos2s(D, mean_dir_deg=270.0, s=20.0)[None, :]
        + jonswap(F, hs=hs2, tp=6.0)[:, None] * cos2s(D, mean_dir_deg=200.0, s=8.0)[None, :]
    )


def _batch(e: np.ndarray, **kw):  # type: ignore[no-untyped-def]
    times = [T0 + timedelta(hours=h) for h in range(e.shape[0])]
    return prepare_offshore(times, F, D, e, source="s", kind="model-forecast", **kw)


def test_stack_holds_the_whole_spectrum_then_disjoint_trains() -> None:
    e = np.stack([_two_swells(), _two_swells(2.0, 0.3)])
    b = _batch(e)
    nt, nk, nf, nd = b.stack.shape
    assert (nt, nf, nd) == e.shape and 2 <= nk <= 1 + MAX_TRAINS
    np.testing.assert_array_equal(b.stack[:, 0], e)
    # each cell belongs to at most one train: the trains add up to no more than the whole
    assert np.all(b.stack[:, 1:].sum(axis=1) <= e + 1e-15)
    assert np.all((b.stack[:, 1:] > 0).sum(axis=1) <= 1)


def test_summary_values_against_their_definitions() -> None:
    b = _batch(_two_swells()[None])
    m0 = np.sum(frequency_spectrum(b.efth, D)[0] * np.gradient(F))
    assert b.hm0[0] == pytest.approx(4.0 * np.sqrt(m0), rel=0.02)  # Hm0 = 4√m0 (WMO-No. 702)
    assert b.hm0[0] == pytest.approx(np.hypot(1.5, 0.6), rel=0.05)  # energies add: Hm0² = Σ Hs²
    assert b.tp[0] == pytest.approx(13.0, rel=0.05)  # the longer swell holds the peak
    assert b.peak_dir[0] == pytest.approx(270.0, abs=5.0)  # train 0 is the main swell
    # P ≈ 0.49 Hm0² Te kW/m (common practice); Te lies between the two swells' periods
    te = b.power_kw_m[0] / (0.49 * b.hm0[0] ** 2)
    assert 6.0 < te < 13.0


def test_an_empty_step_has_no_period_and_no_power() -> None:
    b = _batch(np.stack([_two_swells(), np.zeros((F.size, D.size))]))
    assert np.isnan(b.tp[1]) and np.isnan(b.peak_dir[1])
    assert b.hm0[1] == 0.0 and b.power_kw_m[1] == 0.0
    assert b.trains[1] == ()


def test_subset_is_the_batch_of_those_steps() -> None:
    e = np.stack([_two_swells(1.0 + 0.2 * k) for k in range(4)])
    b = _batch(e, observed_at=[T0] * 4, coverage=[0.9, 0.95, 1.0, 0.99])
    s = b.subset([3, 1])
    assert s.times == [b.times[3], b.times[1]]
    np.testing.assert_array_equal(s.stack, b.stack[[3, 1]])
    np.testing.assert_array_equal(s.hm0, b.hm0[[3, 1]])
    assert s.coverage == [0.99, 0.95] and s.trains == (b.trains[3], b.trains[1])
    assert (s.source, s.kind, s.issued) == (b.source, b.kind, b.issued)


def test_max_trains_caps_the_stack() -> None:
    assert _batch(_two_swells()[None], max_trains=1).stack.shape[1] == 2
