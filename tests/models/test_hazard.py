"""Hazard levels: thresholds switch exactly at the configured values; horizon summary; validation."""

from __future__ import annotations

import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from models.errors import InvalidInput
from models.hazard import (
    CAUTION,
    DEFAULT_POLICY,
    HazardPolicy,
    hazard_level,
    hazard_summary,
    wave_power_deep_kw_m,
)


def _policy(**kw):
    base = {
        "name": "test agency",
        "levels": [
            {"level": 0, "label": "quiet"},
            {"level": 1, "label": "watch", "set_height_m": 1.2},
            {"level": 2, "label": "warn", "set_height_m": 2.4, "period_s": 17.0},
            {"level": 3, "label": "close", "set_height_m": 3.6, "power_kw_m": 150.0},
        ],
    }
    base.update(kw)
    return HazardPolicy.from_mapping(base)


def test_height_thresholds_switch_exactly_at_configured_values():
    p = DEFAULT_POLICY
    h = np.array([0.0, np.nextafter(1.0, 0), 1.0, np.nextafter(2.0, 0), 2.0, np.nextafter(3.5, 0), 3.5, 9.0])
    assert hazard_level(p, h).tolist() == [0, 0, 1, 1, 2, 2, 3, 3]


def test_default_policy_is_labelled_as_default():
    assert DEFAULT_POLICY.is_default
    assert "default" in DEFAULT_POLICY.name
    assert [DEFAULT_POLICY.label(i) for i in range(4)] == ["level 0", "level 1", "level 2", "level 3"]
    assert all("default" in lv.description for lv in DEFAULT_POLICY.levels)


def test_period_and_power_triggers_any_mode():
    p = _policy()
    # small sets but long period reach level 2 in "any" mode; power reaches level 3
    lv = hazard_level(p, [0.5, 0.5, 0.5, 0.5], period_s=[16.99, 17.0, 8.0, 8.0], power_kw_m=[0, 0, 149.9, 150.0])
    assert lv.tolist() == [0, 2, 0, 3]


def test_all_mode_needs_every_given_criterion():
    p = _policy(combine="all")
    lv = hazard_level(p, [2.5, 2.5, 3.7, 3.7], period_s=[16.0, 17.0, 8.0, 8.0], power_kw_m=[0, 0, 10.0, 150.0])
    # 2.5 m @ 16 s: level 2 needs 17 s too -> level 1; at 17 s -> 2; 3.7 m, 8 s, 10 kW/m: level 3
    # needs 150 kW/m and level 2 needs 17 s -> level 1; with 150 kW/m -> 3
    assert lv.tolist() == [1, 2, 1, 3]


def test_broadcasts_over_times_and_spots():
    h = np.array([[0.5, 1.5, 2.5], [3.0, 4.0, 0.0]])
    assert hazard_level(DEFAULT_POLICY, h).shape == (2, 3)
    assert hazard_level(DEFAULT_POLICY, h).tolist() == [[0, 1, 2], [2, 3, 0]]


@given(st.lists(st.floats(0, 10), min_size=1, max_size=30))
def test_level_is_monotone_in_height(hs):
    # invariant: a larger set height never gives a lower level (thresholds nested)
    h = np.sort(np.array(hs))
    assert np.all(np.diff(hazard_level(DEFAULT_POLICY, h).astype(int)) >= 0)


def test_missing_series_and_bad_values_are_named():
    with pytest.raises(InvalidInput, match="`period_s`"):
        hazard_level(_policy(), [1.0], power_kw_m=[1.0])
    with pytest.raises(InvalidInput, match="`set_height_m`.*index \\(1,\\)"):
        hazard_level(DEFAULT_POLICY, [1.0, np.nan])
    with pytest.raises(InvalidInput, match="`set_height_m`"):
        hazard_level(DEFAULT_POLICY, [-1.0])


def test_policy_validation_names_the_field():
    with pytest.raises(InvalidInput, match=r"levels\[2\]\.set_height_m.*must not decrease"):
        _policy(levels=[
            {"label": "a"}, {"label": "b", "set_height_m": 2.0},
            {"label": "c", "set_height_m": 1.0}, {"label": "d", "set_height_m": 3.0},
        ])
    with pytest.raises(InvalidInput, match=r"levels\[1\]\.set_height_m` is required"):
        _policy(levels=[{"label": "a"}, {"label": "b"}, {"label": "c", "set_height_m": 1.0},
                        {"label": "d", "set_height_m": 3.0}])
    with pytest.raises(InvalidInput, match="4 entries"):
        _policy(levels=[{"label": "a"}])
    with pytest.raises(InvalidInput, match="combine"):
        _policy(combine="most")
    with pytest.raises(InvalidInput, match=r"levels\[0\]\.label` is required"):
        _policy(levels=[{}, {}, {}, {}])


