"""app.services.outlook_numbers: rounding for JSON (the outlook's number-formatting piece).

Reference: Python's built-in round() (round half to even, IEEE 754 doubles) defines the scalar
form; the array forms must give the same value for every input (property), never -0.0, and
None instead of NaN or infinity (RFC 8259 JSON has no NaN).
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from app.services.outlook_numbers import DEG, deg, degs, grid, num, nums, round_many

FINITE = st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False)
ANY = st.one_of(FINITE, st.just(math.nan), st.just(math.inf), st.just(-math.inf))


def test_scalar_rounding_examples() -> None:
    assert num(1.25) == 1.2 and num(1.35) == 1.4  # to 0.1 (in doubles 1.25/0.1 is 12.4999...)
    assert num(2.5, 1.0) == 2.0 and num(3.5, 1.0) == 4.0  # half to even (Python round)
    assert num(1.74, 0.5) == 1.5 and num(0.006, 0.01) == 0.01
    assert num(None) is None and num(math.nan) is None and num(-math.inf) is None
    assert deg(359.6) == 0.0 and deg(-10.2) == 350.0 and deg(math.nan) is None


@given(st.lists(ANY, max_size=20), st.sampled_from([0.01, 0.1, 0.5, 1.0]))
def test_array_rounding_equals_the_scalar_one(values: list[float], step: float) -> None:
    got = nums(np.array(values, dtype=float), step)
    want = [num(v, step) for v in values]
    assert got == want
    assert all(v is None or math.copysign(1.0, v) > 0 or v != 0 for v in got)  # no -0.0


@given(st.lists(ANY, max_size=20))
def test_array_degrees_equal_the_scalar_ones(values: list[float]) -> None:
    assert degs(np.array(values, dtype=float)) == [deg(v) for v in values]


def test_grid_keeps_rows_and_makes_one_value_rows_of_a_vector() -> None:
    a = np.array([[0.04, np.nan, 1.26], [2.0, 3.05, -0.04]])
    assert grid(a) == [[0.0, None, 1.3], [2.0, 3.0, 0.0]]
    assert grid(np.array([1.0, 2.0])) == [[1.0], [2.0]]
    assert grid(np.array([[359.7, 1.2]]), as_deg=True) == [[0.0, 1.0]]


@given(
    st.lists(st.tuples(st.lists(ANY, min_size=0, max_size=12), st.sampled_from([0.01, 0.1, 0.5, 1.0, DEG])), max_size=6),
    st.integers(1, 3),
)
def test_round_many_equals_the_one_array_forms(specs: list[tuple[list[float], float | str]], width: int) -> None:
    """One pass over many arrays gives exactly what `nums`/`degs` (1-D) and `grid` (2-D) give each."""
    arrays = []
    for values, step in specs:
        a = np.array(values, dtype=float)
        n = a.size - a.size % width
        arrays.append((a[:n].reshape(-1, width) if width > 1 else a, step))
    got = round_many(arrays)
    for (a, step), g in zip(arrays, got, strict=True):
        if a.ndim == 2:
            assert [list(row) for row in g] == grid(a, 1.0 if step == DEG else step, as_deg=step == DEG)
        else:
            assert g == (degs(a) if step == DEG else nums(a, step))
