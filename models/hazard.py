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

Rules. A level may also list ``rules``: each rule is one more way to reach the level, and holds
when every condition it gives holds (and), so "shore-break and the water level at or above 1.5 m"
or "onshore wind of 10 m/s or more" are one rule each. A level is reached when its criteria hold
(by ``combine``) or any one of its rules holds. Rule conditions: the criteria above, plus the water
level (``water_level_m`` at or above, ``water_level_below_m`` below; m above the bathymetry datum),
the tide's ``tide_trend`` (rising | falling), ``wind_speed_m_s`` (at or above) and
``wind_relative`` (any of offshore | cross | onshore). A condition on an input a step does not have
(no wind source, no tide trend, no rip likelihood) does not hold there: the rule cannot be shown to
apply. Rules are alternatives, so they are not required to increase with level.

Inputs are nearshore (what arrives at the spot, docs/surfzone.md §6): the sets breaker height, the
nearshore peak period and wave power at the table's reference point, the rip-current likelihood
(`rip_current_likelihood`) and the shore-break flag (`shore_break`), and the step's water level,
tide trend and wind (docs/tide-wind.md). A sheltered spot's level is therefore not raised by
offshore energy its swell window blocks. A policy may say ``basis = "offshore"`` to test its
period and power thresholds on the offshore values instead.

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
    "HazardRule",
    "HazardSummary",
    "RIP_CAUTION",
    "TIDE_TRENDS",
    "WIND_RELATIVE",
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

# shown wherever the rip-current likelihood is (CLI, API, pages, CAP): its coefficients are ours
RIP_CAUTION = (
    "Rip-current likelihood: the logistic form of Dusek & Seim (2013) with provisional coefficients "
    "that are not the paper's; read it as a relative guide, not a calibrated probability."
)

N_LEVELS = 4  # levels 0..3
TIDE_TRENDS = ("rising", "falling")
WIND_RELATIVE = ("offshore", "cross", "onshore")  # models.conditions.relative_wind


@dataclass(frozen=True)
class HazardRule:
    """One more way to reach a level: holds where every condition given holds (see the module
    docstring). Thresholds inclusive (``>=``) except `water_level_below_m` (``<``)."""

    set_height_m: float | None = None
    period_s: float | None = None
    power_kw_m: float | None = None
    rip_likelihood: float | None = None  # 0..1
    shore_break: bool | None = None  # True: a shore-break is flagged; False: none is
    water_level_m: float | None = None  # at or above [m above the bathymetry datum]
    water_level_below_m: float | None = None  # below [m above the bathymetry datum]
    tide_trend: str | None = None  # rising | falling
    wind_speed_m_s: float | None = None  # at or above
    wind_relative: tuple[str, ...] | None = None  # any of WIND_RELATIVE

    def to_mapping(self) -> dict[str, Any]:
        return {k: (list(v) if isinstance(v, tuple) else v) for k, v in vars(self).items() if v is not None}


_RULE_FIELDS = tuple(HazardRule.__dataclass_fields__)
_RULE_NONNEG = ("set_height_m", "period_s", "power_kw_m", "rip_likelihood", "wind_speed_m_s")


@dataclass(frozen=True)
class HazardLevel:
    """One level of a policy. Level 0 has no thresholds; levels 1..3 need `set_height_m` or at
    least one rule."""

    level: int
    label: str
    description: str = ""
    set_height_m: float | None = None
    period_s: float | None = None
    power_kw_m: float | None = None
    rip_likelihood: float | None = None  # 0..1
    shore_break: bool | None = None  # True: a shore-break step reaches this level
    rules: tuple[HazardRule, ...] = ()


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

    def _uses(self, name: str) -> bool:
        return any(getattr(lv, name) is not None or any(getattr(r, name) is not None for r in lv.rules)
                   for lv in self.levels)  # fmt: skip

    @property
    def uses_period(self) -> bool:
        return self._uses("period_s")

    @property
    def uses_power(self) -> bool:
        return self._uses("power_kw_m")

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
            unknown = set(item) - {"level", "label", "description", *_THRESHOLDS, "shore_break", "rules"}
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
                        rules=_rules_from(item.get("rules"), f"policy.levels[{i}].rules"),
                    )
                )
            except KeyError:
                raise InvalidInput(f"`policy.levels[{i}].label` is required") from None
            except InvalidInput:
                raise
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
                {k: ([r.to_mapping() for r in v] if k == "rules" else v) for k, v in vars(lv).items()
                 if v is not None and v != ()}
                for lv in self.levels
            ],
        }  # fmt: skip


def _opt_float(v: Any) -> float | None:
    return None if v is None else float(v)


