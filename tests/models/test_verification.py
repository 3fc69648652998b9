"""Verification scores and the calibration factor (models.verification).

Sources: the score definitions of Wilks (2011, Statistical Methods in the Atmospheric Sciences,
3rd ed., §8.3: mean error, RMSE, Pearson correlation), written out by hand below on the same
pairs; least squares through the origin c = Σ o f / Σ f² and its heteroscedasticity-consistent
standard error (White 1980, Econometrica 48; HC1 of MacKinnon & White 1985); Pearson r against
scipy.stats.pearsonr (reference library); scatter index = RMSE / mean(obs) (common practice).
"""

from __future__ import annotations

import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from models import verification as mv


def _made(c: float, n: int, noise: float, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Forecasts 0.3..3 m and observations c × forecast × (1 + noise)."""
    rng = np.random.default_rng(seed)
    f = rng.uniform(0.3, 3.0, n)
    return c * f * (1.0 + noise * rng.standard_normal(n)), f


def test_factor_is_recovered_within_two_standard_errors() -> None:
    o, f = _made(1.2, 150, 0.15, seed=7)
    c, se = mv.calibration_factor(o, f)
    assert se > 0 and abs(c - 1.2) < 2 * se
    # and the same pairs' bias and RMSE as defined (Wilks §8.3, sign: observed − forecast), by hand
    s = mv.scores(o, f)
    n = len(o)
    bias = sum(o[i] - f[i] for i in range(n)) / n
    rmse = math.sqrt(sum((o[i] - f[i]) ** 2 for i in range(n)) / n)
    assert s.n == n
    assert s.bias_m == pytest.approx(bias, rel=1e-12)
    assert s.rmse_m == pytest.approx(rmse, rel=1e-12)
    assert s.scatter_index == pytest.approx(rmse / (sum(o) / n), rel=1e-12)
    assert s.correlation == pytest.approx(stats.pearsonr(o, f).statistic, rel=1e-12)
    assert s.bias_m > 0  # the forecast runs low by 20 %: observed − forecast is positive


def test_two_standard_errors_cover_the_true_factor_about_95_percent_of_the_time() -> None:
    # The coverage of c ± 2 se over many samples: about 95 % for a normal estimate (within a few
    # per cent at n = 60; HC1 is slightly liberal at small n). A classical s²/Σf² error under these
    # proportional errors would cover noticeably less.
    hits = 0
    trials = 400
    for seed in range(trials):
        o, f = _made(0.8, 60, 0.2, seed=1000 + seed)
        c, se = mv.calibration_factor(o, f)
        hits += abs(c - 0.8) < 2 * se
    assert 0.90 <= hits / trials <= 0.99


def test_scores_of_four_pairs_written_out() -> None:
    o = [1.0, 2.0, 1.5, 0.5]
    f = [0.8, 2.2, 1.2, 0.3]
    # errors o − f: 0.2, −0.2, 0.3, 0.2 -> bias 0.5/4; squares 0.04 + 0.04 + 0.09 + 0.04 = 0.21
    s = mv.scores(o, f)
    assert s.bias_m == pytest.approx(0.125)
    assert s.rmse_m == pytest.approx(math.sqrt(0.21 / 4))
    assert s.scatter_index == pytest.approx(math.sqrt(0.21 / 4) / 1.25)
    # Σ o f = 0.8 + 4.4 + 1.8 + 0.15 = 7.15; Σ f² = 0.64 + 4.84 + 1.44 + 0.09 = 7.01
    c = 7.15 / 7.01
    assert s.calibration_factor == pytest.approx(c)
    r = [oi - c * fi for oi, fi in zip(o, f, strict=True)]
    se = math.sqrt(4 / 3 * sum(fi * fi * ri * ri for fi, ri in zip(f, r, strict=True)) / 7.01**2)
    assert s.calibration_factor_stderr == pytest.approx(se)
    assert s.correlation == pytest.approx(stats.pearsonr(o, f).statistic)


def test_missing_values_are_left_out_and_empty_gives_nan() -> None:
    s = mv.scores([1.0, float("nan"), 2.0], [1.0, 1.0, float("nan")])
    assert s.n == 1 and s.bias_m == 0.0 and math.isnan(s.correlation)
    e = mv.scores([], [])
    assert e.n == 0 and math.isnan(e.rmse_m) and e.as_dict()["rmse_m"] is None


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(0.1, 5.0), min_size=2, max_size=40),
    st.floats(0.3, 3.0),
    st.floats(0.2, 5.0),
)
def test_factor_is_exact_for_exact_proportion_and_scales_with_the_observations(
    f: list[float], c: float, k: float
) -> None:
    o = [c * x for x in f]
    got, se = mv.calibration_factor(o, f)
    assert got == pytest.approx(c, rel=1e-9) and se == pytest.approx(0.0, abs=1e-9)
    # least squares is linear in the observations: k·o gives k·c
    got_k, _ = mv.calibration_factor([k * x for x in o], f)
    assert got_k == pytest.approx(k * c, rel=1e-9)


def test_sectors_and_period_bands() -> None:
    # each sector starts at its centre − 22.5° (inclusive)
    assert [mv.sector_of(d) for d in (0.0, 22.4, 22.5, 200.0, 337.4, 337.5)] == ["N", "N", "NE", "S", "NW", "N"]
    assert mv.sector_of(None) is None and mv.sector_of(float("nan")) is None
    assert [mv.period_band(t) for t in (5.0, 8.0, 11.9, 14.0, 18.0)] == ["<8 s", "8-12 s", "8-12 s", "12-16 s", ">=16 s"]
    by = mv.scores_by([1.0, 2.0, 3.0], [1.0, 1.0, 1.0], ["W", "W", None])
    assert set(by) == {"W"} and by["W"].n == 2


def test_pairing_takes_the_nearest_step_within_half_an_hour() -> None:
    t0 = datetime(2030, 1, 1, tzinfo=UTC)
    steps = [t0 + timedelta(hours=h) for h in range(3)]
    obs = [t0 + timedelta(minutes=m) for m in (10, 40, 90, 200)]
    p = mv.pair_times(obs, steps)
    assert p.index.tolist() == [0, 1, 1, -1]
