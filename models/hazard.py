"""Hazard levels 0..3 from an agency's policy: thresholds on what arrives at the spot.

A policy is the agency's: it names its own labels and thresholds. `DEFAULT_POLICY` is only a
default (neutral labels "level 0".."level 3", round-number thresholds chosen for this package,
calibrated for no place) and says so in its name and descriptions.

Rule. Level L (1..3) is reached when its criteria hold; the level of a step is the highest level
reached. Each level has a set-breaker-height threshold and optionally a period and a wave-power
threshold. With ``combine="any"`` (default) any one given criterion reaching its threshold is
enough (long-period surges and powerful swell are hazards on their own); with ``combine="all"``
every given criterion must hold. Thresholds are inclusive (``>=``) and must not decrease with
level, so the levels are nested.

Inputs are nearshore (what arrives at the spot, docs/surfzone.md §6): the sets breaker height, the
nearshore peak period and wave power at the table's reference point, the rip-current likelihood
(`rip_current_likelihood`) and the shore-break flag (`shore_break`). A sheltered spot's level is
therefore not raised by offshore energy its swell window blocks. A policy may say
``basis = "offshore"`` to test its period and power thresholds on the offshore values instead.

Every hazard result carries `CAUTION`: this is guidance, and the agency's own procedures,
lifeguards, official warnings and local rules decide.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import RHO_SEAWATER, G
from models.errors import InvalidInput
from models.times import to_seconds

__all__ = [
    "CAUTION",
    "DEFAULT_POLICY",
    "HazardLevel",
    "HazardPolicy",
    "HazardSummary",
    "hazard_level",
    "hazard_summary",
    "rip_current_likelihood",
    "shore_break",
    "wave_power_deep_kw_m",
]

CAUTION = (
    "Hazard levels are guidance only; conditions change. The agency's own procedures, lifeguards, "
    "official warnings and local rules decide."
)

N_LEVELS = 4  # levels 0..3


@dataclass(frozen=True)
class HazardLevel:
    """One level of a policy. Level 0 has no thresholds; levels 1..3 need `set_height_m`."""

    level: int
    label: str
    description: str = ""
    set_height_m: float | None = None
    period_s: float | None = None
    power_kw_m: float | None = None
    rip_likelihood: float | None = None  # 0..1
    shore_break: bool | None = None  # True: a shore-break step reaches this level


_THRESHOLDS = ("set_height_m", "period_s", "power_kw_m", "rip_likelihood")


@dataclass(frozen=True)
class HazardPolicy:
    """Levels 0..3 (in order) with the agency's labels and thresholds; see the module docstring."""

    name: str
    levels: tuple[HazardLevel, ...]
    combine: str = "any"
    is_default: bool = False
    basis: str = "nearshore"  # period and power thresholds on nearshore (default) or offshore values

    def __post_init__(self) -> None:
        _check_policy(self)

    def label(self, level: int) -> str:
        """The agency's label for `level` (0..3)."""
        if not 0 <= int(level) < N_LEVELS:
            raise InvalidInput(f"`level` must be 0..3, got {level!r}")
        return self.levels[int(level)].label

    @property
    def uses_period(self) -> bool:
        return any(lv.period_s is not None for lv in self.levels)

    @property
    def uses_power(self) -> bool:
        return any(lv.power_kw_m is not None for lv in self.levels)

    @property
    def uses_rip(self) -> bool:
        return any(lv.rip_likelihood is not None for lv in self.levels)

    @property
    def uses_shore_break(self) -> bool:
        return any(lv.shore_break for lv in self.levels)

    @classmethod
    def from_mapping(cls, data: Mapping[str, Any]) -> HazardPolicy:
        """Build from plain data (parsed TOML / JSON):

        ``{"name": ..., "combine": "any", "levels": [{"level": 0, "label": ..., "description": ...},
        {"level": 1, "label": ..., "set_height_m": 1.0, "period_s": 16, "power_kw_m": 50}, ...]}``
        """
        if not isinstance(data, Mapping):
            raise InvalidInput(f"`policy` must be a mapping, got {type(data).__name__}")
        raw = data.get("levels")
        if not isinstance(raw, Sequence) or isinstance(raw, str | bytes):
            raise InvalidInput("`policy.levels` must be a list of 4 level tables (levels 0..3)")
        levels = []
        for i, item in enumerate(raw):
            if not isinstance(item, Mapping):
                raise InvalidInput(f"`policy.levels[{i}]` must be a table, got {type(item).__name__}")
            unknown = set(item) - {"level", "label", "description", *_THRESHOLDS, "shore_break"}
            if unknown:
                raise InvalidInput(f"`policy.levels[{i}]` has unknown keys {sorted(unknown)}")
            try:
                levels.append(
                    HazardLevel(
                        level=int(item.get("level", i)),
                        label=str(item["label"]),
                        description=str(item.get("description", "")),
                        set_height_m=_opt_float(item.get("set_height_m")),
                        period_s=_opt_float(item.get("period_s")),
                        power_kw_m=_opt_float(item.get("power_kw_m")),
                        rip_likelihood=_opt_float(item.get("rip_likelihood")),
                        shore_break=_opt_bool(item.get("shore_break"), f"policy.levels[{i}].shore_break"),
                    )
                )
            except KeyError:
                raise InvalidInput(f"`policy.levels[{i}].label` is required") from None
            except (TypeError, ValueError, OverflowError) as exc:
                raise InvalidInput(f"`policy.levels[{i}]`: {exc}") from None
        return cls(
            name=str(data.get("name", "policy")),
            levels=tuple(levels),
            combine=str(data.get("combine", "any")),
            is_default=bool(data.get("is_default", False)),
            basis=str(data.get("basis", "nearshore")),
        )

    def to_mapping(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "combine": self.combine,
            "is_default": self.is_default,
            "basis": self.basis,
            "levels": [
                {k: v for k, v in vars(lv).items() if v is not None} for lv in self.levels
            ],
        }


