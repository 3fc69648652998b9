"""HTML error pages for the web pages: 404 for unknown ids and paths, 400 for bad query values.

`wants_html` decides per request: the page paths ("/", /spots, /agencies, /sources, /static) always
get HTML; other paths outside the API get HTML when the client asks for it (a browser's Accept),
and the API (/v1, health, metrics, OpenAPI) keeps its problem+json.
"""

from __future__ import annotations

from starlette.requests import Request
from starlette.responses import HTMLResponse

from app.web.render import render

__all__ = ["html_error", "wants_html"]

_PAGE_PREFIXES = ("/spots", "/agencies", "/sources", "/static")
_API_PREFIXES = ("/v1", "/healthz", "/readyz", "/metrics", "/openapi.json", "/docs")

_HINT = {
    400: "One of the values in the address is not one this page knows. Check the link, or start again from the list of spots.",
    404: "There is nothing at this address. The spot or agency may have been renamed or removed.",
    405: "This address is a page to read, not a form to send.",
    500: "Something went wrong on our side. It has been logged; please try again shortly.",
}


def wants_html(request: Request) -> bool:
    path = request.url.path
    if path.startswith(_API_PREFIXES):
        return False
    if path == "/" or path.startswith(_PAGE_PREFIXES):
        return True
    return "text/html" in request.headers.get("accept", "")


def html_error(status: int, title: str, detail: str, *, headers: dict[str, str] | None = None) -> HTMLResponse:
    from app.services import outlooks

    body = render("error.html", status=status, title=title, detail=detail, hint=_HINT.get(status, ""),
                  cautions=list(outlooks.CAUTIONS), page_title=f"{status} {title}", nav_agencies=[])
    return HTMLResponse(body, status_code=status, headers=headers)
