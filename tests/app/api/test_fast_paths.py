"""The cheap answers of the polled paths (hazards, outlook JSON/SVG): If-None-Match is answered from
the data version alone (app.db.version), a 200 of an unchanged body is served from the bytes made
once, and every change of an input (an ingest, a deletion) moves the ETag.

Outside reference: RFC 9110 §13.1.2 (If-None-Match: a listed tag that matches -> 304; `*` matches
only a current representation, so it cannot stand in for a resource that is not there) and
§15.4.5 (a 304 has no body and repeats ETag and Cache-Control).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from app.api.routes import outlooks as outlook_routes
from app.services import hazards
from tests.app.api.conftest import AGENCY_ID, SOURCE_ID, SPOT_ID, Api, observation_files

HAZARDS = f"/v1/agencies/{AGENCY_ID}/hazards"
OUTLOOK = f"/v1/spots/{SPOT_ID}/outlook"


@pytest.fixture
def no_session(monkeypatch: pytest.MonkeyPatch):  # type: ignore[no-untyped-def]
    """Fail any ORM session the request opens (the 304 and memo paths must not need one)."""
    from app.api import deps

    def refuse(request):  # type: ignore[no-untyped-def]
        raise AssertionError("this answer should not need a database session")

    monkeypatch.setattr(deps, "request_session", refuse)
    for mod in ("app.api.routes.agencies", "app.api.routes.outlooks"):
        monkeypatch.setattr(f"{mod}.request_session", refuse)


@pytest.mark.parametrize("path", [HAZARDS, OUTLOOK, f"{OUTLOOK}.svg"])
def test_304_and_repeat_200_need_no_session(populated: Api, path: str, request: pytest.FixtureRequest) -> None:
    c = populated.client
    first = c.get(path)
    assert first.status_code == 200, first.text
    tag = first.headers["etag"]
    request.getfixturevalue("no_session")
    r = c.get(path, headers={"If-None-Match": f'W/"other", {tag}'})
    assert r.status_code == 304 and r.content == b"" and r.headers["etag"] == tag
    assert r.headers["cache-control"] == first.headers["cache-control"]
    if path != f"{OUTLOOK}.svg":  # JSON bodies are served from the bytes made for this data version
        again = c.get(path)
        assert again.status_code == 200 and again.content == first.content and again.headers["etag"] == tag


def test_an_ingest_moves_the_tags(populated: Api) -> None:
    c = populated.client
    tags = {p: c.get(p).headers["etag"] for p in (HAZARDS, OUTLOOK)}
    files = observation_files(datetime.now(UTC) + timedelta(hours=1))
    r = c.post(f"/v1/sources/{SOURCE_ID}/observations", headers=populated.auth,
               files=[("files", (n, t.encode(), "text/plain")) for n, t in files.items()])
    assert r.status_code == 200, r.text
    for path, tag in tags.items():
        r = c.get(path, headers={"If-None-Match": tag})
        assert r.status_code == 200 and r.headers["etag"] != tag, path


def test_star_and_stale_tags_still_get_404_for_what_is_gone(populated: Api) -> None:
    c = populated.client
    assert c.get("/v1/agencies/nobody/hazards", headers={"If-None-Match": "*"}).status_code == 404
    assert c.get("/v1/spots/nowhere/outlook", headers={"If-None-Match": "*"}).status_code == 404
    tag = c.get(OUTLOOK).headers["etag"]
    assert c.delete(f"/v1/spots/{SPOT_ID}", headers=populated.auth).status_code == 204
    assert c.get(OUTLOOK, headers={"If-None-Match": tag}).status_code == 404  # the deletion moved the version


def test_memo_keys_hold_the_version() -> None:
    assert hazards.hazard_tag(5, "a") != hazards.hazard_tag(6, "a") != hazards.hazard_tag(6, "b")
    now = datetime(2031, 1, 1, 10, 5, tzinfo=UTC)
    assert hazards.hazard_tag(5, "a", now=now) == hazards.hazard_tag(5, "a", now=now + timedelta(minutes=50))
    assert hazards.hazard_tag(5, "a", now=now) != hazards.hazard_tag(5, "a", now=now + timedelta(hours=1))
    assert outlook_routes.outlook_tag(5, "s", None) != outlook_routes.outlook_tag(5, "s", "g")