def _opt_float(v: Any) -> float | None:
    return None if v is None else float(v)


def _opt_bool(v: Any, where: str) -> bool | None:
    if v is None or isinstance(v, bool):
        return v
    raise InvalidInput(f"`{where}` must be true or false, got {v!r}")


def _check_policy(p: HazardPolicy) -> None:
    if p.combine not in ("any", "all"):
        raise InvalidInput(f"`policy.combine` must be 'any' or 'all', got {p.combine!r}")
    if p.basis not in ("nearshore", "offshore"):
        raise InvalidInput(f"`policy.basis` must be 'nearshore' or 'offshore', got {p.basis!r}")
    if len(p.levels) != N_LEVELS:
        raise InvalidInput(f"`policy.levels` must list levels 0..3 (4 entries), got {len(p.levels)}")
    for i, lv in enumerate(p.levels):
        where = f"policy.levels[{i}]"
        if lv.level != i:
            raise InvalidInput(f"`{where}.level` must be {i} (levels in order 0..3), got {lv.level!r}")
        if not lv.label.strip():
            raise InvalidInput(f"`{where}.label` must not be empty")
        for name in (*_THRESHOLDS, "shore_break"):
            v = getattr(lv, name)
            if v is None:
                continue
            if i == 0:
                raise InvalidInput(f"`{where}.{name}`: level 0 takes no thresholds, got {v!r}")
            if name == "shore_break":
                continue
            if not (math.isfinite(v) and v >= 0):
                raise InvalidInput(f"`{where}.{name}` must be finite and >= 0, got {v!r}")
            if name == "rip_likelihood" and v > 1:
                raise InvalidInput(f"`{where}.rip_likelihood` is a probability (0..1), got {v!r}")
        if i >= 1 and lv.set_height_m is None:
            raise InvalidInput(f"`{where}.set_height_m` is required for levels 1..3")
    for name in _THRESHOLDS:
        prev = -math.inf
        for i in range(1, N_LEVELS):
            v = getattr(p.levels[i], name)
            if v is None:
                continue
            if v < prev:
                raise InvalidInput(
                    f"`policy.levels[{i}].{name}` = {v!r} is below the previous level's {prev!r}; "
                    "thresholds must not decrease with level"
                )
            prev = v


