"""Outlook steps from the arrays of `models.surf`: the values shown at each time, rounded, validated once.

Per step: the height classes and breaking details at the point where the sets breaker is largest,
the hazard level on that height (`models.hazard.hazard_level`, the offshore peak period and wave
power beside it), the peel (`models.surf_peel`), the offshore summary and swell trains, and the
per-point details; the water level, tide and wind (`app.services.conditions`), and whether each
break point is too shallow or dry at that level (`models.conditions.depth_state`). Whole arrays are rounded at a time (`app.services.outlook_numbers`) into plain
dicts, and the list is validated once by pydantic's compiled validator (about half the cost of
building each model one by one).
"""

from __future__ import annotations

import gc
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from typing import Any

import numpy as np
from pydantic import TypeAdapter

from app.cautions import HAZARD as HAZARD_CAUTIONS
from app.schemas.outlooks import (
    Step,
)
from app.services.conditions import SpotConditions
from app.services.outlook_numbers import DEG, deg, degs, grid, num, nums, round_many
from models.conditions import depth_state
from models.constants import FOOT
from models.hazard import HazardPolicy, hazard_level, near_high_water, shore_break
from models.offshore import OffshoreBatch
from models.peel import PeelResult
from models.surf import MIN_HEIGHT_M, PointSetup, SpotArrays
from models.surf_peel import StepPeel, peel_one_columns, step_peel

CAUTIONS = HAZARD_CAUTIONS  # one wording everywhere (app.cautions)
NO_PEEL: dict[str, Any] = dict(direction=None, angle_deg=None, first_point=None)  # nothing breaks

_STEPS = TypeAdapter(list[Step])


def cautions_for(policy: HazardPolicy) -> list[str]:
    """The cautions shown with an outlook (plus a note when the policy is shoalcast's default)."""
    out = list(CAUTIONS)
    if policy.is_default:
        out.append(
            "Hazard levels use shoalcast's labelled default policy, not an agency's; it is calibrated for no place."
        )
    return out


def peel_fields(r: PeelResult, first: str, largest: str | None, method: str) -> dict[str, Any]:
    """A `models.peel` result as the step's peel fields (a closeout has no meaningful rate)."""
    return dict(
        direction=r.direction, sweep=r.sweep, angle_deg=num(r.angle_deg, 1.0), first_point=first,
        largest_point=largest, peel_rate_m_s=num(r.peel_rate_m_s) if r.direction != "closeout" else None,
        method=method,
    )  # fmt: skip


def step_peel_fields(points: Sequence[PointSetup], sp: StepPeel | None) -> dict[str, Any]:
    """`models.surf_peel.step_peel`'s answer as the step's peel fields."""
    if sp is None:
        return dict(NO_PEEL)
    largest = points[sp.largest_point].name if sp.largest_point is not None else None
    return peel_fields(sp.result, points[sp.first_point].name, largest, sp.method)


def offshore_parts(batch: OffshoreBatch, units: str) -> tuple[Any, ...]:
    """The offshore values of each step and its trains, rounded once per batch (shared by its spots)."""
    key = f"offshore-{units}"
    if key not in batch.memo:
        swells = [
            [
                {
                    "height_m": num(tr.hm0_m) or 0.0, "period_s": num(tr.tp_s) or 0.0,
                    "direction_deg": deg(tr.peak_direction_deg) or 0.0, "spread_deg": num(tr.spread_deg, 1.0),
                    "energy_fraction": num(tr.energy_fraction, 0.01),
                    **({"height_ft": num(tr.hm0_m / FOOT, 0.5)} if units == "imperial" else {}),
                }
                for tr in trains
            ]
            for trains in batch.trains
        ]  # fmt: skip
        batch.memo[key] = (nums(batch.hm0), nums(batch.tp), degs(batch.peak_dir), nums(batch.power_kw_m), swells)
    return batch.memo[key]


