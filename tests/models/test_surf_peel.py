"""models.surf_peel: a step's peel from the breaker arrays (the outlook's peel piece).

Exact cases: over a flat bed a crest is a straight line moving at the phase speed C (linear
theory, C from the dispersion relation, models.waves), so it reaches a point r from the
reference point at k̂·r / C: the Snell-based run time must equal that for any direction and
offset. Surfers' left/right (common practice: seen by a surfer riding toward shore): a swell
from west-north-west on a west-facing straight beach breaks first at the north end and the
breaking runs south, to the surfer's right; on such a beach it is a closeout (below 20°).
"""

from __future__ import annotations

import importlib.util
import math
import sys
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from models.offshore import prepare_offshore
from models.spectra import cos2s, jonswap
from models.surf import PointSetup, compute_spots
from models.surf_peel import crest_at_reference, peel_one, run_time, step_peel
from models.waves import phase_speed

_spec = importlib.util.spec_from_file_location("_surf_tables", Path(__file__).with_name("_surf_tables.py"))
tb = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_surf_tables", tb)
_spec.loader.exec_module(tb)


@given(
    st.floats(-400, 400), st.floats(-400, 400), st.floats(-70, 70), st.floats(2.0, 30.0), st.floats(6.0, 16.0)
)
def test_run_time_over_a_flat_bed_is_the_plane_crest_time(dx, dy, off_deg, h, period) -> None:
    normal = 270.0  # seaward normal: the beach faces west
    wave_from = normal + off_deg
    w = math.radians(wave_from)
    k = (-math.sin(w), -math.cos(w))  # propagation direction (x east, y north)
    expected = (k[0] * dx + k[1] * dy) / float(phase_speed(1.0 / period, h))
    assert run_time(dx, dy, h, h, period, wave_from, normal) == pytest.approx(expected, rel=1e-9, abs=1e-9)


def test_run_time_grows_as_the_crest_slows_in_shallower_water() -> None:
    deep = run_time(100.0, 0.0, 10.0, 10.0, 10.0, 270.0, 270.0)
    shoaling = run_time(100.0, 0.0, 10.0, 2.0, 10.0, 270.0, 270.0)
    assert shoaling > deep > 0


def test_crest_at_reference_reads_the_table_and_blocked_is_nan() -> None:
    tt, d = crest_at_reference(tb.table(travel_s=750.0), 11.0, 262.0)
    assert tt == pytest.approx(750.0) and d == pytest.approx(260.0)  # nearest 5° bin
    tt, d = crest_at_reference(tb.table(blocked=True), 11.0, 262.0)
    assert math.isnan(tt) and math.isnan(d)


def _beach(ys: tuple[float, ...], from_deg: float):  # type: ignore[no-untyped-def]
    pts = [PointSetup(f"p{i}", 0.0, y, tb.table(), 2.0, 0.02, 270.0) for i, y in enumerate(ys)]
    e = jonswap(tb.FREQ, hs=1.0, tp=10.0)[:, None] * cos2s(tb.DIRS, mean_dir_deg=from_deg, s=60.0)[None, :]
    b = prepare_offshore([datetime(2031, 1, 1, tzinfo=UTC)], tb.FREQ, tb.DIRS, e[None], source="s",
                         kind="model-forecast")  # fmt: skip
    return pts, b, compute_spots(b, [pts])[0]


def test_oblique_swell_on_a_straight_beach_sweeps_to_the_right_and_closes_out() -> None:
    pts, b, arr = _beach((300.0, 0.0, -300.0), 290.0)
    sp = step_peel(pts, arr, 0, offshore_tp=float(b.tp[0]), offshore_dir=float(b.peak_dir[0]))
    assert sp is not None and sp.method == "break-times"
    assert (pts[sp.first_point].name, sp.result.sweep, sp.result.direction) == ("p0", "right", "closeout")
    assert 0 < sp.result.angle_deg < 20


def test_one_point_uses_the_breaking_angle() -> None:
    pts, b, arr = _beach((0.0,), 290.0)
    sp = step_peel(pts, arr, 0, offshore_tp=float(b.tp[0]), offshore_dir=float(b.peak_dir[0]))
    assert sp is not None and sp.method == "breaking-angle" and sp.first_point == 0 and sp.largest_point == 0
    assert sp.result.angle_deg == pytest.approx(abs(arr.angle_b[0, 0, 0]), abs=1e-9)
    assert sp.result == peel_one(pts[0], float(arr.angle_b[0, 0, 0]), float(arr.db[0, 0, 0]))


def test_nothing_breaking_has_no_peel() -> None:
    pts, b, arr = _beach((300.0, 0.0), 290.0)
    arr.hb[:] = np.nan
    assert step_peel(pts, arr, 0, offshore_tp=10.0, offshore_dir=290.0) is None
