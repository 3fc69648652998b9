"""models.nearshore: many tables applied at once (the outlook's table-application piece).

Exact cases: an identity table (K = 1, direction unchanged) returns the offshore Hm0 and the
offshore mean direction; K scales heights linearly (energy by K², the definition of a
transfer coefficient). Properties: the interpolation matrix equals numpy.interp (reference
library); chunking of tables does not change a value. The weights' identity with
`models.transfer.apply` is checked on ray-traced tables in the outlook tests.
"""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from models import nearshore
from models.nearshore import interp_matrix, nearshore_many, transfer_weights
from models.spectra import cos2s, frequency_spectrum, hm0, jonswap

_spec = importlib.util.spec_from_file_location("_surf_tables", Path(__file__).with_name("_surf_tables.py"))
tb = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_surf_tables", tb)
_spec.loader.exec_module(tb)


def _stack(hs: float = 1.2, tp: float = 11.0, from_deg: float = 265.0) -> np.ndarray:
    e = jonswap(tb.FREQ, hs=hs, tp=tp)[:, None] * cos2s(tb.DIRS, mean_dir_deg=from_deg, s=30.0)[None, :]
    return np.stack([e, 0.5 * e])[:, None]  # (T=2, 1, nf, nd)


@given(
    hnp.arrays(np.float64, st.integers(1, 12), elements=st.floats(-5, 5)),
    hnp.arrays(np.float64, st.integers(1, 8), elements=st.floats(-3, 3), unique=True),
)
def test_interp_matrix_is_numpy_interp(x: np.ndarray, xp: np.ndarray) -> None:
    xp = np.sort(xp)
    fp = np.cos(xp) + xp
    np.testing.assert_allclose(interp_matrix(x, xp) @ fp, np.interp(x, xp, fp), rtol=1e-12, atol=1e-12)


def test_identity_table_returns_the_offshore_height_and_direction() -> None:
    s = _stack()
    r = nearshore_many(tb.FREQ, tb.DIRS, s, [tb.table()])
    off = hm0(tb.FREQ, frequency_spectrum(s[:, 0], tb.DIRS))
    np.testing.assert_allclose(r.hs[0, :, 0], off, rtol=1e-3)
    np.testing.assert_allclose(r.direction[0, :, 0], 265.0, atol=0.5)
    assert r.tp[0, 0, 0] == pytest.approx(11.0, rel=0.03)
    assert np.all(np.isfinite(r.tm02[0])) and np.all(r.tm02[0] < r.tp[0, :, 0])


def test_heights_scale_with_the_coefficient_and_a_blocked_table_gives_nothing() -> None:
    s = _stack()
    r = nearshore_many(tb.FREQ, tb.DIRS, s, [tb.table(), tb.table(k=0.5), tb.table(blocked=True)])
    np.testing.assert_allclose(r.hs[1], 0.5 * r.hs[0], rtol=1e-12)
    assert np.all(r.hs[2] == 0.0)
    assert np.all(np.isnan(r.tp[2])) and np.all(np.isnan(r.direction[2])) and np.all(np.isnan(r.tm02[2]))


def test_chunks_of_tables_give_the_same_values(monkeypatch: pytest.MonkeyPatch) -> None:
    s = _stack()
    tables = [tb.table(k=k) for k in (1.0, 0.8, 0.6, 0.4, 0.2)]
    whole = nearshore_many(tb.FREQ, tb.DIRS, s, tables)
    monkeypatch.setattr(nearshore, "CHUNK_TABLES", 2)
    parts = nearshore_many(tb.FREQ, tb.DIRS, s, tables)
    for a, b in zip(whole, parts, strict=True):
        np.testing.assert_array_equal(a, b)


def test_weights_are_memoised_per_table_and_grid() -> None:
    t = tb.table()
    w = transfer_weights(t, tb.FREQ, tb.DIRS)
    assert transfer_weights(t, tb.FREQ, tb.DIRS) is w
    assert transfer_weights(t, tb.FREQ[:-1], tb.DIRS) is not w
    assert w.w.shape == (3, tb.FREQ.size, tb.DIRS.size)