DEFAULT_POLICY = HazardPolicy(
    name="default (not an agency policy)",
    is_default=True,
    levels=(
        HazardLevel(0, "level 0", "default: small breakers at the spot"),
        HazardLevel(1, "level 1", "default: moderate breakers (sets from 1 m) or rip currents likely (from 0.4)",
                    set_height_m=1.0, rip_likelihood=0.4),
        HazardLevel(2, "level 2", "default: large breakers (sets from 2 m), rip currents very likely (from 0.7) "
                    "or a shore-break", set_height_m=2.0, rip_likelihood=0.7, shore_break=True),
        HazardLevel(3, "level 3", "default: very large breakers (sets from 3.5 m)", set_height_m=3.5),
    ),
)  # fmt: skip


def _series(x: ArrayLike | None, name: str, needed: bool) -> NDArray[np.float64] | None:
    if x is None:
        if needed:
            raise InvalidInput(f"`{name}` is required: the policy has {name.replace('_', ' ')} thresholds")
        return None
    a = np.asarray(x, dtype=float)
    bad = ~np.isfinite(a) | (a < 0)
    if np.any(bad):
        idx = tuple(int(i) for i in np.argwhere(bad)[0])
        raise InvalidInput(f"`{name}` must be finite and >= 0, got {a[idx]!r} at index {idx}")
    return a


def hazard_level(
    policy: HazardPolicy,
    set_height_m: ArrayLike,
    period_s: ArrayLike | None = None,
    power_kw_m: ArrayLike | None = None,
    *,
    rip_likelihood: ArrayLike | None = None,
    shore_break: ArrayLike | None = None,
) -> NDArray[np.int8]:
    """Hazard level 0..3 per element (inputs broadcast together).

    Parameters
    ----------
    policy : HazardPolicy
    set_height_m : set breaker height H1/10 at breaking [m]
    period_s : peak (or the policy's stated) period [s]; required if the policy has period thresholds
    power_kw_m : wave power [kW/m]; required if the policy has power thresholds
    rip_likelihood : 0..1 (`rip_current_likelihood`); without it rip thresholds are not tested
    shore_break : bool flags (`shore_break`); without them shore-break levels are not tested
    """
    if not isinstance(policy, HazardPolicy):
        raise InvalidInput(f"`policy` must be a HazardPolicy, got {type(policy).__name__}")
    h = _series(set_height_m, "set_height_m", True)
    t = _series(period_s, "period_s", policy.uses_period)
    p = _series(power_kw_m, "power_kw_m", policy.uses_power)
    r = _series(rip_likelihood, "rip_likelihood", False)  # not given: those criteria are not tested
    sb = None if shore_break is None else np.asarray(shore_break, dtype=bool)
    given = [a for a in (h, t, p, r, sb) if a is not None]
    try:
        arrays = np.broadcast_arrays(*given)
    except ValueError as exc:
        raise InvalidInput(f"the hazard inputs' shapes do not broadcast: {exc}") from None
    h = arrays[0]
    rest = iter(arrays[1:])
    t = next(rest) if t is not None else None
    p = next(rest) if p is not None else None
    r = next(rest) if r is not None else None
    sb = next(rest) if sb is not None else None
    level = np.zeros(h.shape, dtype=np.int8)
    for lv in policy.levels[1:]:
        tests = [h >= lv.set_height_m]
        if lv.period_s is not None:
            tests.append(t >= lv.period_s)
        if lv.power_kw_m is not None:
            tests.append(p >= lv.power_kw_m)
        if lv.rip_likelihood is not None and r is not None:
            tests.append(r >= lv.rip_likelihood)
        if lv.shore_break and sb is not None:
            tests.append(sb)
        hit = np.logical_or.reduce(tests) if policy.combine == "any" else np.logical_and.reduce(tests)
        # nested thresholds: a higher level reached overrides the lower one
        level[hit] = lv.level
    return level