def test_policy_round_trips_through_mapping():
    p = _policy()
    assert HazardPolicy.from_mapping(p.to_mapping()) == p


T0 = datetime(2031, 5, 4, 0, tzinfo=UTC)


def test_summary_onset_inside_horizon():
    times = [T0 + timedelta(hours=i) for i in range(72)]
    levels = np.zeros(72, dtype=int)
    levels[10:20] = 1
    levels[30:40] = 3
    levels[50:60] = 2
    s = hazard_summary(times, levels, horizon_hours=48, policy=DEFAULT_POLICY)
    assert (s.current_level, s.max_level, s.onset_index) == (0, 3, 30)
    assert s.onset_time == T0 + timedelta(hours=30)
    assert s.max_label == "level 3"
    assert s.caution == CAUTION
    # a horizon ending one hour before the level-3 onset sees only level 1, from hour 10
    s = hazard_summary(times, levels, horizon_hours=29, policy=DEFAULT_POLICY)
    assert (s.max_level, s.onset_time) == (1, T0 + timedelta(hours=10))
    # the horizon edge is inclusive: exactly 30 h reaches the level-3 step
    s = hazard_summary(times, levels, horizon_hours=30)
    assert (s.max_level, s.onset_index) == (3, 30)


def test_summary_now_between_steps_and_current_at_max():
    times = [T0 + timedelta(hours=3 * i) for i in range(8)]
    levels = [0, 2, 2, 1, 0, 2, 0, 0]
    s = hazard_summary(times, levels, horizon_hours=12, now=T0 + timedelta(hours=4))
    # current = last step at/before now (hour 3, level 2), already the highest -> onset is now's step
    assert (s.current_level, s.max_level, s.onset_index) == (2, 2, 1)


def test_summary_validation():
    with pytest.raises(InvalidInput, match="timezone-aware"):
        hazard_summary([datetime(2031, 1, 1)], [0], horizon_hours=1)
    with pytest.raises(InvalidInput, match="ascending"):
        hazard_summary([T0, T0], [0, 0], horizon_hours=1)
    with pytest.raises(InvalidInput, match="`levels`"):
        hazard_summary([T0], [4], horizon_hours=1)


def test_caution_says_guidance_and_local_rules():
    assert "guidance" in CAUTION and "local rules" in CAUTION and "lifeguards" in CAUTION


def test_deep_water_power_rule_of_thumb():
    # P = rho g^2 Hm0^2 Te / (64 pi) ~ 0.49 Hm0^2 Te kW/m with rho = 1025, g = 9.81 (common practice,
    # e.g. the "0.49 Hs^2 Te" rule quoted in wave-energy texts, from memory)
    assert wave_power_deep_kw_m(1.0, 1.0, g=9.81) == pytest.approx(0.4906, rel=1e-3)
    assert wave_power_deep_kw_m(2.0, 10.0, g=9.81) == pytest.approx(19.62, rel=1e-3)


# --------------------------------------------------------------------------- nearshore inputs


def test_rip_likelihood_is_the_logistic_form_of_dusek_and_seim():
    # Dusek & Seim (2013): P = 1/(1 + e^-z), z linear in nearshore Hs, |direction - shore normal| and
    # tidal elevation (the form and the signs of its findings: more with height, shore-normal waves
    # and low water; the coefficients are placeholders, see RipModel)
    from models.hazard import RIP_MODEL, rip_current_likelihood

    m = RIP_MODEL
    z = m.intercept + m.per_height_m * 1.5 + m.per_angle_deg * 10.0 + m.per_water_m * -0.5
    assert float(rip_current_likelihood(1.5, -10.0, -0.5)) == pytest.approx(1 / (1 + math.exp(-z)), rel=1e-12)
    hs = np.array([0.5, 1.0, 2.0, 3.0])
    assert np.all(np.diff(rip_current_likelihood(hs, 0.0)) > 0)
    assert rip_current_likelihood(2.0, 0.0) > rip_current_likelihood(2.0, 40.0)
    assert rip_current_likelihood(2.0, 0.0, -1.0) > rip_current_likelihood(2.0, 0.0, 1.0)
    assert float(rip_current_likelihood(np.nan, 0.0)) == 0.0  # nothing arrives
    assert "not the paper" in m.source