def _rules_from(raw: Any, where: str) -> tuple[HazardRule, ...]:
    if raw is None:
        return ()
    if not isinstance(raw, Sequence) or isinstance(raw, str | bytes):
        raise InvalidInput(f"`{where}` must be a list of rule tables, got {type(raw).__name__}")
    out = []
    for j, item in enumerate(raw):
        w = f"{where}[{j}]"
        if not isinstance(item, Mapping):
            raise InvalidInput(f"`{w}` must be a table, got {type(item).__name__}")
        unknown = set(item) - set(_RULE_FIELDS)
        if unknown:
            raise InvalidInput(f"`{w}` has unknown keys {sorted(unknown)}; a rule takes {list(_RULE_FIELDS)}")
        kw: dict[str, Any] = {}
        for k, v in item.items():
            if v is None:
                continue
            if k == "shore_break":
                kw[k] = _opt_bool(v, f"{w}.shore_break")
            elif k == "tide_trend":
                kw[k] = str(v)
            elif k == "wind_relative":
                kw[k] = (str(v),) if isinstance(v, str) else tuple(str(x) for x in v)
            else:
                try:
                    kw[k] = float(v)
                except (TypeError, ValueError, OverflowError):
                    raise InvalidInput(f"`{w}.{k}` must be a number, got {v!r}") from None
        out.append(HazardRule(**kw))
    return tuple(out)


def _check_rule(r: HazardRule, where: str) -> None:
    if not isinstance(r, HazardRule):
        raise InvalidInput(f"`{where}` must be a HazardRule, got {type(r).__name__}")
    if all(getattr(r, k) is None for k in _RULE_FIELDS):
        raise InvalidInput(f"`{where}` has no conditions; give at least one of {list(_RULE_FIELDS)}")
    for k in (*_RULE_NONNEG, "water_level_m", "water_level_below_m"):
        v = getattr(r, k)
        if v is None:
            continue
        if not math.isfinite(v) or (k in _RULE_NONNEG and v < 0):
            raise InvalidInput(f"`{where}.{k}` must be finite{' and >= 0' if k in _RULE_NONNEG else ''}, got {v!r}")
    if r.rip_likelihood is not None and r.rip_likelihood > 1:
        raise InvalidInput(f"`{where}.rip_likelihood` is a probability (0..1), got {r.rip_likelihood!r}")
    if r.water_level_m is not None and r.water_level_below_m is not None and r.water_level_below_m <= r.water_level_m:
        raise InvalidInput(f"`{where}.water_level_below_m` ({r.water_level_below_m!r}) must be above "
                           f"`water_level_m` ({r.water_level_m!r}), or the rule never holds")  # fmt: skip
    if r.tide_trend is not None and r.tide_trend not in TIDE_TRENDS:
        raise InvalidInput(f"`{where}.tide_trend` must be 'rising' or 'falling', got {r.tide_trend!r}")
    if r.wind_relative is not None:
        if not r.wind_relative:
            raise InvalidInput(f"`{where}.wind_relative` must list at least one of {list(WIND_RELATIVE)}")
        bad = [x for x in r.wind_relative if x not in WIND_RELATIVE]
        if bad:
            raise InvalidInput(f"`{where}.wind_relative` must be among {list(WIND_RELATIVE)}, got {bad[0]!r}")


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
        if lv.rules and i == 0:
            raise InvalidInput(f"`{where}.rules`: level 0 takes no rules")
        for j, r in enumerate(lv.rules):
            _check_rule(r, f"{where}.rules[{j}]")
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
        if i >= 1 and lv.set_height_m is None and not lv.rules:
            raise InvalidInput(f"`{where}.set_height_m` is required for levels 1..3 (or give `rules`)")
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


def _labels(x: ArrayLike | None, name: str, allowed: tuple[str, ...]) -> NDArray[np.object_] | None:
    """Per-step labels (None or '' where the input is missing at that step)."""
    if x is None:
        return None
    a = np.asarray(x, dtype=object)
    flat = a.ravel()
    for i, v in enumerate(flat.tolist()):
        if v is not None and v != "" and v not in allowed:
            raise InvalidInput(f"`{name}` must be one of {list(allowed)} (or null), got {v!r} at index {i}")
    return a