@contextmanager
def no_gc() -> Iterator[None]:
    """Pause the cyclic garbage collector while building many small acyclic objects (dicts, lists,
    models): its passes cost more than the building (measured: about half of the step time);
    reference counting still frees everything. Restores the previous state."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def build_steps(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, policy: HazardPolicy, units: str,
    conditions: SpotConditions | None = None,
) -> list[Step]:
    """The outlook steps of one batch for one spot (see the module docstring)."""
    with no_gc():
        return _STEPS.validate_python(step_dicts(batch, points, arr, policy, units, conditions))


def condition_fields(
    sc: SpotConditions, points: Sequence[PointSetup]
) -> tuple[list[dict[str, Any]], Any]:
    """Per step: the water level, tide, wind and shallow points; and per (step, point) the water
    depth and its state."""
    c = sc.conditions
    level, pred, resid = nums(c.water_level_m, 0.01), nums(sc.predicted_m, 0.01), nums(sc.residual_m, 0.01)
    speed, wdir = nums(c.wind_speed_m_s), degs(c.wind_from_deg)
    bed = np.array([p.depth_m for p in points])
    depth, state = depth_state(bed[None, :], c.water_level_m[:, None])  # (T, P)
    depth_rows, state_rows = grid(depth, 0.01), state.tolist()
    names = [p.name for p in points]
    out = []
    for t in range(len(sc.times)):
        hi, lo = sc.next_high[t], sc.next_low[t]
        tide = None
        if sc.trend[t] is not None:
            tide = dict(trend=sc.trend[t], next_high=hi[0] if hi else None,
                        next_high_m=num(hi[1], 0.01) if hi else None, next_low=lo[0] if lo else None,
                        next_low_m=num(lo[1], 0.01) if lo else None, predicted_m=pred[t])  # fmt: skip
        wind = None
        if sc.wind_input[t] is not None and speed[t] is not None and wdir[t] is not None:
            wind = dict(speed_m_s=speed[t], direction_deg=wdir[t], relative=sc.wind_relative[t],
                        input=sc.wind_input[t])  # fmt: skip
        out.append(dict(
            water_level_m=level[t], water_level_source=sc.level_source[t], water_level_residual_m=resid[t], tide=tide,
            wind=wind, shallow_points=[names[i] for i, st in enumerate(state_rows[t]) if st != "ok"],
        ))  # fmt: skip
    return out, (depth_rows, state_rows)


def step_dicts(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, policy: HazardPolicy, units: str,
    conditions: SpotConditions | None = None,
) -> list[dict[str, Any]]:
    """The steps of `build_steps` as plain dicts of rounded values (not yet validated)."""
    return _steps(batch, points, arr, policy, units, conditions)


def _peel_columns(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, names: list[str],
    rounded: Callable[[list[tuple[Any, Any]]], list[list[Any]]],
) -> list[Any]:
    """Each step's peel: a one-point spot's from its breaking angle, all steps at once in numpy;
    several points' step by step (`models.surf_peel.step_peel`)."""
    nt = len(batch.times)
    if len(points) != 1:
        out = []
        for t in range(nt):
            sp = step_peel(points, arr, t, offshore_tp=float(batch.tp[t]), offshore_dir=float(batch.peak_dir[t]))
            out.append(step_peel_fields(points, sp))
        return out
    pc = peel_one_columns(points[0], arr.angle_b[0, :, 0], arr.db[0, :, 0], arr.hb[0, :, 0])
    angle, rate = rounded([(pc.angle_deg, 1.0), (pc.peel_rate_m_s, 0.1)])
    big = np.isfinite(arr.hb[0, :, 1]).tolist()
    name = names[0]
    return [
        dict(direction=d, sweep=sw, angle_deg=a, first_point=name, largest_point=name if b else None,
             peel_rate_m_s=r if d != "closeout" else None, method="breaking-angle")
        if d is not None else dict(NO_PEEL)
        for d, sw, a, r, b in zip(pc.direction, pc.sweep, angle, rate, big, strict=True)
    ]  # fmt: skip


