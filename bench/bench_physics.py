"""Physics kernels: the dispersion solve against the numpy floor, plus two heavier kernels.

Ratios are measured side by side in one run (best of N, interleaved), so a busy machine moves
both numbers together.
"""

from __future__ import annotations

import numpy as np

from bench.common import best_of


def _pairs(n: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(0)
    # swell and wind-sea frequencies over nearshore-to-shelf depths: mostly intermediate water
    return rng.uniform(0.03, 0.5, n), rng.uniform(0.5, 200.0, n)


def _interleaved(a, b, *, rounds: int, number: int = 1) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    ta = tb = float("inf")
    for _ in range(rounds):
        ta = min(ta, best_of(a, repeat=1, number=number))
        tb = min(tb, best_of(b, repeat=1, number=number))
    return ta, tb


def run(quick: bool = False) -> list[dict]:
    from models import spectra, waves
    from models.breaking import shoal_to_breaking

    rows: list[dict] = []
    n = 200_000 if quick else 1_000_000
    f, h = _pairs(n)
    y = (2 * np.pi * f) ** 2 / waves.G * h
    waves.wavenumber(f, h)  # warm up
    t_k, t_tanh = _interleaved(lambda: waves.wavenumber(f, h), lambda: np.tanh(y), rounds=3 if quick else 7)
    rows.append(
        {
            "benchmark": f"waves.wavenumber on {n:.0e} (f, h) pairs (exact, 1e-13)",
            "result": f"{t_k / n * 1e9:.1f} ns/value ({t_k * 1e3:.1f} ms)",
            "ratio": t_k / t_tanh,
            "ratio_of": f"one numpy tanh pass over the same {n:.0e} values ({t_tanh / n * 1e9:.2f} ns/value)",
            "target": "<= 8x",
        }
    )
    # explicit Fenton & McKee (1.7 % accurate): what exactness costs over a one-shot formula
    t_fm, _ = _interleaved(lambda: y / np.tanh(y**0.75) ** (2 / 3), lambda: None, rounds=3 if quick else 5)
    rows.append(
        {
            "benchmark": "explicit Fenton & McKee (1990) k on the same pairs (1.7 % error)",
            "result": f"{t_fm / n * 1e9:.1f} ns/value",
            "ratio": t_k / t_fm,
            "ratio_of": "exact wavenumber / explicit formula",
            "target": "info",
        }
    )
    m = 2_000 if quick else 10_000
    H = np.linspace(0.3, 4.0, m)
    T = np.linspace(6.0, 18.0, m)[::-1]
    th = np.linspace(-40.0, 40.0, m)
    t_b = best_of(lambda: shoal_to_breaking(H, T, th, 20.0, slope=0.02), repeat=2 if quick else 3)
    rows.append(
        {
            "benchmark": f"breaking.shoal_to_breaking on {m} waves (scan + bisection)",
            "result": f"{t_b / m * 1e6:.1f} us/wave ({t_b * 1e3:.0f} ms)",
            "ratio": t_b / (t_k / n * m),
            "ratio_of": "the same count of wavenumber values",
            "target": "info",
        }
    )
    fr = np.linspace(0.03, 0.5, 64)
    d = np.arange(0.0, 360.0, 2.0)
    r1 = np.full(fr.size, 0.8)
    r2 = np.full(fr.size, 0.5)
    a1 = np.linspace(200, 300, fr.size)
    dens = spectra.jonswap(fr, hs=2.0, tp=10.0)

    def mem():  # type: ignore[no-untyped-def]
        return spectra.directional_spectrum_from_coefficients(
            fr, dens, d, r1=r1, r2=r2, alpha1_deg=a1, alpha2_deg=a1, method="mem"
        )

    def fourier():  # type: ignore[no-untyped-def]
        return spectra.directional_spectrum_from_coefficients(
            fr, dens, d, r1=r1, r2=r2, alpha1_deg=a1, alpha2_deg=a1, method="weighted"
        )

    t_mem, t_w = _interleaved(mem, fourier, rounds=3, number=10 if quick else 50)
    rows.append(
        {
            "benchmark": "MEM E(f,θ) from buoy coefficients, 64 f x 180 θ",
            "result": f"{t_mem * 1e3:.2f} ms/spectrum",
            "ratio": t_mem / t_w,
            "ratio_of": "weighted Fourier series on the same grid",
            "target": "info",
        }
    )
    # the estimate outlooks use (models.directional): printed narrow-swell coefficients, some outside the
    # admissible region, every fifth band two-peaked (maximum entropy there)
    from models.directional import estimate_directional

    pr1 = np.where(np.arange(fr.size) % 5 == 0, 0.48, 0.99)
    pr2 = np.where(np.arange(fr.size) % 5 == 0, 0.41, 0.95)
    pa2 = np.where(np.arange(fr.size) % 5 == 0, a1 + 90.0, a1)

    def estimate():  # type: ignore[no-untyped-def]
        est = estimate_directional(fr, d, r1=pr1, r2=pr2, alpha1_deg=a1, alpha2_deg=pa2)
        return dens[:, None] * est.D

    def mem_same():  # type: ignore[no-untyped-def]
        return spectra.directional_spectrum_from_coefficients(
            fr, dens, d, r1=pr1, r2=pr2, alpha1_deg=a1, alpha2_deg=pa2, method="mem"
        )

    t_est, t_mem2 = _interleaved(estimate, mem_same, rounds=3, number=10 if quick else 50)
    rows.append(
        {
            "benchmark": "directional estimate (intervals, projection, cos-2s fit / MEM), 64 f x 180 θ",
            "result": f"{t_est * 1e3:.2f} ms/spectrum",
            "ratio": t_est / t_mem2,
            "ratio_of": "maximum entropy (MEM) alone on the same coefficients and grid",
            "target": "info",
        }
    )
    return rows


if __name__ == "__main__":
    from bench.common import print_rows

    print_rows(run())