def hazard_level(
    policy: HazardPolicy,
    set_height_m: ArrayLike,
    period_s: ArrayLike | None = None,
    power_kw_m: ArrayLike | None = None,
    *,
    rip_likelihood: ArrayLike | None = None,
    shore_break: ArrayLike | None = None,
    water_level_m: ArrayLike | None = None,
    tide_trend: ArrayLike | None = None,
    wind_speed_m_s: ArrayLike | None = None,
    wind_relative: ArrayLike | None = None,
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
    water_level_m : water level above the bathymetry datum [m] (NaN: unknown at that step)
    tide_trend : 'rising' | 'falling' | None per step
    wind_speed_m_s : [m/s], NaN where there is no wind
    wind_relative : 'offshore' | 'cross' | 'onshore' | None per step

    Rule conditions on an input not given (or missing at a step) do not hold.
    """
    if not isinstance(policy, HazardPolicy):
        raise InvalidInput(f"`policy` must be a HazardPolicy, got {type(policy).__name__}")
    named: dict[str, Any] = {
        "set_height_m": _series(set_height_m, "set_height_m", True),
        "period_s": _series(period_s, "period_s", policy.uses_period),
        "power_kw_m": _series(power_kw_m, "power_kw_m", policy.uses_power),
        "rip_likelihood": _series(rip_likelihood, "rip_likelihood", False),  # not given: not tested
        "shore_break": None if shore_break is None else np.asarray(shore_break, dtype=bool),
        "water_level_m": _finite_or_nan(water_level_m, "water_level_m"),
        "tide_trend": _labels(tide_trend, "tide_trend", TIDE_TRENDS),
        "wind_speed_m_s": _finite_or_nan(wind_speed_m_s, "wind_speed_m_s", nonneg=True),
        "wind_relative": _labels(wind_relative, "wind_relative", WIND_RELATIVE),
    }
    keys = [k for k, v in named.items() if v is not None]
    try:
        arrays = np.broadcast_arrays(*(named[k] for k in keys))
    except ValueError as exc:
        raise InvalidInput(f"the hazard inputs' shapes do not broadcast: {exc}") from None
    x: dict[str, Any] = dict.fromkeys(named)
    x.update(zip(keys, arrays, strict=True))
    h, t, p, r, sb = (x[k] for k in ("set_height_m", "period_s", "power_kw_m", "rip_likelihood", "shore_break"))
    level = np.zeros(h.shape, dtype=np.int8)
    for lv in policy.levels[1:]:
        tests = [] if lv.set_height_m is None else [h >= lv.set_height_m]
        if lv.period_s is not None:
            tests.append(t >= lv.period_s)
        if lv.power_kw_m is not None:
            tests.append(p >= lv.power_kw_m)
        if lv.rip_likelihood is not None and r is not None:
            tests.append(r >= lv.rip_likelihood)
        if lv.shore_break and sb is not None:
            tests.append(sb)
        if not tests:
            hit = np.zeros(h.shape, dtype=bool)
        else:
            hit = np.logical_or.reduce(tests) if policy.combine == "any" else np.logical_and.reduce(tests)
        for rule in lv.rules:
            hit = hit | _rule_holds(rule, x, h.shape)
        # nested thresholds: a higher level reached overrides the lower one
        level[hit] = lv.level
    return level


def _finite_or_nan(v: ArrayLike | None, name: str, *, nonneg: bool = False) -> NDArray[np.float64] | None:
    """A float series where NaN means 'unknown at that step'; infinities (and negatives) refused."""
    if v is None:
        return None
    a = np.asarray(v, dtype=float)
    bad = np.isinf(a) | ((a < 0) if nonneg else False)
    if np.any(bad):
        idx = tuple(int(i) for i in np.argwhere(bad)[0])
        raise InvalidInput(f"`{name}` must be finite{' and >= 0' if nonneg else ''} (or NaN: unknown), "
                           f"got {a[idx]!r} at index {idx}")  # fmt: skip
    return a


def _rule_holds(rule: HazardRule, x: dict[str, Any], shape: tuple[int, ...]) -> NDArray[np.bool_]:
    """Where every condition of `rule` holds; a condition on a missing input does not."""
    ok = np.ones(shape, dtype=bool)
    with np.errstate(invalid="ignore"):  # NaN compares False: unknown does not hold
        for k in ("set_height_m", "period_s", "power_kw_m", "rip_likelihood", "water_level_m", "wind_speed_m_s"):
            thr = getattr(rule, k)
            if thr is not None:
                ok &= False if x[k] is None else (x[k] >= thr)
        if rule.water_level_below_m is not None:
            w = x["water_level_m"]
            ok &= False if w is None else (w < rule.water_level_below_m)
        if rule.shore_break is not None:
            sb = x["shore_break"]
            ok &= False if sb is None else (sb == rule.shore_break)
        if rule.tide_trend is not None:
            tr = x["tide_trend"]
            ok &= False if tr is None else (tr == rule.tide_trend).astype(bool)
        if rule.wind_relative is not None:
            wr = x["wind_relative"]
            ok &= False if wr is None else np.logical_or.reduce([(wr == v).astype(bool) for v in rule.wind_relative])
    return ok


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
