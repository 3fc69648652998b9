"""app.services.outlook_steps: the steps shown from the breaker arrays (the step-building piece).

Outside values: 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959); a
closeout has no meaningful peel rate (common practice). Safety: every outlook carries the
project's cautions (guidance only; conditions change; lifeguards, official warnings, local rules).
"""

from __future__ import annotations

import importlib.util
import json
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest

from app.schemas.outlooks import Step
from app.services import outlook_steps as steps_mod
from models.hazard import CAUTION, DEFAULT_POLICY
from models.offshore import prepare_offshore
from models.spectra import cos2s, jonswap
from models.surf import PointSetup, compute_spots

_spec = importlib.util.spec_from_file_location(
    "_surf_tables", Path(__file__).parents[2] / "models" / "_surf_tables.py"
)
tb = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_surf_tables", tb)
_spec.loader.exec_module(tb)

T0 = datetime(2031, 1, 1, tzinfo=UTC)


def _setup(hs=(0.6, 1.5, 3.0), n_points: int = 2):  # type: ignore[no-untyped-def]
    e = [jonswap(tb.FREQ, hs=h, tp=12.0)[:, None] * cos2s(tb.DIRS, mean_dir_deg=280.0, s=40.0)[None, :] for h in hs]
    b = prepare_offshore([T0 + timedelta(hours=k) for k in range(len(hs))], tb.FREQ, tb.DIRS, np.stack(e),
                         source="s", kind="model-forecast")  # fmt: skip
    pts = [PointSetup(f"p{i}", 0.0, 300.0 * i, tb.table(k=1.0 - 0.2 * i), 2.0, 0.02, 270.0) for i in range(n_points)]
    return b, pts, compute_spots(b, [pts])[0]


def test_build_steps_is_the_validated_step_dicts() -> None:
    b, pts, arr = _setup()
    raw = steps_mod.step_dicts(b, pts, arr, DEFAULT_POLICY, "metric")
    built = steps_mod.build_steps(b, pts, arr, DEFAULT_POLICY, "metric")
    assert [s.model_dump() for s in built] == [Step.model_validate(d).model_dump() for d in raw]
    json.dumps([s.model_dump(mode="json") for s in built], allow_nan=False)


def test_the_step_shows_the_point_with_the_largest_sets_and_its_hazard() -> None:
    b, pts, arr = _setup()
    built = steps_mod.build_steps(b, pts, arr, DEFAULT_POLICY, "metric")
    for t, s in enumerate(built):
        i = int(np.nanargmax(arr.hb[:, t, 1]))
        assert s.largest_point == pts[i].name == "p0"  # K = 1 beats K = 0.8
        assert s.breaker_height_m.sets == pytest.approx(round(arr.hb[i, t, 1], 1))
        level = sum(s.breaker_height_m.sets >= lv for lv in (1.0, 2.0, 3.5))  # the default policy's thresholds
        if all(abs(s.breaker_height_m.sets - lv) > 0.05 for lv in (1.0, 2.0, 3.5)):
            assert s.hazard.level == level
        assert [p.name for p in s.points] == ["p0", "p1"]
        assert s.peel.method == "break-times"


def test_imperial_heights_are_the_metric_ones_in_feet() -> None:
    b, pts, arr = _setup(n_points=1)
    metric = steps_mod.build_steps(b, pts, arr, DEFAULT_POLICY, "metric")
    feet = steps_mod.build_steps(b, pts, arr, DEFAULT_POLICY, "imperial")
    for m, f, t in zip(metric, feet, range(3), strict=True):
        assert f.breaker_height_m is None and m.breaker_height_ft is None
        assert f.breaker_height_ft.typical == pytest.approx(round(arr.hb[0, t, 0] / 0.3048 * 2) / 2)
        assert f.peel == m.peel and f.hazard == m.hazard
    assert "offshore-imperial" in b.memo and "offshore-metric" in b.memo  # offshore parts rounded once per units


def test_peel_fields_give_a_closeout_no_rate() -> None:
    from models.peel import peel_from_breaking_angle

    closeout = peel_from_breaking_angle(wave_from_deg=272.0, contour_normal_from_deg=270.0, crest_speed_m_s=4.0)
    peeling = peel_from_breaking_angle(wave_from_deg=310.0, contour_normal_from_deg=270.0, crest_speed_m_s=4.0)
    assert steps_mod.peel_fields(closeout, "a", None, "breaking-angle")["peel_rate_m_s"] is None
    assert steps_mod.peel_fields(peeling, "a", "a", "breaking-angle")["peel_rate_m_s"] > 0
    assert steps_mod.step_peel_fields([], None) == {"direction": None, "angle_deg": None, "first_point": None}


