"""CAP 1.2 alerts as issued (application/cap+xml); they never change, so they cache well."""

from __future__ import annotations

from fastapi import APIRouter, Path, Request
from starlette.responses import Response

from app.api.deps import SessionDep, SettingsDep, cache_control, conditional
from app.api.http import etag_for
from app.api.routes._common import problems
from app.db.tables import Alert
from app.errors import NotFound
from app.formats.cap import CAP_MEDIA_TYPE

router = APIRouter(tags=["alerts"])


@router.get(
    "/alerts/{alert_id}",
    summary="One CAP 1.2 alert message (Alert, Update or Cancel) as XML",
    response_class=Response,
    responses={200: {"content": {CAP_MEDIA_TYPE: {"schema": {"type": "string"}}}, "description": "CAP 1.2 XML"},
               **problems(304, 404, 422)},
)
def get_alert(request: Request, session: SessionDep, settings: SettingsDep,
              alert_id: str = Path(max_length=120)) -> Response:
    alert = session.get(Alert, alert_id)
    if alert is None:
        raise NotFound(f"no alert with id {alert_id!r}")
    etag = etag_for("cap-1", alert.id, alert.sent)  # an issued message is immutable
    return conditional(request, etag, lambda: Response(alert.xml.encode("utf-8"), media_type=CAP_MEDIA_TYPE),
                       cache=cache_control(settings), vary="Accept-Encoding")


__all__ = ["router"]
