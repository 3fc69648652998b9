"""Exceptions raised by the service on purpose; the API maps each to a problem+json status.

    ShoalcastError            base
    ├── BadInput              (422) a profile, source, policy, file or request is invalid
    │   └── ProfileError      a spot profile or its bathymetry is invalid (names the field/file)
    ├── NotFound              (404) an id that does not exist
    ├── Conflict              (409) the request conflicts with the current state
    ├── Unauthorized          (401) missing or invalid API key
    ├── Forbidden             (403) the key lacks the scope
    ├── TooLarge              (413) an upload or body over the configured limit
    └── FetchError            a source could not be fetched (recorded in its health, never raised to users)
"""

from __future__ import annotations


class ShoalcastError(Exception):
    status = 500
    title = "Internal error"

    def __init__(self, detail: str, *, field: str | None = None) -> None:
        super().__init__(detail)
        self.detail = detail
        self.field = field


class BadInput(ShoalcastError):
    status = 422
    title = "Invalid input"


class ProfileError(BadInput):
    title = "Invalid spot profile"


class NotFound(ShoalcastError):
    status = 404
    title = "Not found"


class Conflict(ShoalcastError):
    status = 409
    title = "Conflict"


class Unauthorized(ShoalcastError):
    status = 401
    title = "Unauthorized"


class Forbidden(ShoalcastError):
    status = 403
    title = "Forbidden"


class TooLarge(ShoalcastError):
    status = 413
    title = "Payload too large"


class FetchError(ShoalcastError):
    status = 502
    title = "Upstream fetch failed"


__all__ = [
    "BadInput",
    "Conflict",
    "FetchError",
    "Forbidden",
    "NotFound",
    "ProfileError",
    "ShoalcastError",
    "TooLarge",
    "Unauthorized",
]