def test_cautions_are_always_there_and_the_default_policy_says_so() -> None:
    out = steps_mod.cautions_for(DEFAULT_POLICY)
    assert CAUTION in out and any("lifeguards" in c for c in out) and any("Guidance only" in c for c in out)
    assert any("default policy" in c for c in out)


def test_policy_rules_see_the_steps_water_level_tide_and_wind() -> None:
    # a rule on the step's wind and water level (models/hazard.py): onshore wind of 10 m/s or more
    # is level 3; a rising tide still below 0 m is level 2. Onshore = from within 45° of the facing
    # (common practice): this break faces 270.
    from app.services import conditions as cond
    from models.hazard import HazardPolicy
    from models.tide import Constituent

    b, pts, arr = _setup(hs=(0.6, 0.6, 0.6), n_points=1)
    empty = cond.Series(np.empty(0), np.empty(0))
    ft = np.array([t.timestamp() for t in b.times])
    # model-forecast wind as velocity components (toward): 12 m/s toward the east, from the west
    fc = (cond.Series(ft, np.full(3, 12.0)), cond.Series(ft, np.zeros(3)), cond.Series(ft, np.array([12.0, 9.0, 12.0])))
    ci = cond.ConditionInputs(
        faces_deg=270.0, mean_level_m=0.0, constituents=(Constituent("M2", 1.0, 0.0),), level_observed=empty,
        wind_observed=(empty, empty, empty), wind_forecast=fc, wind_sources=("m",), level_sources=(),
        observation_ids=(),
    )  # fmt: skip
    sc = cond.spot_conditions(ci, b.times)
    arr = compute_spots(b, [pts], water_level_m=sc.conditions.water_level_m)[0]
    policy = HazardPolicy.from_mapping({"name": "guards", "levels": [
        {"label": "green"}, {"label": "yellow", "set_height_m": 1.0},
        {"label": "red", "set_height_m": 2.0, "rules": [{"tide_trend": "rising", "water_level_below_m": 0.0}]},
        {"label": "closed", "set_height_m": 3.0, "rules": [{"wind_relative": "onshore", "wind_speed_m_s": 10.0}]},
    ]})  # fmt: skip
    built = steps_mod.build_steps(b, pts, arr, policy, "metric", sc)
    rising_low = [tr == "rising" and wl < 0.0 for tr, wl in zip(sc.trend, sc.conditions.water_level_m, strict=True)]
    by_height = [s.hazard.level for s in steps_mod.build_steps(b, pts, arr, policy, "metric")]  # no conditions
    assert max(by_height) < 2
    expect = [3 if w >= 10.0 else (2 if f else h)
              for w, f, h in zip(sc.conditions.wind_speed_m_s, rising_low, by_height, strict=True)]  # fmt: skip
    assert [s.hazard.level for s in built] == expect
    assert [s.wind.relative for s in built] == ["onshore"] * 3
    assert expect == [3, 2, 3]  # 9 m/s at the middle step: below the wind rule; the tide rule holds there


def test_the_wind_effect_on_the_breaker_type_is_named_and_no_wind_changes_nothing() -> None:
    # Douglass (1990) direction on the breaker type (models/breaking.py; the shift size is ours)
    b, pts, arr = _setup(n_points=1)
    nan = np.full(len(b.times), np.nan)
    calm = compute_spots(b, [pts], wind_speed_m_s=nan, wind_from_deg=nan)[0]
    assert steps_mod.step_dicts(b, pts, calm, DEFAULT_POLICY, "metric") == steps_mod.step_dicts(
        b, pts, arr, DEFAULT_POLICY, "metric"
    )  # a wind source without a value at these steps: exactly the still-air steps
    windy = compute_spots(b, [pts], wind_speed_m_s=np.full(3, 8.0), wind_from_deg=np.full(3, 270.0))[0]
    built = steps_mod.build_steps(b, pts, windy, DEFAULT_POLICY, "metric")
    for t, s in enumerate(built):
        fx = s.wind_effect
        assert fx is not None and "Douglass (1990)" in fx.method and "shoalcast's" in fx.method
        assert fx.onshore_component_m_s == pytest.approx(8.0)  # from the west on a west-facing point
        assert fx.spilling_below_iribarren == pytest.approx(0.4 * (1 + 0.25 * 0.8))
        assert fx.breaker_type_without_wind == arr.breaker_type[0, t, 1]
    assert all(s.wind_effect is None for s in steps_mod.build_steps(b, pts, arr, DEFAULT_POLICY, "metric"))
