"""Directional estimate from printed buoy coefficients (models.directional).

Sources of the checks:
- cos-2s moments r1 = s/(s+1), r2 = s(s−1)/((s+1)(s+2)) (Longuet-Higgins, Cartwright & Smith 1963);
  here taken from a fine numerical integration of the cos-2s (models.spectra.cos2s, exact G(s)).
- mean direction atan2(b1, a1) and circular spread σ = √(2(1 − r1)) (Kuik, van Vledder & Holthuijsen 1988).
- a set (1, c1, c2) belongs to a distribution on the circle iff its Toeplitz matrix is positive
  semi-definite (Carathéodory–Toeplitz; checked here with numpy's eigenvalues, not our formula).
- the maximum entropy estimate reproduces the four coefficients (Lygre & Krogstad 1986).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models import directional as dr
from models import spectra as sp
from models.errors import InvalidInput
from models.partition import partition_spectrum

FINE = np.arange(0.0, 360.0, 0.25)
D5 = np.arange(0.0, 360.0, 5.0)
F = np.linspace(0.03, 0.4, 75)


def printed(dist_fine: np.ndarray):  # type: ignore[no-untyped-def]
    """NDBC-form coefficients of D on FINE, printed as the agency text files do: r to two decimals,
    angles to whole degrees."""
    n = sp.fourier_to_ndbc(*sp.coefficients_from_spectrum(dist_fine, FINE))
    return np.round(n.r1, 2), np.round(n.r2, 2), np.round(n.alpha1_deg) % 360.0, np.round(n.alpha2_deg) % 360.0


def estimate(dist_fine: np.ndarray, f=None):  # type: ignore[no-untyped-def]
    r1, r2, a1, a2 = printed(np.atleast_2d(dist_fine))
    f = np.linspace(0.05, 0.3, r1.size) if f is None else f
    return dr.estimate_directional(f, D5, r1=r1, r2=r2, alpha1_deg=a1, alpha2_deg=a2)


def toeplitz_min_eig(r1, r2, a1, a2) -> float:  # type: ignore[no-untyped-def]
    c = sp.ndbc_to_fourier(r1, r2, a1, a2)
    c1, c2 = complex(c.a1, c.b1), complex(c.a2, c.b2)
    t = np.array([[1, np.conj(c1), np.conj(c2)], [c1, 1, np.conj(c1)], [c2, c1, 1]])
    return float(np.linalg.eigvalsh(t).min())


@pytest.mark.parametrize("s", [2, 5, 10, 20, 40, 75, 150])
def test_cos2s_printed_to_two_decimals_keeps_direction_spread_and_one_peak(s: int) -> None:
    mean = 263.0
    est = estimate(sp.cos2s(FINE, mean_dir_deg=mean, s=float(s)))
    assert est.method.tolist() == [dr.COS2S]
    back = sp.coefficients_from_spectrum(est.D, D5)
    # Kuik et al. (1988) mean direction and spread of the estimate vs the true cos-2s (LH, C & S 1963)
    assert float(sp.mean_direction(back.a1, back.b1)[0]) == pytest.approx(mean, abs=2.0)
    true_spread = math.degrees(math.sqrt(2.0 * (1.0 - s / (s + 1.0))))
    got = float(sp.directional_spread(back.a1, back.b1)[0])
    assert abs(got - true_spread) <= max(2.0, 0.1 * true_spread)
    assert dr.count_peaks(est.D[0]) == 1
    # and as a whole spectrum (JONSWAP × the estimate): one swell train
    efth = sp.jonswap(F, hs=2.0, tp=12.0)[:, None] * est.D[0][None, :]
    assert len(partition_spectrum(F, D5, efth).trains) == 1


def test_a_narrow_swell_printed_outside_the_admissible_region_is_projected_not_broadened() -> None:
    # the example: r1 0.99, r2 0.95 (cos-2s s = 75 printed, Goda's swell s_max): 2·0.99² − 1 = 0.9602
    # > 0.95, no distribution has these values (Toeplitz matrix indefinite)
    assert toeplitz_min_eig(0.99, 0.95, 270.0, 270.0) < 0
    r1, r2, a2, projected, within = dr.project_admissible(np.array([0.99]), np.array([0.95]), np.array([270.0]),
                                                          np.array([270.0]))  # fmt: skip
    assert projected.tolist() == [True] and within.tolist() == [True]
    assert abs(r1[0] - 0.99) <= 0.005 and abs(r2[0] - 0.95) <= 0.005
    assert toeplitz_min_eig(r1[0], r2[0], 270.0, a2[0]) >= 0
    est = dr.estimate_directional(np.array([0.07]), D5, r1=[0.99], r2=[0.95], alpha1_deg=[270.0], alpha2_deg=[270.0])
    back = sp.coefficients_from_spectrum(est.D, D5)
    # spread of s = 75 is √(2/76) = 9.29° (Kuik et al. 1988); the old fallback series gave ~47°
    assert float(sp.directional_spread(back.a1, back.b1)[0]) == pytest.approx(9.29, abs=1.0)
    assert est.projected.tolist() == [True]


def test_two_peaks_far_apart_use_maximum_entropy_which_keeps_the_moments() -> None:
    # two cos-2s (s = 20) peaks 120° apart in one band: r2 far below every single peak's (box below
    # the unimodal floor), so MEM (Lygre & Krogstad 1986): two peaks, moments of the printed set kept
    pair = 0.5 * (sp.cos2s(FINE, mean_dir_deg=210.0, s=20.0) + sp.cos2s(FINE, mean_dir_deg=330.0, s=20.0))
    r1, r2, a1, a2 = printed(pair[None])
    est = dr.estimate_directional(np.array([0.1]), D5, r1=r1, r2=r2, alpha1_deg=a1, alpha2_deg=a2)
    assert est.method.tolist() == [dr.MEM] and est.label == dr.MEM
    assert dr.count_peaks(est.D[0]) == 2
    back = sp.fourier_to_ndbc(*sp.coefficients_from_spectrum(est.D, D5))
    np.testing.assert_allclose(back.r1, r1, atol=0.006)
    np.testing.assert_allclose(back.r2, r2, atol=0.006)


def test_a_uniform_arc_is_never_called_two_peaks() -> None:
    # the extreme unimodal shapes (uniform arcs, which any symmetric unimodal law mixes: Khintchine)
    # lie on the floor; printed, they stay within it
    for w in np.radians([10.0, 30.0, 60.0, 90.0, 150.0]):
        arc = np.where(np.abs((FINE - 200.0 + 180.0) % 360.0 - 180.0) <= np.degrees(w), 1.0, 0.0)
        r1, r2, a1, a2 = printed(arc[None] / (arc.sum() * 0.25 * np.pi / 180.0))
        assert not dr.shows_two_peaks(r1, r2, a1, a2)[0]


@settings(max_examples=60, deadline=None)
@given(s=st.floats(0.5, 400.0), mean=st.floats(0.0, 359.0), s2=st.floats(0.5, 400.0), w=st.floats(0.0, 1.0))
def test_unimodal_symmetric_shapes_are_fitted_not_split(s: float, mean: float, s2: float, w: float) -> None:
    # a mixture of two cos-2s about the same direction is symmetric and unimodal: never MEM, one peak
    dist = w * sp.cos2s(FINE, mean_dir_deg=mean, s=s) + (1 - w) * sp.cos2s(FINE, mean_dir_deg=mean, s=s2)
    est = estimate(dist)
    assert est.method.tolist() == [dr.COS2S]
    assert dr.count_peaks(est.D[0]) == 1


@settings(max_examples=80, deadline=None)
@given(r1=st.floats(0.0, 1.0), r2=st.floats(0.0, 1.0), a1=st.floats(0.0, 359.0), da=st.floats(-90.0, 90.0))
def test_any_printed_set_gives_a_normalised_non_negative_estimate(r1: float, r2: float, a1: float, da: float) -> None:
    r1, r2 = round(r1, 2), round(r2, 2)
    a2 = (round(a1 + da)) % 360.0
    est = dr.estimate_directional(np.array([0.1]), D5, r1=[r1], r2=[r2], alpha1_deg=[round(a1)], alpha2_deg=[a2])
    assert np.all(np.isfinite(est.D)) and np.all(est.D >= 0)
    assert float(np.sum(est.D * sp.direction_bin_widths(D5))) == pytest.approx(1.0, rel=1e-12)
    p1, p2, pa2, _, _ = dr.project_admissible(np.array([r1]), np.array([r2]), np.array([round(a1)]), np.array([a2]))
    assert toeplitz_min_eig(p1[0], p2[0], round(a1), pa2[0]) >= -1e-9


def test_missing_bands_are_interpolated_from_neighbours() -> None:
    f = np.array([0.06, 0.08, 0.10, 0.12])
    r1 = np.array([0.80, np.nan, 0.90, 0.85])
    r2 = np.array([0.50, 0.60, 0.70, np.nan])
    a1 = np.array([350.0, 0.0, 10.0, 20.0])
    a2 = np.array([350.0, 0.0, 10.0, 20.0])
    R1, R2, A1, A2, interp = dr.fill_missing(f, r1, r2, a1, a2)
    assert interp.tolist() == [False, True, False, True]
    # linear in frequency between the complete neighbours; the shorter arc across north
    assert R1[1] == pytest.approx(0.85) and R2[1] == pytest.approx(0.60)
    assert A1[1] == pytest.approx(0.0, abs=1e-9) or A1[1] == pytest.approx(360.0, abs=1e-9)
    assert R2[3] == pytest.approx(0.70)  # an end band copies its neighbour
    est = dr.estimate_directional(f, D5, r1=r1, r2=r2, alpha1_deg=a1, alpha2_deg=a2)
    assert est.interpolated.tolist() == [False, True, False, True]
    with pytest.raises(InvalidInput, match="no band has all four"):
        dr.estimate_directional(f[:2], D5, r1=[np.nan] * 2, r2=[0.5] * 2, alpha1_deg=[1.0] * 2, alpha2_deg=[1.0] * 2)


def test_bad_coefficients_are_refused_naming_the_field() -> None:
    with pytest.raises(InvalidInput, match="`r2`"):
        dr.estimate_directional(np.array([0.1]), D5, r1=[0.5], r2=[1.4], alpha1_deg=[0.0], alpha2_deg=[0.0])
    with pytest.raises(InvalidInput, match="`alpha1_deg`"):
        dr.estimate_directional(np.array([0.1, 0.2]), D5, r1=[0.5, 0.5], r2=[0.2, 0.2], alpha1_deg=[0.0],
                                alpha2_deg=[0.0, 0.0])  # fmt: skip


def test_count_peaks_ignores_round_off_bumps() -> None:
    # flat minima of an estimate carry ~1e-9 bumps: not peaks; a real second lobe is
    x = np.radians(D5)
    one = np.exp(4 * np.cos(x)) + np.where(np.arange(D5.size) % 2 == 0, 1e-9, 0.0)
    assert dr.count_peaks(one) == 1
    assert dr.count_peaks(np.exp(4 * np.cos(x)) + 0.5 * np.exp(4 * np.cos(x - np.pi))) == 2
    # MEM of a unimodal cos-2s (s = 10) splits it (Lygre & Krogstad 1986; docs/check-values.md #23)
    c = sp.fourier_to_ndbc(10 / 11, 0.0, 10 * 9 / (11 * 12), 0.0)
    mem = sp._mem(np.radians(np.arange(0.0, 360.0, 0.5)), sp.ndbc_to_fourier(*(np.atleast_1d(v) for v in c)))
    assert dr.count_peaks(mem[0]) == 2
