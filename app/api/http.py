"""HTTP helpers shared by the routes: weak ETags, conditional GET (304) and RFC 9457 problem+json.

- ETags are always weak (`W/"…"`): GZip middleware changes the bytes after the tag is set, so a
  strong tag would lie (RFC 9110 §8.8.3: a strong validator changes with every byte). Tags hash the data version, not the body.
- `If-None-Match` uses the weak comparison of RFC 9110 §8.8.3.2 and accepts a list or `*`.
- A 304 repeats the ETag, Cache-Control and Vary the 200 would carry, and has no body (RFC 9110 §15.4.5).
- Problem bodies (RFC 9457) carry `status` equal to the HTTP status and use `application/problem+json`.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Mapping
from typing import Any

from starlette.responses import JSONResponse, Response

__all__ = [
    "PROBLEM_MEDIA_TYPE",
    "ProblemResponse",
    "etag_for",
    "if_none_match_matches",
    "not_modified",
    "parse_etag_list",
    "problem",
    "strong_compare",
    "weak_compare",
]

PROBLEM_MEDIA_TYPE = "application/problem+json"

# entity-tag = [ "W/" ] DQUOTE *etagc DQUOTE  (RFC 9110 §8.8.3); etagc excludes DQUOTE, SP, controls.
_ETAG_RE = re.compile(r'\s*((?:W/)?"[\x21\x23-\x7e\x80-\xff]*")\s*(?:,|$)')


def etag_for(*parts: object) -> str:
    """A weak ETag from the parts that identify a representation (data version, serializer version,
    query options). Parts are joined unambiguously (type-tagged, separated) before hashing."""
    h = hashlib.sha256()
    for part in parts:
        data = part if isinstance(part, bytes) else repr(part).encode("utf-8")
        h.update(len(data).to_bytes(8, "big"))
        h.update(data)
    return f'W/"{h.hexdigest()[:32]}"'


def _opaque(tag: str) -> str:
    return tag[2:] if tag.startswith("W/") else tag


def weak_compare(a: str, b: str) -> bool:
    """RFC 9110 §8.8.3.2 weak comparison: opaque tags equal, either or both may be weak."""
    return _opaque(a.strip()) == _opaque(b.strip())


def strong_compare(a: str, b: str) -> bool:
    """RFC 9110 §8.8.3.2 strong comparison: both strong and identical."""
    a, b = a.strip(), b.strip()
    return not a.startswith("W/") and not b.startswith("W/") and a == b


def parse_etag_list(header: str) -> list[str] | None:
    """The entity tags in an If-None-Match value; `["*"]` for `*`; None if the header is malformed
    (a malformed header is ignored, as if absent, rather than failing the request)."""
    value = header.strip()
    if value == "*":
        return ["*"]
    tags: list[str] = []
    pos = 0
    while pos < len(value):
        m = _ETAG_RE.match(value, pos)
        if not m:
            return None
        tags.append(m.group(1))
        pos = m.end()
    return tags or None


def if_none_match_matches(if_none_match: str | None, etag: str) -> bool:
    """True when the request's If-None-Match says the client already holds `etag` (→ 304 on GET/HEAD)."""
    if not if_none_match:
        return False
    tags = parse_etag_list(if_none_match)
    if tags is None:
        return False
    return tags == ["*"] or any(weak_compare(t, etag) for t in tags)


def not_modified(
    etag: str,
    *,
    cache_control: str | None = None,
    vary: str | None = None,
    headers: Mapping[str, str] | None = None,
) -> Response:
    """A 304 with no body, repeating the validators and caching headers of the 200 it stands for."""
    out: dict[str, str] = {"ETag": etag}
    if cache_control:
        out["Cache-Control"] = cache_control
    if vary:
        out["Vary"] = vary
    for key, value in (headers or {}).items():
        # RFC 9110 §15.4.5: only these header fields are repeated on a 304 (plus our own X- headers).
        if key.lower() in ("content-location", "date", "expires", "last-modified") or key.lower().startswith("x-"):
            out[key] = value
    return Response(status_code=304, headers=out)


class ProblemResponse(JSONResponse):
    """JSON response with the RFC 9457 media type (declare it in routes' `responses=`)."""

    media_type = PROBLEM_MEDIA_TYPE


def problem(
    status: int,
    title: str,
    detail: str | None = None,
    type: str = "about:blank",  # noqa: A002 - the RFC 9457 member is called `type`
    instance: str | None = None,
    *,
    headers: Mapping[str, str] | None = None,
    **extensions: Any,
) -> ProblemResponse:
    """An RFC 9457 problem response; `status` in the body always equals the HTTP status.

    Extension members go in `extensions` (names with `_`, not `-`, per RFC 7807 errata 6178).
    """
    if not isinstance(status, int) or not 400 <= status <= 599:
        raise ValueError(f"`status` must be an HTTP error status 400..599, got {status!r}")
    body: dict[str, Any] = {"type": type, "title": title, "status": status}
    if detail is not None:
        body["detail"] = detail
    if instance is not None:
        body["instance"] = instance
    body.update(extensions)
    return ProblemResponse(body, status_code=status, headers=dict(headers or {}))