def test_shore_break_needs_plunging_on_a_steep_foreshore_near_high_water():
    # Iribarren ξ = tan β/√(H/L0) >= 0.4 plunging or collapsing (Battjes 1974); steep = 1:10 (common practice)
    from models.hazard import near_high_water, shore_break

    # H 1.5 m, T 10 s (L0 156 m): tan β 0.12 -> ξ 1.22 plunging; 0.03 -> not steep
    assert shore_break([1.5, 1.5, 1.5, 0.3], 10.0, [0.12, 0.03, 0.12, 0.12], [True, True, False, True]).tolist() == [
        True, False, False, False,
    ]  # fmt: skip
    wl = np.array([-1.0, 0.0, 0.8, 1.0, 0.2])
    assert near_high_water(wl).tolist() == [False, False, True, True, False]
    assert near_high_water(np.zeros(3)).all()  # no tide known: high water cannot be ruled out


def test_policy_with_rip_and_shore_break_levels():
    p = HazardPolicy.from_mapping({
        "name": "lifeguards", "levels": [
            {"level": 0, "label": "green"},
            {"level": 1, "label": "yellow", "set_height_m": 1.0, "rip_likelihood": 0.3},
            {"level": 2, "label": "red", "set_height_m": 2.0, "rip_likelihood": 0.6, "shore_break": True},
            {"level": 3, "label": "closed", "set_height_m": 3.0},
        ],
    })  # fmt: skip
    lv = hazard_level(p, [0.5, 0.5, 0.5, 0.5], rip_likelihood=[0.1, 0.35, 0.65, 0.1], shore_break=[0, 0, 0, 1])
    assert lv.tolist() == [0, 1, 2, 2]
    assert hazard_level(p, [0.5]).tolist() == [0]  # not given: those criteria are not tested
    assert HazardPolicy.from_mapping(p.to_mapping()) == p
    with pytest.raises(InvalidInput, match="rip_likelihood"):
        HazardPolicy.from_mapping({"name": "x", "levels": [
            {"level": 0, "label": "a"}, {"level": 1, "label": "b", "set_height_m": 1, "rip_likelihood": 1.5},
            {"level": 2, "label": "c", "set_height_m": 2}, {"level": 3, "label": "d", "set_height_m": 3}]})  # fmt: skip
    with pytest.raises(InvalidInput, match="basis"):
        HazardPolicy(name="x", levels=p.levels, basis="somewhere")


# --------------------------------------------------------------------------- rules on nearshore inputs


def _rule_policy(level2_rules, **kw):  # type: ignore[no-untyped-def]
    return HazardPolicy.from_mapping({"name": "lifeguards", "levels": [
        {"level": 0, "label": "green"},
        {"level": 1, "label": "yellow", "set_height_m": 1.0},
        {"level": 2, "label": "red", "rules": level2_rules, **kw},
        {"level": 3, "label": "closed", "set_height_m": 3.0},
    ]})  # fmt: skip


def test_a_rip_rule_reaches_its_level_from_its_threshold_on():
    p = _rule_policy([{"rip_likelihood": 0.5}])
    lv = hazard_level(p, [0.5, 0.5, 1.2, 3.1], rip_likelihood=[np.nextafter(0.5, 0), 0.5, 0.9, 0.9])
    assert lv.tolist() == [0, 2, 2, 3]  # a rule only adds ways up: the higher level still wins
    assert hazard_level(p, [0.5]).tolist() == [0]  # no rip likelihood given: the rule cannot hold


def test_a_rule_needs_every_condition_shore_break_and_high_water():
    p = _rule_policy([{"shore_break": True, "water_level_m": 1.5}])
    lv = hazard_level(p, 0.5, shore_break=[True, True, False, True], water_level_m=[1.5, 1.49, 2.0, np.nan])
    assert lv.tolist() == [2, 0, 0, 0]  # NaN: the level is unknown there, so the rule does not hold
    assert hazard_level(p, [0.5], shore_break=[True]).tolist() == [0]  # no water level given


def test_an_onshore_wind_rule_and_missing_wind():
    p = _rule_policy([{"wind_relative": "onshore", "wind_speed_m_s": 10.0}])
    speed = [10.0, np.nextafter(10.0, 0), 14.0, 14.0, np.nan]
    rel = ["onshore", "onshore", "offshore", "cross", None]  # the last step has no wind source
    assert hazard_level(p, 0.5, wind_speed_m_s=speed, wind_relative=rel).tolist() == [2, 0, 0, 0, 0]
    many = _rule_policy([{"wind_relative": ["onshore", "cross"], "wind_speed_m_s": 10.0}])
    assert hazard_level(many, 0.5, wind_speed_m_s=speed, wind_relative=rel).tolist() == [2, 0, 0, 2, 0]
    assert hazard_level(p, [0.5, 0.5]).tolist() == [0, 0]  # no wind at all: null wind never triggers


