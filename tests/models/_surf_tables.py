"""Hand-made transfer tables for the split outlook numerics (no ray tracing): an identity table
(K = 1, direction unchanged) and a blocked one, on a 5° grid and the periods 6..18 s."""

from __future__ import annotations

import numpy as np

from models.transfer import TransferTable

PERIODS = np.array([6.0, 8.0, 10.0, 12.0, 14.0, 16.0, 18.0])
DIRS = np.arange(0.0, 360.0, 5.0)
FREQ = np.linspace(0.05, 0.25, 41)


def table(*, k: float = 1.0, travel_s: float = 600.0, ref_depth: float = 10.0, blocked: bool = False) -> TransferTable:
    shape = (PERIODS.size, DIRS.size)
    near = np.broadcast_to(DIRS, shape).astype(float).copy()  # the direction arrives unchanged
    coef = np.full(shape, 0.0 if blocked else k)
    tt = np.full(shape, np.nan if blocked else travel_s)
    if blocked:
        near[:] = np.nan
    return TransferTable(
        periods_s=PERIODS, directions_deg=DIRS, coefficient=coef, nearshore_direction_deg=near, travel_time_s=tt,
        energy_travel_time_s=tt, open_fraction=np.full(shape, 0.0 if blocked else 1.0),
        lost_fraction_by_period=np.zeros(PERIODS.size), reference_depth_m=ref_depth, reference_x=0.0,
        reference_y=0.0, lost_fraction=0.0, meta={},
    )  # fmt: skip
