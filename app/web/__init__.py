"""Server-rendered pages for forecasters and lifeguards over the same services as the JSON API:
Jinja2 templates, one stylesheet, one small script (the board's refresh), all served by shoalcast.

`install(app)` adds the page routes and the static files to the FastAPI app.
"""

from __future__ import annotations

from fastapi import FastAPI
from starlette.staticfiles import StaticFiles

__all__ = ["install"]


def install(app: FastAPI) -> None:
    from app.web.pages import router
    from app.web.render import STATIC_DIR

    app.include_router(router)
    app.mount("/static", StaticFiles(directory=STATIC_DIR), name="static")
