"""The pages' view layer without a server: query options, unit conversion, time zones, and the tide
and wind columns (shown only when the outlook's steps carry them)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from app.web import views
from app.web.views import BadQuery, Prefs, outlook_view, parse_prefs

NOW = datetime(2026, 3, 24, 10, 20, tzinfo=UTC)


def step(hour: int, **extra):  # type: ignore[no-untyped-def]
    t = datetime(2026, 3, 24, tzinfo=UTC) + timedelta(hours=hour)
    return {
        "time": t.strftime("%Y-%m-%dT%H:%M:%SZ"), "source": "m", "input": "model-forecast",
        "breaker_height_m": {"typical": 1.2, "sets": 1.5, "largest": 2.0}, "period_s": 14.0,
        "nearshore_direction_deg": 281.0, "breaker_type": "plunging",
        "peel": {"direction": "left", "angle_deg": 38.0, "first_point": "peak"},
        "hazard": {"level": 2, "label": "experienced only", "policy": "p", "policy_is_default": False},
        "swells": [{"height_m": 2.0, "period_s": 14.0, "direction_deg": 280.0, "breaker_height_m": 1.2}],
        **extra,
    }


def body(steps):  # type: ignore[no-untyped-def]
    return {"steps": steps, "notes": ["one step left out"], "cautions": ["guidance only"], "policy": "p",
            "policy_is_default": False, "computed_at": "2026-03-24T10:00:00Z", "break_points": ["peak"]}


def test_prefs_defaults_and_refusals():
    assert parse_prefs({}) == Prefs("metric", "spot", 72)
    assert parse_prefs({"units": "imperial", "tz": "utc", "hours": "6"}) == Prefs("imperial", "utc", 6)
    for query, field in (({"units": "furlongs"}, "units"), ({"tz": "mars"}, "tz"), ({"hours": "0"}, "hours"),
                         ({"hours": "241"}, "hours"), ({"hours": "1.5"}, "hours"), ({"hours": ""}, "hours")):
        with pytest.raises(BadQuery) as info:
            parse_prefs(query)
        assert info.value.status == 400 and info.value.field == field and field in info.value.detail


@given(st.dictionaries(st.sampled_from(["units", "tz", "hours", "other"]), st.text(max_size=12)))
def test_prefs_never_fail_otherwise(query):
    try:
        p = parse_prefs(query)
    except BadQuery as exc:
        assert exc.field in query
    else:
        assert p.units in ("metric", "imperial") and p.tz in ("spot", "utc") and 1 <= p.hours <= 240


def test_rows_times_in_spot_zone_and_utc():
    # IANA tz database: the Etc/GMT+3 zone is three hours *behind* UTC (POSIX sign convention).
    v = outlook_view(body([step(h) for h in range(9, 14)]), timezone="Etc/GMT+3", prefs=Prefs(), now=NOW)
    assert v["time_first_label"] == "Etc/GMT+3 (UTC-03:00)" and v["time_second_label"] == "UTC"
    first = v["rows"][0]
    assert first["time_first"] == "Tue 24 06:00" and first["time_second"] == "Tue 24 09:00"
    assert [r["current"] for r in v["rows"]] == [False, True, False, False, False]  # 10:00 is in force at 10:20
    utc_first = outlook_view(body([step(9)]), timezone="Etc/GMT+3", prefs=Prefs(tz="utc"), now=NOW)
    assert utc_first["time_first_label"] == "UTC" and utc_first["rows"][0]["time_first"] == "Tue 24 09:00"
    plain = outlook_view(body([step(9)]), timezone="UTC", prefs=Prefs(), now=NOW)
    assert plain["time_second_label"] is None and not plain["show_local"]


def test_unknown_zone_falls_back_to_utc_with_a_note():
    v = outlook_view(body([step(9)]), timezone="Nowhere/Atlantis", prefs=Prefs(), now=NOW)
    assert v["time_first_label"] == "UTC" and any("not known" in n for n in v["notes"])


def test_row_contents():
    r = outlook_view(body([step(10)]), timezone="UTC", prefs=Prefs(), now=NOW)["rows"][0]
    assert (r["typical"], r["sets"], r["largest"], r["period"]) == ("1.2", "1.5", "2.0", "14 s")
    assert r["direction"] == "281° W" and r["peel"] == "left 38°" and r["breaker_type"] == "plunging"
    assert r["hazard"] == {"css": "level-2", "text": "2 · experienced only", "level": 2}


def test_tide_and_wind_columns_only_when_present():
    v = outlook_view(body([step(10)]), timezone="UTC", prefs=Prefs(), now=NOW)
    assert not v["show_water"] and not v["show_wind"]
    tidal = step(10, water_level_m=0.6096, tide={"trend": "rising"},
                 wind={"speed_m_s": 4.4704, "direction_deg": 90.0, "relative": "offshore"})
    v = outlook_view(body([tidal, step(11)]), timezone="UTC", prefs=Prefs(), now=NOW)
    assert v["show_water"] and v["show_wind"]
    assert v["rows"][0]["water"] == "+0.61 m rising"
    assert v["rows"][0]["wind"] == "4.5 m/s from 90° E (offshore)"
    assert v["rows"][1]["water"] == "–" and v["rows"][1]["wind"] == "–"  # a step without them: a dash
    # 1 ft = 0.3048 m and 1 mph = 0.44704 m/s exactly (international yard and pound, 1959)
    imp = outlook_view(body([tidal]), timezone="UTC", prefs=Prefs(units="imperial"), now=NOW)["rows"][0]
    assert imp["water"] == "+2.0 ft rising" and imp["wind"] == "10 mph from 90° E (offshore)"


def test_imperial_heights_come_from_the_feet_block():
    s = step(10)
    s["breaker_height_ft"] = {"typical": 3.9, "sets": 4.9, "largest": 6.6}
    s["swells"][0].update(height_ft=6.6, breaker_height_ft=3.9)
    v = outlook_view(body([s]), timezone="UTC", prefs=Prefs(units="imperial"), now=NOW)
    assert v["unit"] == "ft" and v["rows"][0]["typical"] == "3.9"
    assert v["trains"][0]["cells"] == ["6.6 ft 14 s from 280° W, breaks 3.9 ft"]


def test_missing_values_are_dashes_never_nan():
    s = step(10, breaker_height_m={"typical": None, "sets": float("nan"), "largest": None}, period_s=None,
             nearshore_direction_deg=None, peel={"direction": None, "angle_deg": None, "first_point": None},
             hazard={}, swells=[{"height_m": 1.0, "period_s": 9.0, "direction_deg": 10.0, "breaker_height_m": None}])
    v = outlook_view(body([s]), timezone="UTC", prefs=Prefs(), now=NOW)
    r = v["rows"][0]
    assert (r["typical"], r["sets"], r["period"], r["direction"]) == ("–", "–", "–", "–")
    assert r["peel"] == "no breaking wave" and r["hazard"]["text"] == "no level"
    assert v["trains"][0]["cells"] == ["1.0 m 9 s from 10° N, sheltered"]


def test_empty_outlook_says_so():
    v = outlook_view(body([]), timezone="UTC", prefs=Prefs(), now=NOW)
    assert v["rows"] == [] and v["now"] is None and any("nothing to show" in n for n in v["notes"])


@pytest.mark.parametrize("deg, name", [(0, "N"), (11.2, "N"), (11.3, "NNE"), (90, "E"), (281, "W"), (348.7, "NNW"), (348.8, "N"),
                                       (359, "N"), (-90, "W")])
def test_compass(deg, name):
    # the 16-point compass rose, sectors 22.5° wide centred on each point (trade practice)
    assert views.compass(deg).split()[1] == name


def test_level_badge_always_names_the_level():
    for n in range(4):
        b = views.level_badge(n, f"level {n}")
        assert b["text"] == f"level {n}" and b["css"] == f"level-{n}"
    assert views.level_badge(5, "x")["text"] == "no level" and views.level_badge(True, "x")["level"] is None
