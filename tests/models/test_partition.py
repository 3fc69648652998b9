"""Swell-train partitioning: two synthetic trains recovered, merging, coverage and energy invariants."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from models.errors import InvalidInput
from models.partition import partition_series, partition_spectrum, watershed
from models.spectra import bin_widths, cos2s, direction_bin_widths, jonswap

F = np.linspace(0.03, 0.4, 75)
D = np.arange(0.0, 360.0, 5.0)
W = bin_widths(F)[:, None] * direction_bin_widths(D)[None, :]


def _train(hs, tp, mean_dir, s, gamma=3.3):
    # JONSWAP (Hasselmann et al. 1973) × cos-2s (Longuet-Higgins et al. 1963), models.spectra
    return jonswap(F, hs=hs, tp=tp, gamma=gamma)[:, None] * cos2s(D, mean_dir_deg=mean_dir, s=s)[None, :]


def _hm0(e):
    return 4.0 * np.sqrt((e * W).sum())


def test_two_trains_recovered_with_height_period_direction():
    swell = _train(2.0, 14.0, 250.0, 25)
    sea = _train(1.2, 7.0, 180.0, 8)
    e = swell + sea
    r = partition_spectrum(F, D, e)
    assert len(r.trains) == 2
    a, b = r.trains
    # energies sum exactly to the total (each cell in exactly one train)
    assert a.m0_m2 + b.m0_m2 == pytest.approx((e * W).sum(), rel=1e-12)
    assert a.energy_fraction + b.energy_fraction == pytest.approx(1.0, rel=1e-12)
    # the swell (more energy) is train 0; heights within 1 % (the trains overlap a little:
    # measured 0.2 % and 0.5 %)
    assert a.hm0_m == pytest.approx(_hm0(swell), rel=0.01)
    assert b.hm0_m == pytest.approx(_hm0(sea), rel=0.01)
    # peak period to the nearest grid frequency; peak direction to the grid
    assert abs(1 / a.tp_s - 1 / 14) <= F[1] - F[0]
    assert abs(1 / b.tp_s - 1 / 7) <= F[1] - F[0]
    assert a.peak_direction_deg == pytest.approx(250.0, abs=2.5)
    assert b.peak_direction_deg == pytest.approx(180.0, abs=2.5)
    assert a.mean_direction_deg == pytest.approx(250.0, abs=2.0)
    # Kuik spread of cos-2s s = 25 is 15.89° (docs/check-values.md §6, computed); truncation narrows it slightly
    assert a.spread_deg == pytest.approx(15.89, abs=1.5)
    # the label grid marks the swell peak cell as train 0
    i, j = np.unravel_index(np.argmax(swell), swell.shape)
    assert r.labels[i, j] == 0


def test_single_train_is_one_partition_and_exact():
    e = _train(1.5, 11.0, 300.0, 15)
    r = partition_spectrum(F, D, e)
    assert len(r.trains) == 1 and np.all(r.labels == 0)
    assert r.trains[0].hm0_m == pytest.approx(1.5, rel=1e-9)  # jonswap is scaled to hs on this grid
    assert r.trains[0].spread_deg == pytest.approx(20.26, abs=0.1)  # s = 15 -> 20.26°, docs/check-values.md §6


def test_close_peaks_merge_by_kappa():
    # two narrow trains 30° apart at one period: distinct watershed peaks
    e = _train(1.0, 12.0, 200.0, 60) + _train(1.0, 12.0, 230.0, 60)
    assert len(partition_spectrum(F, D, e, kappa=0.0).trains) == 2
    assert len(partition_spectrum(F, D, e, kappa=50.0).trains) == 1
    # the default (0.4, Hanson & Phillips 2001, from memory) keeps well separated trains apart
    assert len(partition_spectrum(F, D, e).trains) == 2


def test_small_partition_merges_into_neighbour():
    e = _train(2.0, 13.0, 250.0, 20) + _train(0.25, 6.0, 100.0, 20)  # ~1.5 % of the energy
    kept = partition_spectrum(F, D, e, min_energy_fraction=0.0, min_peak_fraction=0.0, kappa=0.0)
    merged = partition_spectrum(F, D, e, min_energy_fraction=0.05)
    assert len(kept.trains) == 2 and len(merged.trains) == 1
    assert merged.trains[0].m0_m2 == pytest.approx((e * W).sum(), rel=1e-12)
    # a noise floor above the small peak merges it too
    small_peak = _train(0.25, 6.0, 100.0, 20).max()
    r = partition_spectrum(F, D, e, min_energy_fraction=0.0, min_peak_fraction=0.0, noise_floor=2 * small_peak)
    assert len(r.trains) == 1


def test_periodic_direction_joins_across_north():
    e = _train(1.0, 12.0, 0.0, 20)  # peak at 0°, spread on both sides of north
    r = partition_spectrum(F, D, e, min_energy_fraction=0.0, min_peak_fraction=0.0, kappa=0.0)
    assert len(r.trains) == 1
    assert r.trains[0].mean_direction_deg == pytest.approx(0.0, abs=1e-6) or r.trains[0].mean_direction_deg == pytest.approx(360.0, abs=1e-6)


def test_unsorted_directions_give_same_labels():
    e = _train(2.0, 14.0, 250.0, 25) + _train(1.2, 7.0, 180.0, 8)
    perm = np.random.default_rng(1).permutation(D.size)
    r0 = partition_spectrum(F, D, e)
    r1 = partition_spectrum(F, D[perm], e[:, perm])
    assert np.array_equal(r1.labels, r0.labels[:, perm])
    assert r1.trains[0].hm0_m == pytest.approx(r0.trains[0].hm0_m, rel=1e-12)


def test_wind_sea_flag():
    # 7 s peak: deep-water c = g T / 2π = 10.9 m/s; with wind 10 m/s from the train's direction,
    # 1.5 U = 15 > c -> wind sea (Hanson & Phillips 2001 factor 1.5, from memory); the 14 s swell
    # (c = 21.8 m/s) is not; with the wind from the opposite side nothing is wind sea.
    e = _train(2.0, 14.0, 250.0, 25) + _train(1.2, 7.0, 180.0, 8)
    r = partition_spectrum(F, D, e, wind_speed_m_s=10.0, wind_from_deg=180.0)
    assert [t.wind_sea for t in r.trains] == [False, True]
    r = partition_spectrum(F, D, e, wind_speed_m_s=10.0, wind_from_deg=0.0)
    assert [t.wind_sea for t in r.trains] == [False, False]
    assert partition_spectrum(F, D, e).trains[0].wind_sea is None


def test_series_matches_single_steps():
    a = _train(2.0, 14.0, 250.0, 25) + _train(1.2, 7.0, 180.0, 8)
    b = _train(1.0, 10.0, 300.0, 10)
    s = partition_series(F, D, np.stack([a, b, a]))
    assert [len(t) for t in s.trains] == [2, 1, 2]
    assert np.array_equal(s.labels[0], partition_spectrum(F, D, a).labels)


def test_watershed_points_to_local_maxima():
    rng = np.random.default_rng(7)
    g = rng.random((3, 6, 8))
    roots = watershed(g)
    for b in range(3):
        v = g[b].ravel()
        for r in np.unique(roots[b]):
            i, j = divmod(int(r), 8)
            nb = [g[b, ii, (j + dj) % 8] for ii in (i - 1, i, i + 1) if 0 <= ii < 6 for dj in (-1, 0, 1)]
            assert v[r] == max(nb)  # every end point is a local maximum (periodic in direction)


@settings(max_examples=40, deadline=None)
@given(
    hnp.arrays(np.float64, st.tuples(st.integers(2, 8), st.integers(3, 12)),
               elements=st.floats(0, 10, allow_subnormal=False)),
    st.floats(0, 0.3), st.floats(0, 2),
)
def test_partitions_cover_the_spectrum_and_energies_sum(e, min_frac, kappa):
    nf, nd = e.shape
    f = np.linspace(0.05, 0.3, nf)
    d = np.arange(nd) * 360.0 / nd
    r = partition_spectrum(f, d, e, min_energy_fraction=min_frac, kappa=kappa)
    w = bin_widths(f)[:, None] * direction_bin_widths(d)[None, :]
    n = len(r.trains)
    assert set(np.unique(r.labels).tolist()) == set(range(n))  # every cell labelled, labels 0..n-1
    assert sum(t.m0_m2 for t in r.trains) == pytest.approx((e * w).sum(), rel=1e-9, abs=1e-300)
    assert all(r.trains[k].m0_m2 >= r.trains[k + 1].m0_m2 for k in range(n - 1))
    for t in r.trains:
        assert t.m0_m2 == pytest.approx((e * w)[r.labels == t.label].sum(), rel=1e-12, abs=1e-300)


def test_validation_names_argument():
    e = _train(1.0, 10.0, 0.0, 10)
    with pytest.raises(InvalidInput, match="`efth`"):
        partition_spectrum(F, D, e[:, :-1])
    bad = e.copy()
    bad[3, 4] = -1.0
    with pytest.raises(InvalidInput, match=r"`efth`.*\(0, 3, 4\)"):
        partition_spectrum(F, D, bad)
    with pytest.raises(InvalidInput, match="`frequency_hz`"):
        partition_spectrum(F[::-1], D, e)
    with pytest.raises(InvalidInput, match="give both"):
        partition_spectrum(F, D, e, wind_speed_m_s=5.0)
    with pytest.raises(InvalidInput, match="`kappa`"):
        partition_spectrum(F, D, e, kappa=-1.0)


# --------------------------------------------------------------------------- from printed buoy coefficients


def _from_printed(e_fine, d_fine):  # type: ignore[no-untyped-def]
    """E(f, θ) on D from a spectrum's NDBC coefficients printed to two decimals / whole degrees
    (models.directional.estimate_directional)."""
    from models.directional import estimate_directional
    from models.spectra import coefficients_from_spectrum, fourier_to_ndbc, frequency_spectrum

    n = fourier_to_ndbc(*coefficients_from_spectrum(e_fine, d_fine))
    est = estimate_directional(F, D, r1=np.round(n.r1, 2), r2=np.round(n.r2, 2),
                               alpha1_deg=np.round(n.alpha1_deg), alpha2_deg=np.round(n.alpha2_deg))  # fmt: skip
    return frequency_spectrum(e_fine, d_fine)[:, None] * est.D


def test_a_unimodal_swell_from_buoy_coefficients_is_one_train():
    # the case: 2 m, 12 s from 270° with s = 10; maximum entropy split it into two trains
    # near 245° and 295° (Lygre & Krogstad 1986 lobes at ±23.5°, docs/check-values.md #23)
    d_fine = np.arange(0.0, 360.0, 0.5)
    e_fine = jonswap(F, hs=2.0, tp=12.0)[:, None] * cos2s(d_fine, mean_dir_deg=270.0, s=10.0)[None, :]
    r = partition_spectrum(F, D, _from_printed(e_fine, d_fine))
    assert len(r.trains) == 1
    t = r.trains[0]
    assert t.hm0_m == pytest.approx(2.0, rel=0.01) and t.mean_direction_deg == pytest.approx(270.0, abs=1.0)
    assert t.spread_deg == pytest.approx(24.43, abs=2.0)  # Kuik et al. 1988: √(2/11) rad


@pytest.mark.parametrize("s", [20, 40, 75])
def test_two_swells_60_degrees_apart_stay_two_trains(s):
    # given E(f, θ): two swells of one period 60° apart (each s >= 20: two distinct peaks)
    e = _train(2.0, 12.0, 240.0, s) + _train(1.5, 12.0, 300.0, s)
    r = partition_spectrum(F, D, e)
    assert len(r.trains) == 2
    assert sorted(round(t.mean_direction_deg) for t in r.trains) == pytest.approx([240, 300], abs=3)


def test_two_swells_60_degrees_apart_from_buoy_coefficients_stay_two_trains():
    # printed coefficients describe one band at a time: swells of different periods 60° apart stay two
    # trains (two swells of one period 60° apart are one lobe to four printed numbers; docs/directional.md)
    d_fine = np.arange(0.0, 360.0, 0.5)
    e_fine = (jonswap(F, hs=2.0, tp=14.0)[:, None] * cos2s(d_fine, mean_dir_deg=240.0, s=20.0)[None, :]
              + jonswap(F, hs=1.5, tp=9.0)[:, None] * cos2s(d_fine, mean_dir_deg=300.0, s=20.0)[None, :])  # fmt: skip
    r = partition_spectrum(F, D, _from_printed(e_fine, d_fine))
    assert len(r.trains) == 2
    a, b = r.trains
    assert abs(1 / a.tp_s - 1 / 14) <= 2 * (F[1] - F[0]) and abs(1 / b.tp_s - 1 / 9) <= 2 * (F[1] - F[0])
    assert a.mean_direction_deg == pytest.approx(240.0, abs=3.0)
    assert b.mean_direction_deg == pytest.approx(300.0, abs=15.0)  # the overlap bands pull it toward the first
