"""models.surf_peel.peel_one_many gives exactly `peel_one` at every step (the reference is the
per-step function itself, whose values tests/models/test_peel.py checks against the breaking-angle
geometry), including closeouts, head-on crests and steps where nothing breaks."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models.errors import InvalidInput
from models.surf import PointSetup
from models.surf_peel import peel_one, peel_one_columns, peel_one_many


def _point(normal: float) -> PointSetup:
    return PointSetup("p", 0.0, 0.0, None, 2.0, 0.02, normal)  # type: ignore[arg-type]  # the table is not used


def _same(a, b) -> bool:  # type: ignore[no-untyped-def]
    return all(
        (np.array_equal(x, y) if isinstance(x, np.ndarray) else (x == y or (x != x and y != y)))
        for x, y in zip(a, b, strict=True)
    )


steps = st.lists(
    st.tuples(
        st.one_of(st.floats(-85.0, 85.0), st.sampled_from([0.0, 20.0, -20.0, 19.999999, -0.0])),
        st.floats(0.05, 12.0),
        st.one_of(st.floats(0.1, 5.0), st.just(math.nan)),
    ),
    min_size=1,
    max_size=30,
)


@settings(max_examples=200, deadline=None)
@given(normal=st.floats(0.0, 359.999), rows=steps)
def test_equals_peel_one_step_by_step(normal: float, rows: list[tuple[float, float, float]]) -> None:
    p = _point(normal)
    ang, db, hb = (list(c) for c in zip(*rows, strict=True))
    got = peel_one_many(p, ang, db, hb)
    for g, a, d, h in zip(got, ang, db, hb, strict=True):
        if not math.isfinite(h):
            assert g is None
        else:
            assert _same(g, peel_one(p, a, d))


def test_bad_depth_raises_as_peel_one() -> None:
    with pytest.raises(InvalidInput, match="breaker_depth_m"):
        peel_one_many(_point(270.0), [10.0], [0.0], [1.0])


@settings(max_examples=200, deadline=None)
@given(normal=st.floats(0.0, 359.999), rows=steps)
def test_columns_equal_peel_one_step_by_step(normal: float, rows: list[tuple[float, float, float]]) -> None:
    """`peel_one_columns` (numpy over the steps) gives `peel_one`'s direction and sweep exactly and
    its angle and peel rate to a rounding unit of the trigonometric functions."""
    p = _point(normal)
    ang, db, hb = (np.array(c, dtype=float) for c in zip(*rows, strict=True))
    got = peel_one_columns(p, ang, db, hb)
    for i, (a, d, h) in enumerate(zip(ang.tolist(), db.tolist(), hb.tolist(), strict=True)):
        if not math.isfinite(h):
            assert got.direction[i] is None and got.sweep[i] is None and math.isnan(got.angle_deg[i])
            continue
        ref = peel_one(p, a, d)
        assert (got.direction[i], got.sweep[i]) == (ref.direction, ref.sweep)
        assert got.angle_deg[i] == pytest.approx(ref.angle_deg, rel=1e-12, abs=1e-12)
        assert got.peel_rate_m_s[i] == pytest.approx(ref.peel_rate_m_s, rel=1e-9, abs=1e-9)


def test_columns_raise_as_peel_one_on_a_bad_depth() -> None:
    with pytest.raises(InvalidInput, match="breaker_depth_m"):
        peel_one_columns(_point(270.0), np.array([10.0]), np.array([0.0]), np.array([1.0]))
