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
import math
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

import numpy as np
from pydantic import TypeAdapter

from app.cautions import HAZARD as HAZARD_CAUTIONS
from app.schemas.outlooks import Step
from app.services.conditions import SpotConditions
from app.services.outlook_numbers import deg, degs, grid, num, nums
from models.breaking import wave_power
from models.conditions import depth_state
from models.constants import FOOT
from models.directions import wrap_180
from models.hazard import HazardPolicy, hazard_level, near_high_water, rip_current_likelihood, shore_break
from models.offshore import OffshoreBatch
from models.peel import PeelResult
from models.surf import MIN_HEIGHT_M, PointSetup, SpotArrays
from models.surf_peel import StepPeel, peel_one_many, step_peel

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


def condition_fields(sc: SpotConditions, points: Sequence[PointSetup]) -> tuple[list[dict[str, Any]], Any]:
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
            tide = dict(trend=sc.trend[t], next_high=hi[0] if hi else None, next_high_m=num(hi[1], 0.01) if hi else None,
                        next_low=lo[0] if lo else None, next_low_m=num(lo[1], 0.01) if lo else None,
                        predicted_m=pred[t])  # fmt: skip
        wind = None
        if sc.wind_input[t] is not None and speed[t] is not None and wdir[t] is not None:
            wind = dict(speed_m_s=speed[t], direction_deg=wdir[t], relative=sc.wind_relative[t], input=sc.wind_input[t])
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
    nt = len(batch.times)
    P = len(points)
    K = batch.stack.shape[1] - 1  # trains per step: at most K
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
    rip_r = nums(haz["rip"], 0.01)
    sb_l = haz["shore_break"].tolist()
    heights = np.where(any_has[:, None], arr.hb[ip, tt, :3], np.nan)  # (T, 3)
    hrows = grid(heights / FOOT, 0.5) if units == "imperial" else grid(heights, 0.1)
    period = nums(arr.near_tp[ip, tt, 0])
    ndir = degs(arr.near_dir[ip, tt, 0])
    bdepth = nums(arr.db[ip, tt, 1])
    xi = nums(arr.iribarren[ip, tt, 1], 0.01)
    btype = arr.breaker_type[ip, tt, 1].tolist()
    wind_fx = wind_effects(arr, ip, tt)
    off_h, off_tp, off_dir, off_pw, offshore_swells = offshore_parts(batch, units)
    labels = {lv: policy.label(lv) for lv in set(levels.tolist())}
    # per point details (T, P) and per train values at the step's point (T, K)
    det = None
    if P:
        det = (
            grid(arr.near_hs[:, :, 0].T), grid(arr.near_tp[:, :, 0].T), grid(arr.near_dir[:, :, 0].T, as_deg=True),
            grid(arr.hb[:, :, 1].T), grid(arr.db[:, :, 1].T), grid(arr.angle_b[:, :, 1].T, 1.0),
            grid(arr.kg[:, :, 1].T), grid(arr.iribarren[:, :, 1].T, 0.01), arr.breaker_type[:, :, 1].T.tolist(),
        )  # fmt: skip
    zone = _Zone(arr, ip, tt, any_has, P)
    if K:
        hb_k = arr.hb[ip, tt, 3 : 3 + K]
        near_k = arr.near_hs[ip, tt, 1 : 1 + K]
        tr_hb = grid(hb_k)
        tr_near = grid(np.where(near_k >= MIN_HEIGHT_M, near_k, np.nan))
        tr_ndir = grid(arr.near_dir[ip, tt, 1 : 1 + K], as_deg=True)
        if units == "imperial":
            tr_hb_ft = grid(hb_k / FOOT, 0.5)
    names = [p.name for p in points]
    cf, (depth_rows, state_rows) = condition_fields(conditions, points) if conditions is not None else (None, (None, None))
    if P == 1:
        one_hb, one_sets = arr.hb[0, :, 0].tolist(), arr.hb[0, :, 1].tolist()
        one_db, one_ang = arr.db[0, :, 0].tolist(), arr.angle_b[0, :, 0].tolist()
        one_peel = peel_one_many(points[0], one_ang, one_db, one_hb)  # every step at once
    steps = []
    for t in range(nt):
        hv = hrows[t]
        hc = dict(typical=hv[0], sets=hv[1], largest=hv[2])
        swells = [
            dict(off, breaker_height_m=tr_hb[t][k], nearshore_height_m=tr_near[t][k],
                 nearshore_direction_deg=tr_ndir[t][k],
                 **({"breaker_height_ft": tr_hb_ft[t][k]} if units == "imperial" else {}))
            for k, off in enumerate(offshore_swells[t])
        ]  # fmt: skip
        details = []
        if det is not None:
            d0, d1, d2, d3, d4, d5, d6, d7, d8 = (c[t] for c in det)
            details = [
                dict(
                    name=names[i], nearshore_height_m=d0[i], nearshore_period_s=d1[i], nearshore_direction_deg=d2[i],
                    breaker_height_m=d3[i], breaking_depth_m=d4[i], breaking_angle_deg=d5[i],
                    komar_gaudiano_height_m=d6[i], iribarren=d7[i], breaker_type=d8[i] or None,
                    **({} if depth_rows is None else dict(water_depth_m=depth_rows[t][i], depth_state=state_rows[t][i])),
                    **zone.point(t, i),
                )  # fmt: skip
                for i in range(P)
            ]
        if P == 1:  # the common single-point spot: straight from the per-step lists
            if not math.isfinite(one_hb[t]):
                peel = dict(NO_PEEL)
            else:
                big = names[0] if math.isfinite(one_sets[t]) else None
                peel = peel_fields(one_peel[t], names[0], big, "breaking-angle")
        else:
            sp = step_peel(points, arr, t, offshore_tp=float(batch.tp[t]), offshore_dir=float(batch.peak_dir[t]))
            peel = step_peel_fields(points, sp)
        lv = int(levels[t])
        ok = bool(any_has[t])
        steps.append(
            dict(
                time=batch.times[t],
                source=batch.source,
                input=batch.kind,
                issued=batch.issued,
                observed_at=batch.observed_at[t] if batch.observed_at else None,
                arrival_coverage=num(batch.coverage[t], 0.01) if batch.coverage else None,
                directional_estimate=batch.estimate[t] if batch.estimate else None,
                breaker_height_m=hc if units == "metric" else None,
                breaker_height_ft=hc if units == "imperial" else None,
                period_s=period[t],
                nearshore_direction_deg=ndir[t],
                breaker_type=(btype[t] or None) if ok else None,
                breaking_depth_m=bdepth[t],
                iribarren=xi[t],
                wind_effect=wind_fx[t] if ok else None,
                largest_point=names[ip[t]] if ok else None,
                surf_zone=zone.step(t),
                peel=peel,
                hazard=dict(level=lv, label=labels[lv], policy=policy.name, policy_is_default=policy.is_default,
                            rip_current_likelihood=rip_r[t], shore_break=sb_l[t], inputs=policy.basis),
                offshore=dict(
                    hm0_m=off_h[t] or 0.0, peak_period_s=off_tp[t], direction_deg=off_dir[t], wave_power_kw_m=off_pw[t]
                ),
                swells=swells,
                points=details,
                **(cf[t] if cf is not None else {}),
            )  # fmt: skip
        )
    return steps


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
    likelihood, the shore-break flag."""
    tt = np.arange(len(batch.times))
    hs = arr.near_hs[ip, tt, 0]
    tp = arr.near_tp[ip, tt, 0]
    wl = np.asarray(arr.water_level, dtype=float)
    href = np.array([p.table.reference_depth_m for p in points])[ip] + wl
    ok = np.isfinite(tp) & (hs > 0) & (href > 0)
    power = np.zeros(tt.size)
    if ok.any():
        power[ok] = wave_power(hs[ok], tp[ok], depth=href[ok], kind="spectral") / 1000.0
    normal = np.array([p.normal_deg for p in points])[ip]
    rip = rip_current_likelihood(hs, wrap_180(np.nan_to_num(arr.near_dir[ip, tt, 0], nan=normal) - normal), wl - wl.mean())
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
    """The surf-zone values of a batch, rounded once: per step at its point, and per point (absent
    where a point is on the single-wave path)."""

    def __init__(self, arr: SpotArrays, ip: np.ndarray, tt: np.ndarray, any_has: np.ndarray, P: int) -> None:
        self.method = list(arr.method) or ["single-wave"] * P
        nan = np.full((P, tt.size), np.nan)
        fields = [getattr(arr, k) if getattr(arr, k) is not None else nan
                  for k in ("break_distance", "setup", "runup", "foreshore_slope")]  # fmt: skip
        self.grid = [grid(f.T, q) for f, q in zip(fields, (1.0, 0.01, 0.01, 0.001), strict=True)]  # (T, P)
        self.ip = ip.tolist()
        self.has = any_has.tolist()

    def point(self, t: int, i: int) -> dict[str, Any]:
        if self.method[i] != "surf-zone":
            return {}
        b, s, r, _ = (g[t][i] for g in self.grid)
        return dict(surf_model=self.method[i], breaking_distance_m=b, setup_m=s, runup_2pct_m=r)

    def step(self, t: int) -> dict[str, Any] | None:
        if not self.has[t]:
            return None
        i = self.ip[t]
        if self.method[i] != "surf-zone":
            return None
        b, s, r, f = (g[t][i] for g in self.grid)
        return dict(model=self.method[i], breaking_distance_m=b, setup_m=s, runup_2pct_m=r, foreshore_slope=f)


__all__ = ["CAUTIONS", "build_steps", "cautions_for", "condition_fields", "offshore_parts", "peel_fields", "step_dicts", "step_peel_fields"]
