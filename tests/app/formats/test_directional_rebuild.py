"""A directional spectrum rebuilt from parsed buoy coefficients integrates to the density per band and
gives the coefficients back (issue 5, Done when).

Chain: a known E(f, A) (cos-2s spreading about a different mean per band) -> its first-five
coefficients, computed here from the definitions -> the realtime text set written by
`write_realtime_set` -> `parse_realtime_set` -> `directional_spectrum_from_coefficients` with each
method -> integrals and coefficients of the result, computed here again from the definitions.

Sources of the expectations:
- Coefficients (Longuet-Higgins, Cartwright & Smith 1963): with D(θ) = E(f, θ) / ∫E dθ,
  a_n = ∫ D cos nθ dθ, b_n = ∫ D sin nθ dθ, θ the math angle of propagation (TOWARD, counter-clockwise
  from east); r1 = √(a1² + b1²), r2 = √(a2² + b2²). For cos-2s spreading r1 = s/(s+1) and
  r2 = s(s-1)/((s+1)(s+2)) (Longuet-Higgins et al. 1963, from memory).
- NDBC angles (docs/formats.md §1.6, from NDBC measdes): α1 = 270 − atan2(b1, a1) and
  α2 = 270 − ½ atan2(b2, a2) (+180 when that is nearer α1), nautical FROM, degrees clockwise from
  north; realtime r in 0..1 (docs/formats.md §1.2). The NDBC series (same §1.6)
  D(A) = (1/π)(½ + r1 cos(A − α1) + r2 cos 2(A − α2)) has exactly those coefficients.
- MEM (Lygre & Krogstad 1986): the maximum-entropy D has the four given coefficients by
  construction, so they come back (up to the direction grid).
- Weighted series (Earle et al. 1999 weights 2/3 and 1/6, per docs/formats.md §1.6 / wavespectra #136):
  D = (1/π)(½ + ⅔ r1 cos(A − α1) + ⅙ r2 cos 2(A − α2)). Its first and second harmonics are the
  input ones times 2/3 and 1/6, so it gives back α1 and α2 but r1·2/3 and r2·1/6, not r1 and r2
  (the weights trade fidelity of the moments for a non-negative, smoother D). Where the series
  would dip below zero it is clipped and the ratios no longer hold exactly; the bands here are
  chosen so it does not dip.
Rounding: the text layout keeps r to 2 decimals, α to 1 decimal, density to 3 (docs/formats.md §1.2), so
values that went through the file are compared within half a unit of the last decimal.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest

from app.formats.ndbc_realtime import parse_realtime_set, read_realtime_set, write_realtime_set
from app.formats.records import SpectrumRecord
from models.spectra import directional_spectrum_from_coefficients

FREQ = np.array([0.05, 0.06, 0.07, 0.08, 0.10, 0.125, 0.15, 0.20])
DENSITY = np.array([0.35, 1.80, 3.20, 2.60, 1.20, 0.55, 0.25, 0.08])  # m²/Hz
MEAN_FROM = np.array([285.0, 280.0, 272.0, 265.0, 255.0, 240.0, 225.0, 200.0])  # nautical FROM [deg]
SPREAD_S = np.array([14.0, 10.0, 8.0, 6.0, 4.0, 3.0, 2.5, 2.0])  # cos-2s exponent per band
A = np.arange(0.0, 360.0, 1.0)  # nautical FROM directions of the rebuilt spectra [deg]
DA = np.deg2rad(1.0)
FX = Path(__file__).parent / "fixtures"


def _math_angle(a_deg):
    """Nautical FROM [deg] -> math TOWARD [rad]: θ = 270° − A (docs/formats.md §1.6 frame)."""
    return np.deg2rad(270.0 - np.asarray(a_deg))


def coefficients(efth, a_deg, da):
    """Longuet-Higgins et al. (1963) normalised a1, b1, a2, b2 per band, and r1, r2, α1, α2 (NDBC)."""
    th = _math_angle(a_deg)
    total = efth.sum(axis=-1) * da
    a1, b1, a2, b2 = ((efth * fn(n * th)).sum(axis=-1) * da / total
                      for n in (1, 2) for fn in (np.cos, np.sin))
    alpha1 = np.mod(270.0 - np.rad2deg(np.arctan2(b1, a1)), 360.0)
    alpha2 = np.mod(270.0 - 0.5 * np.rad2deg(np.arctan2(b2, a2)), 360.0)
    flip = np.abs(_angle_diff(alpha2 + 180.0, alpha1)) < np.abs(_angle_diff(alpha2, alpha1))
    alpha2 = np.where(flip, np.mod(alpha2 + 180.0, 360.0), alpha2)  # NDBC: the α2 nearer α1
    return {"a1": a1, "b1": b1, "a2": a2, "b2": b2, "r1": np.hypot(a1, b1), "r2": np.hypot(a2, b2),
            "alpha1": alpha1, "alpha2": alpha2, "total": total}


def _angle_diff(x, y):
    return (np.asarray(x) - np.asarray(y) + 180.0) % 360.0 - 180.0


def known_spectrum():
    """E(f, A) [m²/Hz/rad] on a fine 0.25° grid: cos-2s about MEAN_FROM, normalised here."""
    a = np.arange(0.0, 360.0, 0.25)
    half = np.deg2rad(_angle_diff(a[None, :], MEAN_FROM[:, None])) / 2.0
    shape = np.cos(half) ** (2.0 * SPREAD_S[:, None])
    d = shape / (shape.sum(axis=-1, keepdims=True) * np.deg2rad(0.25))
    return a, DENSITY[:, None] * d


@pytest.fixture(scope="module")
def parsed():
    """The known spectrum's coefficients, written as a realtime set and parsed back."""
    a, efth = known_spectrum()
    c = coefficients(efth, a, np.deg2rad(0.25))
    rec = SpectrumRecord(station="zx4", time=datetime(2031, 6, 2, 11, 40, tzinfo=UTC), frequency=FREQ,
                         density=DENSITY, r1=c["r1"], r2=c["r2"], alpha1_deg=c["alpha1"], alpha2_deg=c["alpha2"],
                         separation_frequency=0.11)
    files = {f"zx4.{k}": v for k, v in write_realtime_set([rec]).items()}
    res = parse_realtime_set(files)
    assert not res.rejects
    (got,) = res.records
    return c, got


