"""OpenAPI pieces shared by the routers: the problem+json schema and response declarations."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ConfigDict, Field

from app.api.http import PROBLEM_MEDIA_TYPE
from app.cautions import GENERAL

CAUTIONS = list(GENERAL)


class Problem(BaseModel):
    """RFC 9457 problem details (extension members such as `field`, `errors`, `request_id` may appear)."""

    model_config = ConfigDict(extra="allow", json_schema_extra={"examples": [
        {"type": "about:blank", "title": "Not found", "status": 404, "detail": "no spot with id 'nowhere'",
         "instance": "/v1/spots/nowhere"}]})

    type: str = "about:blank"
    title: str
    status: int = Field(ge=400, le=599)
    detail: str | None = None
    instance: str | None = None


_TEXT = {
    304: "Not modified: the If-None-Match tag is current (no body; same ETag and Cache-Control).",
    400: "The request body could not be parsed (malformed JSON or multipart).",
    401: "Missing, unknown or revoked API key.",
    403: "The API key lacks the needed scope.",
    404: "No such resource.",
    409: "Conflicts with the current state.",
    413: "The request body is over the size limit.",
    422: "Invalid input; `detail` and `field`/`errors` name the field.",
    503: "A needed service is not available yet.",
}


def problems(*codes: int) -> dict[int | str, dict[str, Any]]:
    out: dict[int | str, dict[str, Any]] = {}
    for code in codes:
        if code == 304:
            out[304] = {"description": _TEXT[304], "content": {}}
        else:
            out[code] = {"description": _TEXT[code], "model": Problem,
                         "content": {PROBLEM_MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}}}
    return out


READ = (304, 404, 422)
WRITE = (400, 401, 403, 404, 413, 422)
