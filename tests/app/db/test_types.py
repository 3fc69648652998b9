"""Arrays round-trip as .npy bytes and datetimes stay timezone-aware UTC on both databases."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta, timezone

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from app.db.base import array_to_npy, npy_to_array
from app.db.session import session_scope
from app.db.tables import Source, SourceHealth


@settings(max_examples=60, deadline=None)
@given(hnp.arrays(dtype=st.sampled_from([np.float32, np.float64, np.int32]), shape=hnp.array_shapes(max_dims=3, max_side=5)))
def test_npy_round_trip(array: np.ndarray) -> None:
    back = npy_to_array(array_to_npy(array))
    assert back.dtype == array.dtype and back.shape == array.shape
    np.testing.assert_array_equal(back, array)


def test_npy_refuses_pickled_objects() -> None:
    with pytest.raises(ValueError):
        array_to_npy(np.array([{"a": 1}], dtype=object))


def test_datetimes_stay_utc(migrated_db: str) -> None:
    local = datetime(2026, 1, 2, 3, 4, 5, tzinfo=timezone(timedelta(hours=-5)))
    with session_scope(migrated_db) as s:
        s.add(Source(id="s1", name="S", format="met-text", latitude=0.0, longitude=0.0, depth_m=None, urls=[], config={}))
        s.add(SourceHealth(source_id="s1", last_attempt=local, validators={}))
    with session_scope(migrated_db) as s:
        h = s.get(SourceHealth, "s1")
        assert h is not None and h.last_attempt is not None
        assert h.last_attempt.tzinfo is not None
        assert h.last_attempt == local
        assert h.last_attempt.utcoffset() == timedelta(0)
        assert h.last_attempt == datetime(2026, 1, 2, 8, 4, 5, tzinfo=UTC)


def test_naive_datetimes_are_refused(migrated_db: str) -> None:
    with pytest.raises(Exception, match="naive datetime"):
        with session_scope(migrated_db) as s:
            s.add(Source(id="s2", name="S", format="met-text", latitude=0.0, longitude=0.0, depth_m=None, urls=[], config={}))
            s.add(SourceHealth(source_id="s2", last_attempt=datetime(2026, 1, 1), validators={}))
