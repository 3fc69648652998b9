"""Agency hazards from cached outlooks: current level, highest in the horizon and its onset, version.

Outside values: none beyond the agency's own thresholds (set here); the current-step and onset rules
are models.hazard.hazard_summary's (checked in tests/models/test_hazard.py).
"""

from __future__ import annotations

import importlib.util
import json
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest

from app.db.session import session_scope
from app.db.tables import Agency, HazardPolicy
from app.ingest.store import store_result
from app.services import hazards, outlook_cache, outlooks

_spec = importlib.util.spec_from_file_location("_outlook_tests", Path(__file__).with_name("test_outlooks.py"))
ot = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_outlook_tests", ot)
_spec.loader.exec_module(ot)
fx = ot.fx

T0 = datetime(2030, 6, 1, 0, tzinfo=UTC)
LEVELS = [
    {"level": 0, "label": "open"},
    {"level": 1, "label": "care", "set_height_m": 1.0},
    {"level": 2, "label": "danger", "set_height_m": 2.0},
    {"level": 3, "label": "closed", "set_height_m": 3.5},
]


def _setup(s, hs_by_hour: list[float]) -> None:
    src = ot._source(s, "model")
    ot._spot(s, "beach-h", ["model"])
    ot._spot(s, "beach-i", [])  # no source: reported with a note, the others go on
    s.add(Agency(id="guards", name="Guards", spots=["beach-h", "beach-i", "beach-missing"], alert_level=2))
    s.add(HazardPolicy(agency_id="guards", spot_key="", levels=LEVELS))
    s.flush()
    times = fx.hours(T0, len(hs_by_hour))
    efth = [fx.swell(h, 10.0, 270.0) for h in hs_by_hour]
    store_result(s, src, ot._records(times, efth, issue=T0 - timedelta(hours=3)), files=["f"])


def test_current_level_highest_in_horizon_and_onset(migrated_db: str) -> None:
    # sets breaker heights grow with Hs: 0.4 m offshore stays below 1 m sets, 2.0 m is above 2 m
    hs = [0.4, 0.4, 0.4, 0.8, 0.8, 2.0, 2.0, 2.0, 0.4, 0.4]
    with session_scope(migrated_db) as s:
        _setup(s, hs)
        now = T0 + timedelta(minutes=30)
        body = outlooks.get_outlook(s, "beach-h", hours=72, start=T0, agency_id="guards")
        levels = [st.hazard.level for st in body.steps]
        sets = [st.breaker_height_m.sets for st in body.steps]
        result = hazards.agency_hazards(s, "guards", horizon_hours=6, now=now)
        longer = hazards.agency_hazards(s, "guards", horizon_hours=2, now=now)
    # thresholds: levels follow the set breaker height (rounded values shown; none sits on a threshold)
    assert levels == [sum(h >= t for t in (1.0, 2.0, 3.5)) for h in sets]
    assert levels[0] == 0 and max(levels) == 2
    by_id = {h.spot_id: h for h in result.spots}
    h = by_id["beach-h"]
    assert (h.level, h.label) == (0, "open")
    assert (h.max_level, h.max_label) == (2, "danger")
    assert h.onset == T0 + timedelta(hours=levels.index(2))  # the first step at the highest level
    assert h.valid_until is not None and h.valid_until <= T0 + timedelta(hours=len(hs) - 1)
    assert h.policy == "guards default" and h.policy_is_default is False
    k = longer.spots[0]
    assert k.max_level == max(levels[:3]) and k.onset == T0  # horizon 2 h: still calm, onset now
    assert by_id["beach-i"].level is None and "no offshore spectra" in by_id["beach-i"].note
    assert by_id["beach-missing"].level is None and "beach-missing" in by_id["beach-missing"].note
    data = result.model_dump(mode="json")
    json.dumps(data, allow_nan=False)
    assert data["spots"][0]["onset"].endswith("Z") and data["cautions"]
    assert all(x["cautions"] for x in data["spots"])


