"""app.services.conditions: water level and wind per outlook step, from the tide profile and sources.

Outside values: the international foot is 0.3048 m exactly (1959 agreement); a met text TIDE column is
in feet (docs/formats.md §1.4); the tide prediction itself is checked against utide in
tests/models/test_tide.py; offshore / onshore from the land / sea side (common practice).
"""

from __future__ import annotations

import importlib.util
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest

from app.db.session import session_scope
from app.db.tables import Source
from app.formats.ndbc_met import parse_met
from app.ingest.store import store_result
from app.services import conditions as cond
from app.services import outlooks
from models.tide import Constituent, predict

_spec = importlib.util.spec_from_file_location(
    "_outlooks_for_conditions", Path(__file__).with_name("test_outlooks.py")
)
ot = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_outlooks_for_conditions", ot)
_spec.loader.exec_module(ot)
fx = ot.fx

T0 = datetime(2030, 1, 1, tzinfo=UTC)
TIDE = {"mean_level_m": 1.2, "constituents": [{"name": "M2", "amplitude_m": 1.0, "phase_deg": 30.0},
                                              {"name": "S2", "amplitude_m": 0.3, "phase_deg": 60.0}]}  # fmt: skip
CONS = [Constituent("M2", 1.0, 30.0), Constituent("S2", 0.3, 60.0)]


def _inputs(**kw) -> cond.ConditionInputs:  # type: ignore[no-untyped-def]
    empty = cond.Series(np.empty(0), np.empty(0))
    base = dict(faces_deg=270.0, mean_level_m=1.2, constituents=tuple(CONS), level_observed=empty,
                wind_observed=(empty, empty, empty), wind_forecast=(empty, empty, empty), wind_sources=(),
                level_sources=(), observation_ids=())  # fmt: skip
    base.update(kw)
    return cond.ConditionInputs(**base)


def test_prediction_trend_and_next_extremes_without_observations() -> None:
    times = fx.hours(T0, 13)
    sc = cond.spot_conditions(_inputs(), times)
    np.testing.assert_allclose(sc.conditions.water_level_m, predict(times, CONS, mean_level_m=1.2))
    assert set(sc.level_source) == {"predicted"} and np.all(np.isnan(sc.residual_m))
    lv = sc.conditions.water_level_m
    ahead = predict([t + timedelta(minutes=2) for t in times], CONS, mean_level_m=1.2)
    for i in range(13):  # the trend is the way the level goes next
        hi, lo = sc.next_high[i], sc.next_low[i]
        assert hi is not None and lo is not None and hi[0] > times[i] and lo[0] > times[i]
        assert sc.trend[i] == (
            "rising" if hi[0] < lo[0] else "falling"
        )  # rising means high water comes first
        assert (ahead[i] > lv[i]) == (sc.trend[i] == "rising")
    assert sc.wind_input == (None,) * 13 and not sc.conditions.has_wind.any()  # no wind source: none


def test_an_observed_level_overrides_the_prediction_and_the_residual_is_kept() -> None:
    times = fx.hours(T0, 6)
    t = np.array([x.timestamp() for x in times[1:3]])
    obs = predict(times[1:3], CONS, mean_level_m=1.2) + 0.25  # a 25 cm surge
    sc = cond.spot_conditions(_inputs(level_observed=cond.Series(t, obs)), times)
    assert sc.level_source == ("predicted", "observed", "observed", "predicted", "predicted", "predicted")
    np.testing.assert_allclose(sc.conditions.water_level_m[1:3], obs)
    np.testing.assert_allclose(sc.residual_m[1:3], 0.25)
    assert np.isnan(sc.residual_m[[0, 3, 4, 5]]).all()


def test_met_text_tide_feet_become_metres_above_the_bathymetry_datum() -> None:
    assert cond.level_of({"tide_ft": 2.0}, 0.0) == pytest.approx(0.6096)  # 2 ft
    assert cond.level_of({"tide_ft": -1.0}, 0.5) == pytest.approx(
        0.5 - 0.3048
    )  # datum 0.5 m above the bed datum
    assert cond.level_of({"water_level_m": 0.4, "tide_ft": 9.0}, 0.0) == pytest.approx(0.4)  # CF metres first
    assert cond.level_of({"tide_ft": None}, 0.0) is None