def test_known_spectrum_coefficients_follow_the_definitions():
    a, efth = known_spectrum()
    c = coefficients(efth, a, np.deg2rad(0.25))
    np.testing.assert_allclose(c["total"], DENSITY, rtol=1e-12)
    s = SPREAD_S
    np.testing.assert_allclose(c["r1"], s / (s + 1), atol=1e-9)  # Longuet-Higgins et al. 1963 (from memory)
    np.testing.assert_allclose(c["r2"], s * (s - 1) / ((s + 1) * (s + 2)), atol=1e-9)
    # α = 270 − atan2(b, a) names the FROM direction: a symmetric lobe about A0 gives exactly A0
    np.testing.assert_allclose(_angle_diff(c["alpha1"], MEAN_FROM), 0.0, atol=1e-9)
    np.testing.assert_allclose(_angle_diff(c["alpha2"], MEAN_FROM), 0.0, atol=1e-9)


def test_written_and_parsed_coefficients_keep_their_values(parsed):
    c, rec = parsed
    assert rec.has_coefficients
    np.testing.assert_allclose(rec.density, DENSITY, atol=5e-4)
    np.testing.assert_allclose(rec.r1, c["r1"], atol=0.005 + 1e-9)  # 2 decimals in the file
    np.testing.assert_allclose(rec.r2, c["r2"], atol=0.005 + 1e-9)
    np.testing.assert_allclose(_angle_diff(rec.alpha1_deg, c["alpha1"]), 0.0, atol=0.05 + 1e-9)  # 1 decimal
    np.testing.assert_allclose(_angle_diff(rec.alpha2_deg, c["alpha2"]), 0.0, atol=0.05 + 1e-9)