def test_version_changes_with_inputs_only(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        _setup(s, [0.5, 0.5, 0.5])
        now = T0 + timedelta(minutes=10)
        v1 = hazards.hazard_version(s, "guards", now=now)
        assert hazards.hazard_version(s, "guards", now=now + timedelta(minutes=20)) == v1  # same hour
        src = s.get(ot.Source, "model")
        times = fx.hours(T0, 3)
        store_result(s, src, ot._records(times, [fx.swell(2.0, 12.0, 270.0)] * 3, issue=T0), files=["g"])
        v2 = hazards.hazard_version(s, "guards", now=now)
        assert v2 != v1
        row = s.query(HazardPolicy).one()
        row.levels = [dict(lv) for lv in LEVELS[:1]] + [
            dict(lv, set_height_m=lv["set_height_m"] + 0.5) for lv in LEVELS[1:]
        ]
        row.updated_at = row.updated_at + timedelta(seconds=1)
        s.flush()
        assert hazards.hazard_version(s, "guards", now=now) != v2
        assert hazards.hazard_version(s, "guards", now=now + timedelta(hours=1)) != hazards.hazard_version(
            s, "guards", now=now
        )


def test_hazards_use_the_cache(migrated_db: str, monkeypatch: pytest.MonkeyPatch) -> None:
    calls: list[str] = []
    real = outlooks.compute_outlook

    def counting(session, spot_id, **kw):  # type: ignore[no-untyped-def]
        calls.append(spot_id)
        return real(session, spot_id, **kw)

    monkeypatch.setattr(outlook_cache, "compute_outlook", counting)
    with session_scope(migrated_db) as s:
        _setup(s, [0.5, 1.5, 0.5])
    now = T0 + timedelta(minutes=5)
    with session_scope(migrated_db) as s:
        a = hazards.agency_hazards(s, "guards", horizon_hours=2, now=now)
    with session_scope(migrated_db) as s:
        b = hazards.agency_hazards(s, "guards", horizon_hours=2, now=now)
    assert calls.count("beach-h") == 1
    assert a.model_dump(mode="json") == b.model_dump(mode="json")
    assert np.isfinite(a.horizon_hours)


def test_hazards_and_cap_alerts_carry_rip_likelihood_and_shore_break(migrated_db: str) -> None:
    from app.formats.cap import validate_cap
    from app.services.alerts import sync_alerts

    hs = [0.4, 0.8, 1.6, 2.2, 1.6, 0.8]
    with session_scope(migrated_db) as s:
        _setup(s, hs)
        now = T0 + timedelta(minutes=30)
        body = outlooks.get_outlook(s, "beach-h", hours=72, start=T0, agency_id="guards")
        rips = [st.hazard.rip_current_likelihood for st in body.steps]
        result = hazards.agency_hazards(s, "guards", horizon_hours=6, now=now)
        h = {x.spot_id: x for x in result.spots}["beach-h"]
        [alert] = sync_alerts(s, "guards", result.spots, sender="tests@shoalcast", now=now)
        xml = alert.xml
    assert all(r is not None and 0 <= r <= 1 for r in rips)
    assert h.rip_current_likelihood == rips[0]  # the current step
    assert h.max_rip_current_likelihood == max(rips)  # highest in the horizon
    assert h.shore_break is False and h.shore_break_onset is None  # a 1:50 foreshore: no shore-break
    assert f'<valueName>shoalcast_rip_current_likelihood</valueName><value>{max(rips):.2f}</value>' in xml
    assert "<valueName>shoalcast_shore_break</valueName><value>false</value>" in xml
    assert validate_cap(xml) == []
    json.dumps(result.model_dump(mode="json"), allow_nan=False)


def test_cap_updates_when_only_the_rip_likelihood_or_shore_break_changes(migrated_db: str) -> None:
    # CAP 1.2 (OASIS 2010) §3.2.1 msgType "Update": updates and supercedes the earlier message(s)
    # in references; the step that re-issues for the rip likelihood is ours (RIP_UPDATE_STEP)
    from app.cautions import RIP_CAUTION
    from app.formats.cap import validate_cap
    from app.services.alerts import RIP_UPDATE_STEP, sync_alerts

    t0 = T0
    onset = t0 + timedelta(hours=3)

    def hz(rip, sb=None):  # type: ignore[no-untyped-def]
        return [{"spot_id": "beach-h", "max_level": 2, "max_label": "danger", "onset": onset,
                 "valid_until": t0 + timedelta(hours=12), "max_rip_current_likelihood": rip,
                 "shore_break_onset": sb}]  # fmt: skip

    def sync(spots, hours):  # type: ignore[no-untyped-def]
        return sync_alerts(s, "guards", spots, sender="tests@shoalcast", now=t0 + timedelta(hours=hours))

    with session_scope(migrated_db) as s:
        _setup(s, [0.5])
        [first] = sync(hz(0.42), 0)
        assert sync(hz(0.42 + RIP_UPDATE_STEP / 2), 0.25) == []  # a small drift says nothing new
        [u1] = sync(hz(0.42 + RIP_UPDATE_STEP), 0.5)  # rip likelihood alone moved enough
        sb = t0 + timedelta(hours=2)
        [u2] = sync(hz(0.52, sb), 1)  # a shore-break now expected
        assert sync(hz(0.52, sb), 1.5) == []
        assert sync(hz(0.52, t0 + timedelta(hours=3)), 3) == []  # under way: its first step moves with the hour
        [u3] = sync(hz(0.52, None), 4)  # the shore-break is over
        [u4] = sync(hz(None, None), 4.5)  # no likelihood any more (e.g. nothing arrives)
        msgs = [first, u1, u2, u3, u4]
        assert [m.msg_type for m in msgs] == ["Alert", "Update", "Update", "Update", "Update"]
        assert u4.references == [m.id for m in msgs[:4]]
        assert all(validate_cap(m.xml) == [] for m in msgs)
    import xml.etree.ElementTree as ET

    from app.formats.cap import CAP_NS

    description = ET.fromstring(first.xml).findtext(f"{{{CAP_NS}}}info/{{{CAP_NS}}}description")
    assert RIP_CAUTION in description and "provisional coefficients" in description
    assert "<valueName>shoalcast_shore_break</valueName><value>true</value>" in u2.xml
    assert "shoalcast_rip_current_likelihood" not in u4.xml


def test_hazards_cli_shows_rip_likelihood_shore_break_and_the_cautions(
    migrated_db: str, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    from app.cautions import RIP_CAUTION
    from app.cli import main

    hs = [0.4, 0.8, 1.6, 2.2, 1.6, 0.8]
    now = T0 + timedelta(minutes=30)
    with session_scope(migrated_db) as s:
        _setup(s, hs)
        want = {x.spot_id: x for x in hazards.agency_hazards(s, "guards", horizon_hours=6, now=now).spots}
    monkeypatch.setattr(hazards, "utcnow", lambda: now)
    assert main(["hazards", "guards", "--horizon", "6"]) == 0
    out = capsys.readouterr().out
    header = next(line for line in out.splitlines() if line.startswith("spot"))
    assert "rip now / max" in header and "shore-break" in header
    row = next(line for line in out.splitlines() if line.startswith("beach-h "))
    h = want["beach-h"]
    assert f"{round(h.rip_current_likelihood * 100)}% / {round(h.max_rip_current_likelihood * 100)}%" in row
    assert "none ahead" in row  # a 1:50 foreshore: no shore-break
    assert f"! {RIP_CAUTION}" in out and "local rules" in out  # the cautions beside the levels