def _steps(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, policy: HazardPolicy, units: str,
    conditions: SpotConditions | None,
) -> list[dict[str, Any]]:
    """The steps, column by column from the arrays (every array rounded in one pass,
    `round_many`), then one object per step and part (plain dicts, validated at once by `build_steps`)."""
    nt = len(batch.times)
    P = len(points)
    K = batch.stack.shape[1] - 1  # trains per step: at most K
    imperial = units == "imperial"
    # hazard on the sets height where it is largest (0 where nothing breaks)
    sets = arr.hb[:, :, 1]
    has = np.isfinite(sets)
    any_has = has.any(axis=0)  # (T,)
    set_max = np.maximum(np.where(any_has, np.max(np.where(has, sets, -np.inf), axis=0), 0.0), 0.0)
    ip = np.where(any_has, np.argmax(np.where(has, sets, -np.inf), axis=0), 0)  # (T,) point of the largest sets
    tt = np.arange(nt)
    haz = hazard_inputs(batch, points, arr, ip, set_max, policy.basis)
    levels = hazard_level(
        policy, set_max, period_s=haz["period_s"], power_kw_m=haz["power_kw_m"],
        rip_likelihood=haz["rip"], shore_break=haz["shore_break"],
        **(conditions.hazard_inputs() if conditions is not None else {"water_level_m": arr.water_level}),
    )  # fmt: skip
    names = [p.name for p in points]
    ok_l = any_has.tolist()
    heights = np.where(any_has[:, None], arr.hb[ip, tt, :3], np.nan)  # (T, 3)
    hb_k = arr.hb[ip, tt, 3 : 3 + K]
    near_k = arr.near_hs[ip, tt, 1 : 1 + K]
    zone = _Zone(arr, ip, any_has, P)
    specs: list[tuple[Any, Any]] = [
        (heights / FOOT, 0.5) if imperial else (heights, 0.1), (haz["rip"], 0.01), (arr.near_tp[ip, tt, 0], 0.1),
        (arr.near_dir[ip, tt, 0], DEG), (arr.db[ip, tt, 1], 0.1), (arr.iribarren[ip, tt, 1], 0.01),
        (batch.coverage or [], 0.01),
        # per train at the step's point (T, K)
        (hb_k, 0.1), (np.where(near_k >= MIN_HEIGHT_M, near_k, np.nan), 0.1), (arr.near_dir[ip, tt, 1 : 1 + K], DEG),
        (hb_k / FOOT if imperial else np.empty((nt, 0)), 0.5),
        # per point (T, P)
        (arr.near_hs[:, :, 0].T, 0.1), (arr.near_tp[:, :, 0].T, 0.1), (arr.near_dir[:, :, 0].T, DEG),
        (arr.hb[:, :, 1].T, 0.1), (arr.db[:, :, 1].T, 0.1), (arr.angle_b[:, :, 1].T, 1.0), (arr.kg[:, :, 1].T, 0.1),
        (arr.iribarren[:, :, 1].T, 0.01), *zone.specs(),
    ]  # fmt: skip
    (hrows, rip, period, ndir, bdepth, xi, coverage, tr_hb, tr_near, tr_dir, tr_ft,
     d0, d1, d2, d3, d4, d5, d6, d7, *zg) = round_many(specs)  # fmt: skip
    zone.rounded = zg
    hc = [dict(typical=a, sets=b, largest=c) for a, b, c in hrows]
    h_on, h_off = ("breaker_height_ft", "breaker_height_m") if imperial else ("breaker_height_m", "breaker_height_ft")
    btype = [(b or None) if ok else None for b, ok in zip(arr.breaker_type[ip, tt, 1].tolist(), ok_l, strict=True)]
    largest = [names[i] if ok else None for i, ok in zip(ip.tolist(), ok_l, strict=True)]
    labels = {lv: policy.label(lv) for lv in set(levels.tolist())}
    pname, pdef, basis = policy.name, policy.is_default, policy.basis
    hazard = [
        dict(level=lv, label=labels[lv], policy=pname, policy_is_default=pdef, rip_current_likelihood=r,
             shore_break=sb, inputs=basis)
        for lv, r, sb in zip(levels.tolist(), rip, haz["shore_break"].tolist(), strict=True)
    ]  # fmt: skip
    off_h, off_tp, off_dir, off_pw, offshore_swells = offshore_parts(batch, units)
    offshore = [
        dict(hm0_m=h or 0.0, peak_period_s=p, direction_deg=d, wave_power_kw_m=w)
        for h, p, d, w in zip(off_h, off_tp, off_dir, off_pw, strict=True)
    ]
    swells: list[list[Any]] = [[] for _ in range(nt)]
    if K:
        tr = zip(tr_hb, tr_near, tr_dir, tr_ft if imperial else [None] * nt, offshore_swells, strict=True)
        swells = [
            [dict(off, breaker_height_m=b[k], nearshore_height_m=n[k], nearshore_direction_deg=d[k],
                  **({"breaker_height_ft": ft[k]} if ft is not None else {}))
             for k, off in enumerate(offs)]
            for b, n, d, ft, offs in tr
        ]  # fmt: skip
    cf, (depth_rows, state_rows) = (
        condition_fields(conditions, points) if conditions is not None else (None, (None, None))
    )
    details: list[list[Any]] = [[] for _ in range(nt)]
    if P:
        det = zip(d0, d1, d2, d3, d4, d5, d6, d7, arr.breaker_type[:, :, 1].T.tolist(), depth_rows or [None] * nt,
                  state_rows or [None] * nt, strict=True)  # fmt: skip
        details = [
            [
                dict(
                    name=names[i], nearshore_height_m=h[i], nearshore_period_s=tp[i], nearshore_direction_deg=dr[i],
                    breaker_height_m=hb[i], breaking_depth_m=db[i], breaking_angle_deg=an[i],
                    komar_gaudiano_height_m=kg[i], iribarren=ir[i], breaker_type=bt[i] or None,
                    **({} if wd is None else dict(water_depth_m=wd[i], depth_state=ws[i])),
                    **zone.point(t, i),
                )
                for i in range(P)
            ]
            for t, (h, tp, dr, hb, db, an, kg, ir, bt, wd, ws) in enumerate(det)
        ]  # fmt: skip
    zones = [zone.step(t) for t in range(nt)]
    peels = _peel_columns(batch, points, arr, names, round_many)
    observed = batch.observed_at or [None] * nt
    estimate = batch.estimate or [None] * nt
    cfs = cf or [{}] * nt
    source, kind, issued = batch.source, batch.kind, batch.issued
    wind_fx = [w if ok else None for w, ok in zip(wind_effects(arr, ip, tt), ok_l, strict=True)]
    cols = zip(
        batch.times, observed, coverage or [None] * nt, estimate, hc, period, ndir, btype, bdepth, xi, wind_fx,
        largest, zones, peels, hazard, offshore, swells, details, cfs, strict=True,
    )  # fmt: skip
    return [
        {
            "time": t, "source": source, "input": kind, "issued": issued, "observed_at": obs,
            "arrival_coverage": cov, "directional_estimate": est, h_on: h, h_off: None, "period_s": per,
            "nearshore_direction_deg": nd, "breaker_type": bt, "breaking_depth_m": bd, "iribarren": x,
            "wind_effect": we, "largest_point": lp, "surf_zone": z, "peel": pl, "hazard": hz, "offshore": of, "swells": sw,
            "points": pts, **c,
        }
        for t, obs, cov, est, h, per, nd, bt, bd, x, we, lp, z, pl, hz, of, sw, pts, c in cols
    ]  # fmt: skip