def _rebuild(rec, method):
    return directional_spectrum_from_coefficients(rec.frequency, rec.density, A, r1=rec.r1, r2=rec.r2,
                                                  alpha1_deg=rec.alpha1_deg, alpha2_deg=rec.alpha2_deg,
                                                  method=method)


@pytest.mark.parametrize("method", ["fourier", "weighted", "mem"])
def test_rebuilt_spectrum_integrates_to_the_density_per_band(parsed, method):
    _, rec = parsed
    efth = _rebuild(rec, method)
    assert efth.shape == (FREQ.size, A.size) and np.all(np.isfinite(efth))
    np.testing.assert_allclose(efth.sum(axis=-1) * DA, rec.density, rtol=1e-12)  # ∫ E dA = E(f)
    df = np.gradient(FREQ)  # any fixed band widths: equal densities give equal Hm0
    np.testing.assert_allclose(4 * np.sqrt((efth.sum(axis=-1) * DA * df).sum()), 4 * np.sqrt((DENSITY * df).sum()),
                               rtol=1e-3)
    if method != "fourier":
        assert np.all(efth >= 0)


def test_fourier_series_returns_the_parsed_coefficients_exactly(parsed):
    # On a uniform grid the discrete harmonic sums up to order 2 are exact, so the NDBC series
    # gives r1, r2, α1, α2 back to rounding error (docs/formats.md §1.6).
    _, rec = parsed
    back = coefficients(_rebuild(rec, "fourier"), A, DA)
    np.testing.assert_allclose(back["r1"], rec.r1, atol=1e-12)
    np.testing.assert_allclose(back["r2"], rec.r2, atol=1e-12)
    np.testing.assert_allclose(_angle_diff(back["alpha1"], rec.alpha1_deg), 0.0, atol=1e-9)
    np.testing.assert_allclose(_angle_diff(back["alpha2"], rec.alpha2_deg), 0.0, atol=1e-9)


def test_fourier_series_goes_negative_for_narrow_bands(parsed):
    # the truncated series is not a density: for s = 14 it dips below zero behind the peak
    _, rec = parsed
    efth = _rebuild(rec, "fourier")
    assert efth[0].min() < 0


def test_mem_returns_the_parsed_coefficients(parsed):
    # Lygre & Krogstad (1986): the MEM distribution has the four given coefficients
    c, rec = parsed
    back = coefficients(_rebuild(rec, "mem"), A, DA)
    np.testing.assert_allclose(back["r1"], rec.r1, atol=2e-3)
    np.testing.assert_allclose(back["r2"], rec.r2, atol=2e-3)
    np.testing.assert_allclose(_angle_diff(back["alpha1"], rec.alpha1_deg), 0.0, atol=0.2)
    np.testing.assert_allclose(_angle_diff(back["alpha2"], rec.alpha2_deg), 0.0, atol=0.2)
    # and so, through the file, the coefficients of the known spectrum within the file's rounding
    np.testing.assert_allclose(back["r1"], c["r1"], atol=0.005 + 2e-3)
    np.testing.assert_allclose(_angle_diff(back["alpha1"], MEAN_FROM), 0.0, atol=0.25)