def test_tide_trend_and_low_water_rules_are_alternatives():
    p = _rule_policy([{"tide_trend": "falling", "water_level_below_m": 0.3, "set_height_m": 0.8},
                      {"rip_likelihood": 0.7}])  # fmt: skip
    lv = hazard_level(
        p, [0.9, 0.9, 0.9, 0.7, 0.5], rip_likelihood=[0.0, 0.0, 0.0, 0.0, 0.8],
        water_level_m=[0.2, 0.3, 0.2, 0.2, 2.0], tide_trend=["falling", "falling", "rising", "falling", None],
    )  # fmt: skip
    assert lv.tolist() == [2, 0, 0, 0, 2]  # below is strict; the second rule holds alone


def test_a_level_with_only_rules_and_the_flat_criteria_beside_them():
    p = _rule_policy([{"rip_likelihood": 0.5}], set_height_m=2.0)
    assert hazard_level(p, [2.0, 1.5], rip_likelihood=[0.0, 0.6]).tolist() == [2, 2]
    q = _rule_policy([{"rip_likelihood": 0.5}], set_height_m=2.0, period_s=15.0)
    q = HazardPolicy.from_mapping(dict(q.to_mapping(), combine="all"))
    lv = hazard_level(q, [2.0, 2.0, 0.5], period_s=[10.0, 15.0, 10.0], rip_likelihood=[0.0, 0.0, 0.6])
    assert lv.tolist() == [1, 2, 2]  # "all" joins the flat criteria; a rule stays an alternative


def test_rule_policies_round_trip_and_keep_the_old_form_without_rules():
    p = _rule_policy([{"wind_relative": ["onshore"], "wind_speed_m_s": 9.0}, {"tide_trend": "rising"}])
    assert HazardPolicy.from_mapping(p.to_mapping()) == p
    assert "rules" not in _policy().to_mapping()["levels"][1]  # unchanged cache keys for rule-free policies
    assert p.levels[2].rules[0].wind_relative == ("onshore",)


@pytest.mark.parametrize(
    ("rule", "message"),
    [
        ({}, r"levels\[2\]\.rules\[0\]` has no conditions"),
        ({"wind": 3}, r"levels\[2\]\.rules\[0\]` has unknown keys \['wind'\]"),
        ({"wind_relative": "landward"}, r"rules\[0\]\.wind_relative` must be among.*'landward'"),
        ({"wind_relative": []}, r"rules\[0\]\.wind_relative` must list at least one"),
        ({"tide_trend": "ebb"}, r"rules\[0\]\.tide_trend` must be 'rising' or 'falling'"),
        ({"rip_likelihood": 1.2}, r"rules\[0\]\.rip_likelihood` is a probability"),
        ({"wind_speed_m_s": -1.0}, r"rules\[0\]\.wind_speed_m_s` must be finite and >= 0"),
        ({"water_level_m": "high"}, r"rules\[0\]\.water_level_m` must be a number"),
        ({"water_level_m": 1.0, "water_level_below_m": 0.5}, r"water_level_below_m.*never holds"),
        ({"shore_break": "yes"}, r"rules\[0\]\.shore_break` must be true or false"),
    ],
)
def test_bad_rules_are_refused_naming_the_field(rule, message):
    with pytest.raises(InvalidInput, match=message):
        _rule_policy([rule])


def test_rule_validation_at_level_0_and_bad_inputs_are_named():
    with pytest.raises(InvalidInput, match=r"levels\[0\]\.rules`: level 0 takes no rules"):
        HazardPolicy.from_mapping({"name": "x", "levels": [
            {"label": "a", "rules": [{"rip_likelihood": 0.5}]}, {"label": "b", "set_height_m": 1},
            {"label": "c", "set_height_m": 2}, {"label": "d", "set_height_m": 3}]})  # fmt: skip
    p = _rule_policy([{"tide_trend": "rising"}])
    with pytest.raises(InvalidInput, match=r"`tide_trend` must be one of.*'up' at index 1"):
        hazard_level(p, [0.5, 0.5], tide_trend=["rising", "up"])
    with pytest.raises(InvalidInput, match=r"`wind_speed_m_s` must be finite and >= 0.*index \(0,\)"):
        hazard_level(p, [0.5], wind_speed_m_s=[-2.0])
    with pytest.raises(InvalidInput, match="do not broadcast"):
        hazard_level(p, [0.5, 0.5], water_level_m=[1.0, 2.0, 3.0])