WIND_METHOD = ("Douglass (1990): onshore wind breaks earlier and spills, offshore wind holds waves up and "
               "plunges; the size of the shift is shoalcast's, not the paper's")


def wind_effects(arr: SpotArrays, ip: np.ndarray, tt: np.ndarray) -> list[dict[str, Any] | None]:
    """Per step at its point: the wind's onshore component, the breaker-type boundary it gave and
    the still-air type (`models.surf`); None without wind."""
    if arr.wind_onshore_m_s is None or arr.spilling_limit is None or arr.breaker_type_still is None:
        return [None] * tt.size
    on, lim = nums(arr.wind_onshore_m_s[ip, tt]), nums(arr.spilling_limit[ip, tt], 0.01)
    still = arr.breaker_type_still[ip, tt, 1].tolist()
    return [None if o is None else dict(method=WIND_METHOD, onshore_component_m_s=o, spilling_below_iribarren=q,
                                        breaker_type_without_wind=s or None)
            for o, q, s in zip(on, lim, still, strict=True)]  # fmt: skip


def hazard_inputs(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, ip: np.ndarray, set_max: np.ndarray,
    basis: str = "nearshore",
) -> dict[str, np.ndarray]:
    """What a policy tests, per step at the step's point (models/hazard.py): nearshore peak period
    and power at the reference point (offshore ones with basis "offshore"), the rip-current
    likelihood (both from `models.surf.hazard_inputs`), the shore-break flag."""
    tt = np.arange(len(batch.times))
    tp = arr.near_tp[ip, tt, 0]
    wl = np.asarray(arr.water_level, dtype=float)
    assert arr.near_power_kw_m is not None and arr.rip is not None  # `compute_spots` fills them (all spots at once)
    power, rip = arr.near_power_kw_m[ip, tt], arr.rip[ip, tt]
    slope = np.array([p.slope for p in points])[ip]  # the break point's bed slope where no profile
    if arr.foreshore_slope is not None:
        fs = arr.foreshore_slope[ip, tt]
        slope = np.where(np.isfinite(fs), fs, slope)
    sb = shore_break(set_max, np.nan_to_num(tp, nan=0.0), slope, near_high_water(wl))
    period = np.nan_to_num(tp, nan=0.0)
    if basis == "offshore":
        period = np.nan_to_num(batch.tp, nan=0.0)
        power = np.nan_to_num(batch.power_kw_m, nan=0.0)
    return dict(period_s=period, power_kw_m=power, rip=rip, shore_break=sb)