def test_weighted_series_keeps_directions_but_scales_r(parsed):
    _, rec = parsed
    x1 = np.deg2rad(A[None, :] - rec.alpha1_deg[:, None])
    x2 = np.deg2rad(A[None, :] - rec.alpha2_deg[:, None])
    unclipped = 0.5 + (2 / 3) * rec.r1[:, None] * np.cos(x1) + (1 / 6) * rec.r2[:, None] * np.cos(2 * x2)
    assert unclipped.min() >= 0  # these bands need no clipping, so the ratios are exact
    back = coefficients(_rebuild(rec, "weighted"), A, DA)
    np.testing.assert_allclose(back["r1"], (2 / 3) * rec.r1, atol=1e-12)
    np.testing.assert_allclose(back["r2"], (1 / 6) * rec.r2, atol=1e-12)
    assert np.all(back["r1"] < rec.r1 - 0.1)  # not the parsed r1: the weighted form does not return it
    np.testing.assert_allclose(_angle_diff(back["alpha1"], rec.alpha1_deg), 0.0, atol=1e-9)
    np.testing.assert_allclose(_angle_diff(back["alpha2"], rec.alpha2_deg), 0.0, atol=1e-9)


def test_hand_written_fixture_rebuilds_with_missing_bands_filled():
    res = read_realtime_set([FX / f"fx01.{s}" for s in ("data_spec", "swdir", "swdir2", "swr1", "swr2")])
    recs = [r for r in res.records if r.has_coefficients]
    assert len(recs) == 3
    for rec in recs:
        missing = ~np.isfinite(rec.r1)
        assert missing[0] and not missing[1:].any()  # 999 in the first band of every row
        for method in ("fourier", "mem"):
            efth = _rebuild(rec, method)
            np.testing.assert_allclose(efth.sum(axis=-1) * DA, rec.density, rtol=1e-12, atol=1e-15)
            back = coefficients(np.where(rec.density[:, None] > 0, efth, 1.0), A, DA)
            ok = ~missing & (rec.density > 0)
            tol = {"fourier": (1e-12, 1e-9), "mem": (3e-3, 0.5)}[method]
            np.testing.assert_allclose(back["r1"][ok], rec.r1[ok], atol=tol[0])
            np.testing.assert_allclose(back["r2"][ok], rec.r2[ok], atol=tol[0])
            np.testing.assert_allclose(_angle_diff(back["alpha1"][ok], rec.alpha1_deg[ok]), 0.0, atol=tol[1])
            # α2 is an axis (defined modulo 180°): the fixture's 99° at 0.05 Hz is the same axis as 279°
            np.testing.assert_allclose(_angle_diff(2 * back["alpha2"][ok], 2 * rec.alpha2_deg[ok]), 0.0,
                                       atol=2 * tol[1])


def test_a_band_missing_in_the_file_takes_its_neighbours_directions():
    # 999 in the file -> NaN on parsing -> that band's coefficients are interpolated from its
    # neighbours (models.spectra), so its density is not spread over every direction (land included)
    a, efth = known_spectrum()
    c = coefficients(efth, a, np.deg2rad(0.25))
    r1 = c["r1"].copy()
    r1[3] = np.nan
    rec = SpectrumRecord(station="zx4", time=datetime(2031, 6, 2, 11, 40, tzinfo=UTC), frequency=FREQ,
                         density=DENSITY, r1=r1, r2=c["r2"], alpha1_deg=c["alpha1"], alpha2_deg=c["alpha2"])
    files = write_realtime_set([rec])
    assert " 999.00 (0.080)" in files["swr1"]
    (got,) = parse_realtime_set({f"zx4.{k}": v for k, v in files.items()}).records
    assert np.isnan(got.r1[3]) and np.isfinite(np.delete(got.r1, 3)).all()
    for method in ("fourier", "weighted", "mem"):
        rebuilt = _rebuild(got, method)
        np.testing.assert_allclose(rebuilt[3].sum() * DA, got.density[3], rtol=1e-9)  # energy kept
        assert np.ptp(rebuilt[3]) > 0.5 * min(np.ptp(rebuilt[2]), np.ptp(rebuilt[4]))  # not isotropic
        assert np.ptp(rebuilt[2]) > 0  # its neighbours keep their shape
