"""Liveness (`/healthz`: the process answers) and readiness (`/readyz`: database reachable, schema at
head, scheduler state, table freshness)."""

from __future__ import annotations

from datetime import UTC, datetime

import sqlalchemy as sa
from fastapi import APIRouter, Request
from pydantic import BaseModel

from app.api.deps import SessionDep, json_response
from app.api.http import problem
from app.api.routes._common import Problem

router = APIRouter(tags=["health"])


class Liveness(BaseModel):
    status: str = "ok"


class TableFreshness(BaseModel):
    break_points: int
    with_tables: int
    oldest_built_at: datetime | None
    newest_built_at: datetime | None


class Readiness(BaseModel):
    status: str  # ready | not-ready
    database: str  # ok | error message
    schema_revision: str | None
    schema_head: str | None
    scheduler: str  # disabled | standby | active | error
    tables: TableFreshness | None


def _aware(t: datetime | None) -> datetime | None:
    # SQLite aggregates bypass the column type and come back naive (they are UTC)
    return t.replace(tzinfo=UTC) if t is not None and t.tzinfo is None else t


_head_cache: dict[str, str | None] = {}


def _schema(url: str) -> tuple[str | None, str | None]:
    from alembic.script import ScriptDirectory

    from app.db import migrate

    if url not in _head_cache:
        _head_cache[url] = ScriptDirectory.from_config(migrate.alembic_config(url)).get_current_head()
    return migrate.current_revision(url), _head_cache[url]


@router.get("/healthz", summary="Liveness: the process answers", response_model=Liveness)
def healthz() -> Liveness:
    return Liveness()


@router.get(
    "/readyz",
    summary="Readiness: database, schema, scheduler and table freshness",
    response_model=Readiness,
    responses={503: {"description": "Not ready (body is problem+json with a `checks` member)", "model": Problem,
                     "content": {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}}}},
)
def readyz(request: Request, session: SessionDep):  # type: ignore[no-untyped-def]
    from app.db.tables import BreakPoint, TransferTableRow

    state = request.app.state
    scheduler = state.scheduler.state if getattr(state, "scheduler", None) else "disabled"
    database, revision, head, tables = "ok", None, None, None
    try:
        session.execute(sa.text("SELECT 1"))
        revision, head = _schema(state.database_url)
        n_points = session.scalar(sa.select(sa.func.count()).select_from(BreakPoint)) or 0
        n_tables, oldest, newest = session.execute(
            sa.select(sa.func.count(), sa.func.min(TransferTableRow.built_at), sa.func.max(TransferTableRow.built_at))
        ).one()
        oldest, newest = (_aware(t) for t in (oldest, newest))
        tables = TableFreshness(break_points=n_points, with_tables=n_tables or 0,
                                oldest_built_at=oldest, newest_built_at=newest)
    except Exception as exc:  # noqa: BLE001 - readiness reports the failure instead of raising
        database = f"{type(exc).__name__}: {str(exc).splitlines()[0][:200]}"
    ok = database == "ok" and revision == head and scheduler != "error"
    body = Readiness(status="ready" if ok else "not-ready", database=database, schema_revision=revision,
                     schema_head=head, scheduler=scheduler, tables=tables)
    if not ok:
        reasons = []
        if database != "ok":
            reasons.append(f"database: {database}")
        elif revision != head:
            reasons.append(f"schema at {revision or 'none'}, head is {head}: run `shoalcast db upgrade`")
        if scheduler == "error":
            reasons.append("the in-process scheduler failed to start")
        return problem(503, "Not ready", "; ".join(reasons), instance="/readyz",
                       checks=body.model_dump(mode="json"))
    return json_response(body)


__all__ = ["router"]
