"""The REST API through HTTP (TestClient with lifespan), on SQLite and PostgreSQL.

Conditional requests follow RFC 9110 §13.1.2 / §15.4.5 (304: no body, same ETag and Cache-Control);
problem bodies RFC 9457 (`status` equals the HTTP status); GeoJSON positions RFC 7946 §3.1.1
([lon, lat]); CAP 1.2 rules via app.formats.cap.validate_cap and the OASIS XSD (xmlschema).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta
from urllib.parse import urlsplit

import pytest
from fastapi.testclient import TestClient

from tests.app.api.conftest import (
    AGENCY_ID,
    LAT,
    LON,
    SOURCE_ID,
    SPOT_ID,
    Api,
    make_settings,
    new_key,
    upload,
)

RFC3339_Z = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d+)?Z$")


def assert_problem(r, status: int, *words: str) -> dict:  # type: ignore[no-untyped-def]
    assert r.status_code == status, r.text
    assert r.headers["content-type"].startswith("application/problem+json")
    body = r.json()
    assert body["status"] == status and body["title"] and body["detail"]
    for w in words:
        assert w in body["detail"] or w in str(body.get("field", "")), body
    return body


def assert_conditional(c: TestClient, path: str, **kw) -> str:  # type: ignore[no-untyped-def]
    r = c.get(path, **kw)
    assert r.status_code == 200, r.text
    etag = r.headers["etag"]
    assert etag.startswith('W/"')
    r2 = c.get(path, params=kw.get("params"), headers={**kw.get("headers", {}), "If-None-Match": etag})
    assert r2.status_code == 304 and r2.content == b""
    assert r2.headers["etag"] == etag
    assert r2.headers["cache-control"] == r.headers["cache-control"]
    return etag


def test_health(api: Api) -> None:
    assert api.client.get("/healthz").json() == {"status": "ok"}
    r = api.client.get("/readyz")
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["status"] == "ready" and body["database"] == "ok" and body["scheduler"] == "disabled"
    assert body["schema_revision"] == body["schema_head"] is not None


def test_spots_conditional_and_change(populated: Api) -> None:
    c = populated.client
    tag = assert_conditional(c, "/v1/spots")
    assert c.get("/v1/spots").headers["cache-control"] == "public, max-age=600, stale-while-revalidate=600"
    one = assert_conditional(c, f"/v1/spots/{SPOT_ID}")
    r = c.put("/v1/spots/other-slope", headers=populated.auth, files=upload("other-slope"))
    assert r.status_code == 201, r.text
    r = c.get("/v1/spots", headers={"If-None-Match": tag})
    assert r.status_code == 200 and r.headers["etag"] != tag
    assert [s["id"] for s in r.json()] == ["other-slope", SPOT_ID]
    assert c.get(f"/v1/spots/{SPOT_ID}", headers={"If-None-Match": one}).status_code == 304
    assert c.delete("/v1/spots/other-slope", headers=populated.auth).status_code == 204
    assert_problem(c.get("/v1/spots/other-slope"), 404, "other-slope")


def test_geojson_lon_lat_order(populated: Api) -> None:
    c = populated.client
    for kw in ({"params": {"format": "geojson"}}, {"headers": {"Accept": "application/geo+json"}}):
        r = c.get("/v1/spots", **kw)
        assert r.headers["content-type"].startswith("application/geo+json")
        fc = r.json()
        assert fc["type"] == "FeatureCollection"
        [f] = fc["features"]
        # the profile puts the spot at latitude 10, longitude 20: RFC 7946 order is [lon, lat]
        assert f["geometry"]["coordinates"] == [LON, LAT]
    assert c.get("/v1/spots").headers["etag"] != c.get("/v1/spots?format=geojson").headers["etag"]


def test_unknown_spot_and_bad_query(api: Api) -> None:
    c = api.client
    for path in ("/v1/spots/nowhere", "/v1/spots/nowhere/outlook", "/v1/spots/nowhere/window",
                 "/v1/spots/nowhere/window.svg", "/v1/spots/nowhere/outlook.svg", "/v1/agencies/nobody",
                 "/v1/agencies/nobody/hazards", "/v1/alerts/nothing", "/v1/jobs/nothing", "/v1/no-such-path"):
        assert_problem(c.get(path), 404)
    assert_problem(c.get("/v1/spots?format=kml"), 422, "format")


def test_writes_need_a_valid_key(api: Api) -> None:
    c = api.client
    assert_problem(c.put(f"/v1/spots/{SPOT_ID}", files=upload()), 401, "X-API-Key")
    assert_problem(c.put(f"/v1/spots/{SPOT_ID}", files=upload(), headers={"X-API-Key": "sk_bogus"}), 401)
    from app.db.session import session_scope
    from app.services.keys import revoke_key

    revoked = new_key(api.url)
    with session_scope(api.url) as s:
        revoke_key(s, revoked.split("_")[1])
    assert_problem(c.delete(f"/v1/spots/{SPOT_ID}", headers={"X-API-Key": revoked}), 401, "revoked")
    # a key with another scope only: 403 (admin implies write, so make one with neither via the table)
    from app.db.tables import ApiKey

    other = new_key(api.url)
    with session_scope(api.url) as s:
        row = s.query(ApiKey).filter(ApiKey.prefix == other.split("_")[1]).one()
        row.scopes = ["read"]
    assert_problem(c.post("/v1/sources", json={}, headers={"X-API-Key": other}), 403, "write")


def test_oversized_uploads_and_bodies(api: Api) -> None:
    c = api.client
    big = b"1 " * 150_000  # 300 kB > max_upload_bytes (200 kB)
    assert_problem(c.put(f"/v1/spots/{SPOT_ID}", headers=api.auth, files=upload(grid=big)), 413, "limit")

    def chunks():  # no Content-Length: the limit applies while the stream is read
        for _ in range(30):
            yield b"x" * 1000

    r = c.post("/v1/sources", headers={**api.auth, "Content-Type": "application/json"}, content=chunks())
    assert_problem(r, 413, "limit")


def test_bad_profile_is_422_naming_the_field(api: Api) -> None:
    c = api.client
    bad = upload(profile=upload()["profile"][1].decode().replace("faces_deg = 270", "faces_deg = 400"))
    body = assert_problem(c.put(f"/v1/spots/{SPOT_ID}", headers=api.auth, files=bad), 422, "faces_deg")
    assert body["instance"] == f"/v1/spots/{SPOT_ID}"
    assert_problem(c.put("/v1/spots/elsewhere", headers=api.auth, files=upload()), 422, "id")
    escape = upload(profile=upload()["profile"][1].decode().replace('file = "grid.asc"', 'file = "../../etc/passwd"'))
    assert_problem(c.put(f"/v1/spots/{SPOT_ID}", headers=api.auth, files=escape), 422, "bathymetry.file")
    assert_problem(c.put(f"/v1/spots/{SPOT_ID}", headers=api.auth, files=upload(grid="ncols x\n")), 422, "bathymetry")
    assert_problem(c.put(f"/v1/spots/{SPOT_ID}", headers=api.auth, files={"profile": upload()["profile"]}), 422,
                   "bathymetry")
    assert c.get("/v1/spots").json() == []  # nothing half-stored


def test_sources(populated: Api) -> None:
    c = populated.client
    tag = assert_conditional(c, "/v1/sources")
    [src] = c.get("/v1/sources").json()
    assert src["id"] == SOURCE_ID and src["observations"] > 0 and src["health"]["stored"] > 0
    assert RFC3339_Z.match(src["latest_time"])
    r = c.post(f"/v1/sources/{SOURCE_ID}/observations", headers=populated.auth,
               files=[("files", ("bad.data_spec", b"#YY MM\nnot numbers at all\n", "text/plain"))])
    assert r.status_code == 200, r.text
    assert r.json()["stored"] == 0
    assert c.get("/v1/sources", headers={"If-None-Match": tag}).status_code == 200  # health changed
    assert_problem(c.post("/v1/sources/nosuch/observations", headers=populated.auth,
                          files=[("files", ("a.txt", b"x", "text/plain"))]), 404)


def test_remote_only_sources_unless_allowed(migrated_db: str) -> None:
    from app.api.main import create_app

    with TestClient(create_app(make_settings(migrated_db, allow_local_sources=False))) as c:
        key = {"X-API-Key": new_key(migrated_db)}
        body = {"id": "b2", "name": "B", "format": "spectral-text-realtime", "latitude": 1, "longitude": 2,
                "urls": ["file:///etc/passwd"]}
        assert_problem(c.post("/v1/sources", headers=key, json=body), 422, "urls")
        body["urls"] = ["http://127.0.0.1/x"]
        assert_problem(c.post("/v1/sources", headers=key, json=body), 422, "urls")
        assert_problem(c.post("/v1/sources", headers=key, json={"id": "b3"}), 422, "name")
        # a DNS name passes here; its fetches are checked against public addresses (tests/app/ingest/test_guard.py)
        body["urls"] = ["http://feed.example/x"]
        assert c.post("/v1/sources", headers=key, json=body).status_code in (200, 201)
    from app.db.session import session_scope
    from app.db.tables import Source

    with session_scope(migrated_db) as s:
        added = s.get(Source, "b2")
        assert added is not None and added.public_only


def test_window_and_svg(populated: Api) -> None:
    c = populated.client
    assert_conditional(c, f"/v1/spots/{SPOT_ID}/window")
    w = c.get(f"/v1/spots/{SPOT_ID}/window").json()
    [p] = w["points"]
    assert p["built"] and len(p["coefficient"]) == 2 and len(p["directions_deg"]) == 36
    assert_conditional(c, f"/v1/spots/{SPOT_ID}/window.svg")
    r = c.get(f"/v1/spots/{SPOT_ID}/window.svg")
    assert r.headers["content-type"].startswith("image/svg+xml")
    ET.fromstring(r.content)  # well-formed
    assert_problem(c.get(f"/v1/spots/{SPOT_ID}/window.svg?point=nope"), 404, "nope")


def test_outlook_json_and_svg(populated: Api) -> None:
    c = populated.client
    path = f"/v1/spots/{SPOT_ID}/outlook"
    tag = assert_conditional(c, path, params={"hours": 6})
    body = c.get(path, params={"hours": 6}).json()
    assert body["spot_id"] == SPOT_ID and body["units"] == "metric" and body["cautions"]
    assert any("lifeguards" in x for x in body["cautions"])
    for step in body["steps"]:
        assert RFC3339_Z.match(step["time"]) and "hazard" in step
    imperial = c.get(path, params={"hours": 6, "units": "imperial"})
    assert imperial.json()["units"] == "imperial" and imperial.headers["etag"] != tag
    assert_problem(c.get(path, params={"hours": 0}), 422, "hours")
    assert_problem(c.get(path, params={"from": "yesterday"}), 422, "from")
    assert_problem(c.get(path, params={"agency": "nobody"}), 404, "nobody")
    start = (datetime.now(UTC) - timedelta(hours=2)).strftime("%Y-%m-%dT%H:00:00Z")
    assert c.get(path, params={"hours": 3, "from": start}).status_code == 200
    svg = c.get(f"{path}.svg", params={"hours": 6})
    assert svg.status_code == 200 and svg.headers["content-type"].startswith("image/svg+xml")
    ET.fromstring(svg.content)
    assert_conditional(c, f"{path}.svg", params={"hours": 6})


def test_agency_put_get_and_policy_change(populated: Api) -> None:
    c = populated.client
    tag = assert_conditional(c, f"/v1/agencies/{AGENCY_ID}")
    levels = [{"level": i, "label": lbl, "set_height_m": h} for i, lbl, h in
              ((0, "calm", None), (1, "care", 0.5), (2, "rough", 1.5), (3, "closed", 3.0))]
    r = c.put(f"/v1/agencies/{AGENCY_ID}", headers=populated.auth, json={
        "id": AGENCY_ID, "name": "Harbour Guard", "spots": [SPOT_ID], "alert_level": 1, "policy": {"levels": levels}})
    assert r.status_code == 200, r.text
    assert r.json()["policies"][""]["levels"][1]["label"] == "care"
    # levels and thresholds are shown with the cautions (guidance only; lifeguards and local rules decide)
    shown = c.get(f"/v1/agencies/{AGENCY_ID}").json()
    assert any("local rules" in x for x in shown["cautions"]) and any("Guidance only" in x for x in shown["cautions"])
    assert c.get(f"/v1/agencies/{AGENCY_ID}", headers={"If-None-Match": tag}).status_code == 200
    assert_problem(c.put("/v1/agencies/other", headers=populated.auth, json={"id": AGENCY_ID, "name": "x"}), 422, "id")
    bad = {"id": AGENCY_ID, "name": "x", "policy": {"levels": levels[:2]}}
    assert_problem(c.put(f"/v1/agencies/{AGENCY_ID}", headers=populated.auth, json=bad), 422, "levels")


def test_hazards_poll(populated: Api) -> None:
    c = populated.client
    path = f"/v1/agencies/{AGENCY_ID}/hazards"
    tag = assert_conditional(c, path)
    r = c.get(path)
    assert r.headers["cache-control"] == "no-cache"
    body = r.json()
    assert body["cautions"] and [s["spot_id"] for s in body["spots"]] == [SPOT_ID]
    assert body["spots"][0]["cautions"]
    # a new policy is a data change: new tag
    levels = [{"level": i, "label": f"l{i}", "set_height_m": h} for i, h in ((0, None), (1, 0.01), (2, 0.02), (3, 0.03))]
    c.put(f"/v1/agencies/{AGENCY_ID}", headers=populated.auth, json={
        "id": AGENCY_ID, "name": "Harbour Guard", "spots": [SPOT_ID], "alert_level": 1, "policy": {"levels": levels}})
    assert c.get(path, headers={"If-None-Match": tag}).status_code == 200


def test_cap_alert_lifecycle_and_feed(populated: Api) -> None:
    import xmlschema

    from app.db.session import session_scope
    from app.db.tables import Alert
    from app.formats.cap import CAP_NS, CAP_XSD_PATH, validate_cap
    from app.services.alerts import sync_alerts

    schema = xmlschema.XMLSchema(str(CAP_XSD_PATH))
    c = populated.client
    t0 = datetime(2026, 3, 24, 10, 0, tzinfo=UTC)

    def hz(level: int | None, onset: datetime) -> list[dict]:
        return [{"spot_id": SPOT_ID, "max_level": level, "max_label": f"level {level}", "onset": onset,
                 "valid_until": onset + timedelta(hours=12)}]

    with session_scope(populated.url) as s:
        [a1] = sync_alerts(s, AGENCY_ID, hz(2, t0 + timedelta(hours=3)), sender="tests@shoalcast", now=t0)
        assert sync_alerts(s, AGENCY_ID, hz(2, t0 + timedelta(hours=3)), sender="tests@shoalcast", now=t0) == []
        [a2] = sync_alerts(s, AGENCY_ID, hz(3, t0 + timedelta(hours=3)), sender="tests@shoalcast",
                           now=t0 + timedelta(hours=1))
        [a3] = sync_alerts(s, AGENCY_ID, hz(0, t0), sender="tests@shoalcast", now=t0 + timedelta(hours=2))
        ids = [a1.id, a2.id, a3.id]
        assert [a.msg_type for a in (a1, a2, a3)] == ["Alert", "Update", "Cancel"]
    q = lambda tag: f"{{{CAP_NS}}}{tag}"  # noqa: E731
    for n, alert_id in enumerate(ids):
        assert not re.search(r"[\s,]", alert_id)
        assert_conditional(c, f"/v1/alerts/{alert_id}")
        r = c.get(f"/v1/alerts/{alert_id}")
        assert r.headers["content-type"].startswith("application/cap+xml")
        assert validate_cap(r.content) == []
        schema.validate(r.content.decode())
        root = ET.fromstring(r.content)
        circle = root.find(f"{q('info')}/{q('area')}/{q('circle')}").text
        assert circle == f"{LAT:g},{LON:g} 2"  # CAP order: lat,lon radius_km
        refs = (root.findtext(q("references")) or "").split()
        assert [ref.split(",")[1] for ref in refs] == ids[:n]  # Update/Cancel reference the earlier messages
        assert all(ref.endswith("-00:00") for ref in refs)
    with session_scope(populated.url) as s:
        assert [a.id for a in s.query(Alert).filter(Alert.active.is_(True))] == [ids[2]]


def test_atom_feed_links_resolve(populated: Api) -> None:
    c = populated.client
    levels = [{"level": i, "label": f"l{i}", "set_height_m": h} for i, h in ((0, None), (1, 0.001), (2, 0.002), (3, 0.003))]
    c.put(f"/v1/agencies/{AGENCY_ID}", headers=populated.auth, json={
        "id": AGENCY_ID, "name": "Harbour Guard", "spots": [SPOT_ID], "alert_level": 1, "policy": {"levels": levels}})
    path = f"/v1/agencies/{AGENCY_ID}/alerts.atom"
    r = c.get(path)
    assert r.status_code == 200 and r.headers["content-type"].startswith("application/atom+xml")
    feed = ET.fromstring(r.content)
    ns = {"a": "http://www.w3.org/2005/Atom"}
    links = [e.find("a:link", ns).get("href") for e in feed.findall("a:entry", ns)]
    hazards = c.get(f"/v1/agencies/{AGENCY_ID}/hazards").json()
    if hazards["spots"][0]["max_level"] is not None and hazards["spots"][0]["max_level"] >= 1:
        assert links, r.text
    for href in links:
        got = c.get(urlsplit(href).path)
        assert got.status_code == 200 and got.headers["content-type"].startswith("application/cap+xml")
    assert_conditional(c, path)


def test_table_rebuild_job(populated: Api) -> None:
    c = populated.client
    assert_problem(c.post(f"/v1/spots/{SPOT_ID}/tables"), 401)
    assert_problem(c.post("/v1/spots/nowhere/tables", headers=populated.auth), 404)
    r = c.post(f"/v1/spots/{SPOT_ID}/tables", headers=populated.auth)
    assert r.status_code == 202, r.text
    assert r.headers["location"] == r.json()["href"]
    job = c.get(r.headers["location"])
    assert job.status_code == 200 and job.json()["status"] in ("queued", "running", "done", "failed")


def test_cors_and_gzip(populated: Api) -> None:
    c = populated.client
    pre = c.options("/v1/spots", headers={"Origin": "http://app.example", "Access-Control-Request-Method": "GET",
                                           "Access-Control-Request-Headers": "If-None-Match, X-API-Key"})
    assert pre.status_code == 200 and pre.headers["access-control-allow-origin"] == "http://app.example"
    r = c.get(f"/v1/spots/{SPOT_ID}/window", headers={"Origin": "http://app.example", "Accept-Encoding": "gzip"})
    assert "etag" in r.headers["access-control-expose-headers"].lower()
    assert r.headers.get("content-encoding") == "gzip"
    assert "Accept-Encoding" in r.headers["vary"]


def test_validation_errors_name_fields(api: Api) -> None:
    r = api.client.post("/v1/sources", headers=api.auth, json={"id": "Bad Id", "name": "x", "format": "nope",
                                                                "latitude": 99, "longitude": 0, "urls": []})
    body = assert_problem(r, 422, "body field")
    fields = {e["field"] for e in body["errors"]}
    assert {"body field `id`", "body field `latitude`"} <= fields
    assert_problem(api.client.post("/v1/sources", headers={**api.auth, "Content-Type": "application/json"},
                                   content=b"{not json"), 422)


def test_key_command(migrated_db: str, capsys: pytest.CaptureFixture[str]) -> None:
    import json
    import subprocess  # noqa: F401 - the command runs in-process below

    from app.commands import key as key_cmd

    parser = __import__("argparse").ArgumentParser()
    key_cmd.register(parser.add_subparsers())
    args = parser.parse_args(["key", "create", "ops", "--scope", "write", "--json"])
    assert args.func(args) == 0
    made = json.loads(capsys.readouterr().out)
    assert made["key"].startswith("sk_") and made["prefix"] in made["key"]
    args = parser.parse_args(["key", "list", "--json"])
    args.func(args)
    listed = json.loads(capsys.readouterr().out)
    assert "key" not in listed[0] and listed[0]["prefix"] == made["prefix"]
    args = parser.parse_args(["key", "revoke", made["prefix"]])
    assert args.func(args) == 0
    from app.db.session import session_scope
    from app.db.tables import ApiKey

    with session_scope(migrated_db) as s:
        row = s.query(ApiKey).one()
        assert row.revoked_at is not None and made["key"] not in (row.key_sha256, row.prefix)
