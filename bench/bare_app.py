"""The baseline of `bench.bench_api`: a bare FastAPI app with one constant endpoint (no middleware,
no database), served by uvicorn with the same settings as shoalcast."""

from __future__ import annotations

from fastapi import FastAPI


def create_bare_app() -> FastAPI:
    app = FastAPI()

    @app.get("/bare")
    def bare() -> dict[str, str]:
        return {"status": "ok"}

    @app.get("/healthz")
    def healthz() -> dict[str, str]:
        return {"status": "ok"}

    return app