def test_observed_wind_near_a_step_then_the_model_forecast() -> None:
    times = fx.hours(T0, 4)
    s = np.array([times[0].timestamp()])
    rad = np.radians(90.0)  # from the east: offshore at a west-facing break
    ob = (
        cond.Series(s, np.array([6.0])),
        cond.Series(s, np.array([np.sin(rad)])),
        cond.Series(s, np.array([np.cos(rad)])),
    )
    ft = np.array([x.timestamp() for x in times])
    fc = (
        cond.Series(ft, np.full(4, 8.0)),
        cond.Series(ft, np.zeros(4)),
        cond.Series(ft, np.full(4, 8.0)),
    )  # toward E
    sc = cond.spot_conditions(_inputs(wind_observed=ob, wind_forecast=fc), times)
    assert sc.wind_input == ("observed", "observed", "model-forecast", "model-forecast")  # 1 h reach
    assert sc.wind_relative == ("offshore", "offshore", "onshore", "onshore")
    np.testing.assert_allclose(sc.conditions.wind_speed_m_s, [6.0, 6.0, 8.0, 8.0])
    np.testing.assert_allclose(sc.conditions.wind_from_deg, [90.0, 90.0, 270.0, 270.0])


MET = """#YY  MM DD hh mm WDIR WSPD GST  WVHT   DPD   APD MWD   PRES  ATMP  WTMP  DEWP  VIS PTDY  TIDE
#yr  mo dy hr mn degT m/s  m/s     m   sec   sec degT   hPa  degC  degC  degC  nmi  hPa    ft
2030 01 01 00 00  90  6.0  8.0    MM    MM    MM  MM 1015.0  12.0  13.0   8.0   MM   MM  {tide0}
2030 01 01 01 00 100  5.0  7.0    MM    MM    MM  MM 1015.0  12.0  13.0   8.0   MM   MM  {tide1}
"""