# Rip-current likelihood: the logistic form and predictors of Dusek & Seim (2013, "A probabilistic
# rip current forecast model", J. Coastal Res. 29(4), 909-925): nearshore significant height, the
# mean wave direction to the shore normal and the tidal elevation. The coefficients below are NOT
# the paper's fitted values (we had no copy to take them from): shoalcast's placeholders, chosen
# from memory of the paper's findings (likelihood rises with height from about 1 m, is highest for
# shore-normal waves and at low water). Replace them with the paper's before relying on the number;
# an agency can also set its own (`RipModel`). The paper's post-event-window predictor is left out.
@dataclass(frozen=True)
class RipModel:
    intercept: float = -5.0
    per_height_m: float = 2.2  # per metre of nearshore Hs
    per_angle_deg: float = -0.06  # per degree of |mean direction - shore normal|
    per_water_m: float = -0.8  # per metre of water level above the period's mean (low water: more rips)
    source: str = "logistic form of Dusek & Seim (2013); placeholder coefficients from memory, not the paper's"


RIP_MODEL = RipModel()


def rip_current_likelihood(
    nearshore_hs_m: ArrayLike,
    angle_to_normal_deg: ArrayLike,
    water_anomaly_m: ArrayLike = 0.0,
    *,
    model: RipModel = RIP_MODEL,
) -> NDArray[np.float64]:
    """P(hazardous rip currents) = 1 / (1 + exp(-z)), z = b0 + b1 Hs + b2 |θ| + b3 η' (see
    `RipModel`); NaN inputs (nothing arrives) give 0."""
    hs = np.nan_to_num(np.asarray(nearshore_hs_m, dtype=float), nan=0.0)
    th = np.abs(np.nan_to_num(np.asarray(angle_to_normal_deg, dtype=float), nan=90.0))
    eta = np.nan_to_num(np.asarray(water_anomaly_m, dtype=float), nan=0.0)
    if np.any(hs < 0):
        raise InvalidInput("`nearshore_hs_m` must be >= 0")
    z = model.intercept + model.per_height_m * hs + model.per_angle_deg * np.minimum(th, 90.0) + model.per_water_m * eta
    return np.where(hs > 0, 1.0 / (1.0 + np.exp(-z)), 0.0)


STEEP_FORESHORE = 0.1  # tan β from which a foreshore counts as steep (1:10, common practice)
NEAR_HIGH_WATER = 0.75  # the top quarter of the period's water-level range counts as near high water
MIN_SHORE_BREAK_M = 0.5  # sets breakers smaller than this are not flagged


def near_high_water(water_level_m: ArrayLike, *, min_range_m: float = 0.05) -> NDArray[np.bool_]:
    """True in the top quarter of the series' range; all True when it hardly varies (no tide known:
    high water cannot be ruled out)."""
    w = np.asarray(water_level_m, dtype=float)
    lo, hi = float(np.min(w)), float(np.max(w))
    if hi - lo < min_range_m:
        return np.ones(w.shape, dtype=bool)
    return w >= lo + NEAR_HIGH_WATER * (hi - lo)


def shore_break(
    sets_height_m: ArrayLike,
    period_s: ArrayLike,
    foreshore_slope: ArrayLike,
    high_water: ArrayLike,
    *,
    g: float = G,
) -> NDArray[np.bool_]:
    """Shore-break flag: breakers plunging or collapsing on a steep foreshore near high water
    (common practice). Type from the Iribarren number on the foreshore slope, ξ = tan β/√(H/L0)
    >= 0.4 (Battjes 1974), tan β >= STEEP_FORESHORE, sets >= MIN_SHORE_BREAK_M. NaN -> False."""
    H = np.asarray(sets_height_m, dtype=float)
    T = np.asarray(period_s, dtype=float)
    b = np.asarray(foreshore_slope, dtype=float)
    ok = np.isfinite(H) & np.isfinite(T) & np.isfinite(b) & (H >= MIN_SHORE_BREAK_M) & (T > 0)
    L0 = g * np.where(ok, T, 1.0) ** 2 / (2.0 * math.pi)
    xi = np.where(ok, np.where(ok, b, 0.0) / np.sqrt(np.where(ok, H, 1.0) / L0), 0.0)
    return ok & (b >= STEEP_FORESHORE) & (xi >= 0.4) & np.asarray(high_water, dtype=bool)


