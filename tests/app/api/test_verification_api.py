"""Verification over the API: CSV body upload (key required; bad rows rejected with line and reason,
good rows used), the latest report, the SVG pictures, calibration GET/DELETE and its effect on the
outlook. Sources: RFC 9110 §15.5.16 (415 for a media type the resource does not take), the
project's problem+json convention (RFC 9457); the numbers themselves are tested in
tests/app/services/test_verification.py and tests/models/test_verification.py.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta

from sqlalchemy import update

from app.db.session import session_scope
from app.db.tables import Observation
from tests.app.api.conftest import SPOT_ID, Api

CSV = {"Content-Type": "text/csv"}


def _backdate(url: str) -> None:
    """As if the buoy had been polled as its spectra came in (ingested 20 min after each stamp)."""
    with session_scope(url) as s:
        for obs in s.query(Observation):
            obs.ingested_at = obs.time + timedelta(minutes=20)
        s.execute(update(Observation).where(Observation.ingested_at.is_(None)).values(ingested_at=datetime.now(UTC)))


def _rows(populated: Api) -> str:
    now = datetime.now(UTC).replace(minute=0, second=0, microsecond=0)
    lines = ["time,breaker_height_m,point,observer"]
    for h in range(2, 14):
        t = now - timedelta(hours=h) + timedelta(minutes=65)  # 25 min after a buoy stamp (hh:40), 5 after its ingest
        lines.append(f"{t:%Y-%m-%dT%H:%M:%SZ},{0.8 + 0.05 * h:.2f},peak,tower")
    lines.append("not-a-time,1.0,peak,tower")
    lines.append(f"{now - timedelta(hours=3):%Y-%m-%dT%H:%M:%SZ},1.0,reef,tower")
    return "\n".join(lines) + "\n"


def test_upload_needs_a_key_and_csv(populated: Api) -> None:
    c = populated.client
    r = c.post(f"/v1/spots/{SPOT_ID}/verification", content=_rows(populated), headers=CSV)
    assert r.status_code == 401
    r = c.post(f"/v1/spots/{SPOT_ID}/verification", content=b"{}", headers={**populated.auth,
                                                                          "Content-Type": "application/json"})
    assert r.status_code == 415 and r.headers["content-type"].startswith("application/problem+json")
    r = c.post("/v1/spots/nowhere/verification", content=_rows(populated), headers={**populated.auth, **CSV})
    assert r.status_code == 404
    r = c.get(f"/v1/spots/{SPOT_ID}/verification")
    assert r.status_code == 404 and "not been verified" in r.json()["detail"]


def test_upload_scores_good_rows_rejects_bad_and_apply_remove(populated: Api) -> None:
    c = populated.client
    _backdate(populated.url)
    r = c.post(f"/v1/spots/{SPOT_ID}/verification?apply=true", content=_rows(populated),
               headers={**populated.auth, **CSV})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["rejected"] == 2
    assert [(x["line"], x["field"]) for x in body["rejects"]] == [(14, "time"), (15, "point")]
    assert body["n"] == 12 and body["unpaired"] == 0, body["pairs"][:2]
    assert all(p["input"] == "observed" and p["source"] == "buoy-t" for p in body["pairs"])
    # each pair used the buoy stamp 25 min before its observation (stored 5 min before), never a later one
    for p in body["pairs"]:
        assert p["step_time"] <= p["time"] and p["known_at"] == p["time"]
    assert body["calibration"]["version"] == 1 and body["calibration"]["created_by"] == "key:tests"
    assert body["cautions"]
    got = c.get(f"/v1/spots/{SPOT_ID}/verification")
    assert got.status_code == 200 and got.json()["verification_id"] == body["verification_id"]
    etag = got.headers["etag"]
    assert c.get(f"/v1/spots/{SPOT_ID}/verification", headers={"If-None-Match": etag}).status_code == 304
    for kind, marker in (("scatter", "one-to-one"), ("series", "forecast")):
        svg = c.get(f"/v1/spots/{SPOT_ID}/verification.svg?kind={kind}")
        assert svg.status_code == 200 and svg.headers["content-type"].startswith("image/svg+xml")
        root = ET.fromstring(svg.content)
        assert root.find(f".//{{http://www.w3.org/2000/svg}}*[@id='{marker}']") is not None
        assert "lifeguards" in svg.text
    cal = c.get(f"/v1/spots/{SPOT_ID}/calibration").json()
    assert cal["active"]["factor"] == body["calibration_factor"] and len(cal["versions"]) == 1
    # a window the buoy at the spot observed (its stamps are hh:40; the outlook's hour now may have none yet)
    frm = (datetime.now(UTC) - timedelta(hours=6)).strftime("%Y-%m-%dT%H:00:00Z")
    outlook = f"/v1/spots/{SPOT_ID}/outlook?hours=3&from={frm}"
    step = c.get(outlook).json()["steps"][0]
    assert step["calibrated"] is True and "raw_breaker_height_m" in step
    assert c.delete(f"/v1/spots/{SPOT_ID}/calibration").status_code == 401
    r = c.delete(f"/v1/spots/{SPOT_ID}/calibration", headers=populated.auth)
    assert r.status_code == 200 and r.json()["active"] is False
    assert c.delete(f"/v1/spots/{SPOT_ID}/calibration", headers=populated.auth).status_code == 404
    step = c.get(outlook).json()["steps"][0]
    assert "calibrated" not in step and "raw_breaker_height_m" not in step


def test_garbage_body_is_a_report_of_rejects_not_an_error(populated: Api) -> None:
    r = populated.client.post(f"/v1/spots/{SPOT_ID}/verification", content="hello\x00world",
                              headers={**populated.auth, **CSV})
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["n"] == 0 and body["rejected"] == 1 and body["rejects"][0]["field"] == "header"
    assert body["verification_id"] is None
