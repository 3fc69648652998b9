"""API keys for writes: created once in plaintext, stored only as sha256 plus a short prefix.

A key looks like `sk_<prefix>_<secret>`; the prefix (8 hex) is shown in listings and accepted by
`revoke`. Lookup is by the sha256 of the whole key, then `hmac.compare_digest` on the digests so the
comparison time does not depend on how many characters match.
"""

from __future__ import annotations

import hashlib
import hmac
import secrets
from dataclasses import dataclass
from datetime import datetime

from pydantic import BaseModel
from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import ApiKey, utcnow
from app.errors import BadInput, Forbidden, NotFound, Unauthorized

__all__ = ["SCOPES", "ApiKeyPublic", "CreatedKey", "create_key", "list_keys", "revoke_key", "verify_key"]

SCOPES = ("write", "admin")


class ApiKeyPublic(BaseModel):
    id: int
    name: str
    prefix: str
    scopes: list[str]
    created_at: datetime
    revoked_at: datetime | None


@dataclass(frozen=True)
class CreatedKey:
    key: str  # plaintext: shown once, never stored
    public: ApiKeyPublic


def _digest(key: str) -> str:
    return hashlib.sha256(key.encode("utf-8")).hexdigest()


def _public(row: ApiKey) -> ApiKeyPublic:
    return ApiKeyPublic(id=row.id, name=row.name, prefix=row.prefix, scopes=list(row.scopes),
                        created_at=row.created_at, revoked_at=row.revoked_at)


def create_key(session: Session, name: str, scopes: list[str] | tuple[str, ...] = ("write",)) -> CreatedKey:
    name = (name or "").strip()
    if not name or len(name) > 100:
        raise BadInput("key `name` must be 1..100 characters", field="name")
    bad = [s for s in scopes if s not in SCOPES]
    if bad or not scopes:
        raise BadInput(f"key `scopes` must be some of {', '.join(SCOPES)}; got {list(scopes)!r}", field="scopes")
    prefix = secrets.token_hex(4)
    key = f"sk_{prefix}_{secrets.token_urlsafe(32)}"
    row = ApiKey(name=name, prefix=prefix, key_sha256=_digest(key), scopes=sorted(set(scopes)))
    session.add(row)
    session.flush()
    return CreatedKey(key=key, public=_public(row))


def verify_key(session: Session, key: str | None, scope: str) -> ApiKeyPublic:
    """The key's record if it is valid, not revoked and has `scope` (admin implies every scope).

    Raises Unauthorized (missing, unknown or revoked) or Forbidden (valid key without the scope)."""
    if not key:
        raise Unauthorized("this operation needs an API key in the X-API-Key header")
    digest = _digest(key)
    row = session.scalars(select(ApiKey).where(ApiKey.key_sha256 == digest)).first()
    if row is None or not hmac.compare_digest(row.key_sha256, digest):
        raise Unauthorized("the API key is not valid")
    if row.revoked_at is not None:
        raise Unauthorized("the API key has been revoked")
    if scope not in row.scopes and "admin" not in row.scopes:
        raise Forbidden(f"the API key lacks the `{scope}` scope")
    return _public(row)


def _find(session: Session, prefix_or_id: str) -> ApiKey:
    text = str(prefix_or_id).strip()
    row = session.get(ApiKey, int(text)) if text.isdigit() and len(text) < 8 else None
    if row is None:
        row = session.scalars(select(ApiKey).where(ApiKey.prefix == text)).first()
    if row is None:
        raise NotFound(f"no API key with id or prefix {text!r}")
    return row


def revoke_key(session: Session, prefix_or_id: str) -> ApiKeyPublic:
    row = _find(session, prefix_or_id)
    if row.revoked_at is None:
        row.revoked_at = utcnow()
        session.flush()
    return _public(row)


def list_keys(session: Session) -> list[ApiKeyPublic]:
    return [_public(r) for r in session.scalars(select(ApiKey).order_by(ApiKey.id))]