class _Zone:
    """The surf-zone values of a batch: per step at its point, and per point (absent where a point
    is on the single-wave path). `specs` are rounded with the step's other arrays (`rounded`)."""

    FIELDS = (("break_distance", 1.0), ("setup", 0.01), ("runup", 0.01), ("foreshore_slope", 0.001))

    def __init__(self, arr: SpotArrays, ip: np.ndarray, any_has: np.ndarray, P: int) -> None:
        self.arr = arr
        self.method = list(arr.method) or ["single-wave"] * P
        self.any = "surf-zone" in self.method
        self.ip = ip.tolist()
        self.has = any_has.tolist()
        self.rounded: list[list[list[Any]]] = []

    def specs(self) -> list[tuple[Any, float]]:
        if not self.any:
            return []
        nt = len(self.has)
        out = []
        for k, q in self.FIELDS:
            v = getattr(self.arr, k)
            out.append((np.full((nt, len(self.method)), np.nan) if v is None else v.T, q))  # (T, P)
        return out

    def point(self, t: int, i: int) -> dict[str, Any]:
        if self.method[i] != "surf-zone":
            return {}
        b, s, r, _ = (g[t][i] for g in self.rounded)
        return dict(surf_model=self.method[i], breaking_distance_m=b, setup_m=s, runup_2pct_m=r)

    def step(self, t: int) -> dict[str, Any] | None:
        if not self.has[t]:
            return None
        i = self.ip[t]
        if self.method[i] != "surf-zone":
            return None
        b, s, r, f = (g[t][i] for g in self.rounded)
        return dict(model=self.method[i], breaking_distance_m=b, setup_m=s, runup_2pct_m=r, foreshore_slope=f)


__all__ = [
    "CAUTIONS", "build_steps", "cautions_for", "condition_fields", "offshore_parts", "peel_fields", "step_dicts", "step_peel_fields",
]  # fmt: skip
