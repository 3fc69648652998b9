"""Rayleigh wave-height statistics (Longuet-Higgins 1952)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from models import statistics as st
from models.errors import InvalidInput


def test_rayleigh_ratios():
    # docs/check-values.md §6 and #18 (C, exact for the Rayleigh law; Longuet-Higgins 1952)
    h3 = float(st.highest_fraction_ratio(3))
    assert h3 == pytest.approx(1.41573, abs=1e-5)
    assert float(st.highest_fraction_ratio(1)) == pytest.approx(math.sqrt(math.pi) / 2, rel=1e-14)  # mean height
    assert float(st.highest_fraction_ratio(10)) / h3 == pytest.approx(1.2714, abs=1e-4)
    assert float(st.highest_fraction_ratio(100)) / h3 == pytest.approx(1.6664, abs=1e-4)
    assert 4.0 * float(st.highest_fraction_ratio(3, reference="hm0")) == pytest.approx(4.0043, abs=1e-4)  # H1/3 = 4.0043√m0


def test_highest_fraction_by_monte_carlo():
    # an independent check of the closed form: sample Rayleigh heights (Hrms = 1)
    rng = np.random.default_rng(1)
    h = np.sort(np.sqrt(-np.log(rng.random(600_000))))[::-1]
    assert h[: h.size // 10].mean() == pytest.approx(float(st.highest_fraction_ratio(10)), rel=3e-3)


@pytest.mark.parametrize(
    ("n", "expected_hrms", "median_hrms", "expected_hm0"),
    # docs/check-values.md §6 table (C, exact integral)
    [(100, 2.2615, 2.2305, 1.5991), (500, 2.5954, 2.5655, 1.8353), (1000, 2.7265, 2.6971, 1.9280), (3000, 2.9221, 2.8936, 2.0662)],
)
def test_expected_maximum(n, expected_hrms, median_hrms, expected_hm0):
    assert float(st.expected_max_height_ratio(n)) == pytest.approx(expected_hrms, abs=1e-4)
    assert float(st.expected_max_height_ratio(n, reference="hm0")) == pytest.approx(expected_hm0, abs=1e-4)
    assert float(st.median_max_height_ratio(n)) == pytest.approx(median_hrms, abs=1e-4)
    # asymptote √lnN + 0.2886/√lnN (from memory) is close but not equal
    x = math.sqrt(math.log(n))
    assert abs(float(st.expected_max_height_ratio(n)) - (x + 0.2886 / x)) < 0.03


def test_expected_maximum_exact_cases_and_arrays():
    assert float(st.expected_max_height_ratio(1)) == pytest.approx(math.sqrt(math.pi) / 2, rel=1e-10)
    # N = 2: E[max] = ∫ 1 - (1 - e^{-x²})² dx = √π (1 - 1/(2√2))
    assert float(st.expected_max_height_ratio(2)) == pytest.approx(math.sqrt(math.pi) * (1 - 1 / (2 * math.sqrt(2))), rel=1e-10)
    out = st.expected_max_height_ratio([[100, 1000], [100, 3000]])
    assert out.shape == (2, 2)
    assert out[0, 0] == out[1, 0]
    assert np.all(np.diff(st.expected_max_height_ratio([10, 100, 1e4, 1e8])) > 0)


def test_number_of_waves():
    assert float(st.number_of_waves(3 * 3600, 9.0)) == pytest.approx(1200.0)


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: st.highest_fraction_ratio(0.5), "`n`"),
        (lambda: st.expected_max_height_ratio([10, np.nan]), "`n_waves`"),
        (lambda: st.expected_max_height_ratio(10, reference="hs"), "`reference`"),
        (lambda: st.number_of_waves(-1, 8), "`duration_s`"),
        (lambda: st.number_of_waves(3600, 0), "`mean_period_s`"),
    ],
)
def test_bad_input(call, match):
    with pytest.raises(InvalidInput, match=match):
        call()