def _tidal_spot(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        src = ot._source(s, "model")
        met = Source(id="pier", name="pier", format="met-text", latitude=0.0, longitude=0.0, depth_m=None, urls=[],
                     config={"water_level_datum_m": -0.5})  # fmt: skip
        s.add(met)
        s.flush()
        ot._spot(s, "tidal", ["model", "pier"])
        spot = s.get(ot.Spot, "tidal")
        spot.profile = {"tide": TIDE}
        store_result(
            s, src, ot._records(fx.hours(T0, 4), [fx.swell(1.5, 12.0, 270.0)] * 4, issue=T0), files=["a"]
        )
        pred = predict(fx.hours(T0, 2), CONS, mean_level_m=1.2)
        # observed: 0.2 m above the prediction, written in feet above a datum 0.5 m below the bathymetry datum
        feet = (pred + 0.2 + 0.5) / 0.3048
        parsed = parse_met(MET.format(tide0=f"{feet[0]:.2f}", tide1=f"{feet[1]:.2f}"), name="pier.txt")
        assert not parsed.rejects
        store_result(s, met, parsed, files=["pier.txt"])


def test_outlook_steps_carry_the_water_level_tide_wind_and_shallow_points(migrated_db: str) -> None:
    _tidal_spot(migrated_db)
    with session_scope(migrated_db) as s:
        body = outlooks.compute_outlook(s, "tidal", hours=3, start=T0).model_dump(mode="json")
    st = body["steps"]
    assert [x["water_level_source"] for x in st] == ["observed", "observed", "predicted", "predicted"]
    for x in st[:2]:
        assert x["water_level_residual_m"] == pytest.approx(0.2, abs=0.011)  # feet printed to 0.01 ft
    assert st[2]["water_level_m"] == pytest.approx(
        predict([T0 + timedelta(hours=2)], CONS, mean_level_m=1.2)[0], abs=0.006
    )
    assert st[0]["tide"]["trend"] in ("rising", "falling") and st[0]["tide"]["next_high"].endswith("Z")
    assert st[0]["wind"] == {
        "speed_m_s": 6.0,
        "direction_deg": 90.0,
        "relative": "offshore",
        "input": "observed",
    }
    assert st[3]["wind"] is None  # 3 h after the last wind observation, no forecast wind: null
    p = st[0]["points"][0]
    assert p["water_depth_m"] == pytest.approx(2.0 + st[0]["water_level_m"], abs=0.011)  # bed 2 m + level
    assert p["depth_state"] == "ok" and st[0]["shallow_points"] == []


def test_a_break_point_at_low_water_is_too_shallow_or_dry(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        src = ot._source(s, "model")
        ot._spot(s, "reefy", ["model"])
        store_result(
            s, src, ot._records(fx.hours(T0, 2), [fx.swell(1.0, 10.0, 270.0)] * 2, issue=T0), files=["a"]
        )
        low = outlooks.compute_outlook(s, "reefy", hours=1, start=T0, water_level_m=-1.7).model_dump(
            mode="json"
        )
        dry = outlooks.compute_outlook(s, "reefy", hours=1, start=T0, water_level_m=-2.5).model_dump(
            mode="json"
        )
    assert low["steps"][0]["points"][0]["depth_state"] == "too-shallow" and low["steps"][0][
        "shallow_points"
    ] == ["p0"]
    assert dry["steps"][0]["points"][0]["depth_state"] == "dry"
    assert low["steps"][0]["water_level_source"] == "given" and low["steps"][0]["tide"] is None


def test_no_tide_no_observation_is_the_mean_level_without_a_tide_block() -> None:
    sc = cond.spot_conditions(_inputs(constituents=(), mean_level_m=0.3), fx.hours(T0, 2))
    assert sc.level_source == ("mean-level", "mean-level") and sc.trend == (None, None)
    np.testing.assert_allclose(sc.conditions.water_level_m, 0.3)


PROFILE = """
id = "t"
name = "T"
latitude = 1.0
longitude = 2.0
faces_deg = 270
[bathymetry]
file = "g.asc"
format = "esri-ascii"
[[break_points]]
name = "a"
x = 0
y = 0
[tide]
mean_level_m = 0.0
constituents = [{ name = "M2", amplitude_m = 1.1, phase_deg = 212.0 }, { name = "s2", amplitude_m = 0.4, phase_deg = 250.0 }]
"""


def test_the_profile_tide_table_is_read_as_the_issue_writes_it_and_bad_entries_are_named() -> None:
    from app.services.spots import ProfileError, parse_profile_text

    p = parse_profile_text(PROFILE, where="spot.toml")
    assert p.tide is not None and [c.name for c in p.tide.constituents] == ["M2", "S2"]
    assert p.tide.constituents[0].phase_deg == 212.0
    with pytest.raises(ProfileError, match=r"tide.constituents.1.name.*unknown tide constituent 'Z7'"):
        parse_profile_text(PROFILE.replace('"s2"', '"Z7"'), where="spot.toml")
    with pytest.raises(ProfileError, match=r"tide.*repeated: M2"):
        parse_profile_text(PROFILE.replace('"s2"', '"M2"'), where="spot.toml")
    with pytest.raises(ProfileError, match=r"tide.constituents.0.amplitude_m"):
        parse_profile_text(PROFILE.replace("amplitude_m = 1.1", "amplitude_m = -1"), where="spot.toml")


def test_the_outlook_table_shows_tide_and_wind(migrated_db: str, capsys: pytest.CaptureFixture[str]) -> None:
    import argparse

    from app.commands import outlook as cmd

    _tidal_spot(migrated_db)
    parser = argparse.ArgumentParser()
    cmd.register(parser.add_subparsers())
    args = parser.parse_args(["outlook", "tidal", "--hours", "3", "--from", "2030-01-01T00:00:00Z"])
    assert args.func(args) == 0
    out = capsys.readouterr().out
    head = next(line for line in out.splitlines() if "typ/sets/max" in line)
    assert "tide" in head and "wind" in head
    first = next(line for line in out.splitlines() if line.startswith("2030-01-01T00:00:00Z"))
    assert "6m/s E offshore" in first and "m*" in first.replace("↑", "").replace("↓", "")  # observed level
    assert ("↑" in first) or ("↓" in first)
    assert "lifeguards" in out  # the cautions stay
