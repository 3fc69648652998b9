"""ETag, 304 and problem+json helpers.

Sources: RFC 9110 §8.8.3.2 weak/strong comparison example table (from memory: W/"1" vs W/"1" weak
match / strong no; W/"1" vs W/"2" neither; W/"1" vs "1" weak match / strong no; "1" vs "1" both);
RFC 9110 §13.1.2 If-None-Match list and `*`; RFC 9457 §3.1 problem members (status = HTTP status).
"""

from __future__ import annotations

import asyncio
import json

import httpx
import pytest
from fastapi import FastAPI, Request

from app.api.http import (
    PROBLEM_MEDIA_TYPE,
    etag_for,
    if_none_match_matches,
    not_modified,
    parse_etag_list,
    problem,
    strong_compare,
    weak_compare,
)


@pytest.mark.parametrize(
    "a, b, strong, weak",
    [
        ('W/"1"', 'W/"1"', False, True),
        ('W/"1"', 'W/"2"', False, False),
        ('W/"1"', '"1"', False, True),
        ('"1"', '"1"', True, True),
    ],
)
def test_rfc9110_comparison_table(a, b, strong, weak):
    assert strong_compare(a, b) is strong
    assert weak_compare(a, b) is weak
    assert weak_compare(b, a) is weak  # symmetric


def test_etag_for_is_weak_stable_and_separates_parts():
    tag = etag_for("spot-1", 7, "metric")
    assert tag.startswith('W/"') and tag.endswith('"')
    assert tag == etag_for("spot-1", 7, "metric")
    assert tag != etag_for("spot-1", 8, "metric")
    assert etag_for("ab", "c") != etag_for("a", "bc")  # joined unambiguously
    assert etag_for(1) != etag_for("1")


@pytest.mark.parametrize(
    "header, expect",
    [
        ('"a"', ['"a"']),
        ('"a", W/"b" ,"c"', ['"a"', 'W/"b"', '"c"']),
        ("*", ["*"]),
        ('"a" "b"', None),
        ("a", None),
        ('"a",', ['"a"']),
    ],
)
def test_parse_etag_list(header, expect):
    assert parse_etag_list(header) == expect


@pytest.mark.parametrize(
    "header, match",
    [(None, False), ("", False), ('W/"v1"', True), ('"v1"', True), ('"v0", W/"v1"', True), ('"v2"', False),
     ("*", True), ("garbage", False)],
)
def test_if_none_match(header, match):
    assert if_none_match_matches(header, 'W/"v1"') is match


def _get(app: FastAPI, path: str, headers: dict[str, str] | None = None) -> httpx.Response:
    # httpx over ASGI directly: starlette's TestClient warns (deprecation) under filterwarnings=error.
    async def go() -> httpx.Response:
        transport = httpx.ASGITransport(app=app)
        async with httpx.AsyncClient(transport=transport, base_url="http://test") as client:
            return await client.get(path, headers=headers)

    return asyncio.run(go())


def _app() -> FastAPI:
    app = FastAPI()
    tag = etag_for("hazards", 42)
    headers = {"ETag": tag, "Cache-Control": "no-cache", "Vary": "Accept-Encoding"}

    @app.get("/thing")
    def thing(request: Request):
        if if_none_match_matches(request.headers.get("if-none-match"), tag):
            return not_modified(tag, cache_control="no-cache", vary="Accept-Encoding",
                                headers={"Content-Type": "application/json", "X-Data-Version": "42"})
        from fastapi.responses import JSONResponse
        return JSONResponse({"level": 1}, headers={**headers, "X-Data-Version": "42"})

    @app.get("/missing")
    def missing():
        return problem(404, "Not found", "no spot with id `nowhere-cove`", instance="/v1/spots/nowhere-cove",
                       spot_id="nowhere-cove")

    return app


def test_304_repeats_validators_and_has_no_body():
    app = _app()
    first = _get(app, "/thing")
    assert first.status_code == 200
    again = _get(app, "/thing", {"If-None-Match": first.headers["etag"]})
    assert again.status_code == 304
    assert again.content == b""
    for h in ("etag", "cache-control", "vary", "x-data-version"):
        assert again.headers[h] == first.headers[h]
    assert "content-type" not in again.headers  # not a representation header on 304
    stale = _get(app, "/thing", {"If-None-Match": 'W/"old"'})
    assert stale.status_code == 200


def test_problem_body_status_equals_http_status():
    r = _get(_app(), "/missing")
    assert r.status_code == 404
    assert r.headers["content-type"] == PROBLEM_MEDIA_TYPE
    body = r.json()
    assert body == {"type": "about:blank", "title": "Not found", "status": 404,
                    "detail": "no spot with id `nowhere-cove`", "instance": "/v1/spots/nowhere-cove",
                    "spot_id": "nowhere-cove"}


@pytest.mark.parametrize("status", [400, 401, 403, 413, 422, 500, 503])
def test_problem_status_member_matches(status):
    r = problem(status, "t", "d")
    assert r.status_code == status
    assert json.loads(r.body)["status"] == status
    assert r.media_type == PROBLEM_MEDIA_TYPE


def test_problem_refuses_non_error_status():
    with pytest.raises(ValueError, match="`status`"):
        problem(200, "ok")