class HazardSummary(NamedTuple):
    current_level: int
    current_label: str | None
    max_level: int  # highest level in [now, now + horizon]
    max_label: str | None
    onset_time: Any  # first time in the horizon at which max_level is reached (same type as `times`)
    onset_index: int
    horizon_hours: float
    caution: str


def hazard_summary(
    times: Sequence[Any],
    levels: ArrayLike,
    *,
    horizon_hours: float,
    now: Any = None,
    policy: HazardPolicy | None = None,
) -> HazardSummary:
    """Current level, the highest level in the next `horizon_hours` and when it starts.

    `times` ascending (aware datetimes, numpy datetime64 or seconds); `now` defaults to the first
    time. The current level is the level of the last step at or before `now` (the first step if
    all are later). The horizon is ``now <= t <= now + horizon_hours`` plus the current step; the
    onset is the first step in it whose level equals the highest level (if the current level is
    already the highest, the onset is the current step).
    """
    ts, items = to_seconds(times, "times")
    lev = np.asarray(levels)
    if lev.shape != ts.shape:
        raise InvalidInput(f"`levels` must have one entry per time ({ts.size}), got shape {lev.shape}")
    if not np.all(np.isin(lev, np.arange(N_LEVELS))):
        bad = lev[~np.isin(lev, np.arange(N_LEVELS))][0]
        raise InvalidInput(f"`levels` must be integers 0..3, got {bad!r}")
    if np.any(np.diff(ts) <= 0):
        i = int(np.argmax(np.diff(ts) <= 0)) + 1
        raise InvalidInput(f"`times` must be strictly ascending; `times[{i}]` is not after `times[{i - 1}]`")
    if not (math.isfinite(horizon_hours) and horizon_hours >= 0):
        raise InvalidInput(f"`horizon_hours` must be finite and >= 0, got {horizon_hours!r}")
    t_now = ts[0] if now is None else to_seconds([now], "now")[0][0]
    lev = lev.astype(int)
    i_cur = max(int(np.searchsorted(ts, t_now, side="right")) - 1, 0)
    in_h = (ts >= t_now) & (ts <= t_now + horizon_hours * 3600.0)
    in_h[i_cur] = True
    idx = np.flatnonzero(in_h)
    max_level = int(lev[idx].max())
    onset = int(idx[np.argmax(lev[idx] == max_level)])
    cur = int(lev[i_cur])
    return HazardSummary(
        current_level=cur,
        current_label=policy.label(cur) if policy is not None else None,
        max_level=max_level,
        max_label=policy.label(max_level) if policy is not None else None,
        onset_time=items[onset],
        onset_index=onset,
        horizon_hours=float(horizon_hours),
        caution=CAUTION,
    )


def wave_power_deep_kw_m(
    hm0_m: ArrayLike, energy_period_s: ArrayLike, *, rho: float = RHO_SEAWATER, g: float = G
) -> NDArray[np.float64]:
    """Deep-water wave power per metre of crest, P = ρ g² Hm0² Te / (64π), in kW/m."""
    h = np.asarray(hm0_m, dtype=float)
    te = np.asarray(energy_period_s, dtype=float)
    if np.any(~np.isfinite(h) | (h < 0)):
        raise InvalidInput(f"`hm0_m` must be finite and >= 0, got {h[~np.isfinite(h) | (h < 0)].ravel()[0]!r}")
    if np.any(~np.isfinite(te) | (te <= 0)):
        raise InvalidInput(
            f"`energy_period_s` must be finite and > 0, got {te[~np.isfinite(te) | (te <= 0)].ravel()[0]!r}"
        )
    return rho * g**2 * h**2 * te / (64.0 * math.pi) / 1000.0
