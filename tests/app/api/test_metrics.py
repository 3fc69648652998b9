"""The API exposes Prometheus metrics and echoes a request id (observability, issue 9)."""

from __future__ import annotations

from fastapi.testclient import TestClient

from app.api.main import create_app


def test_metrics_count_requests_by_route(migrated_db: str) -> None:
    with TestClient(create_app()) as client:
        assert client.get("/healthz").status_code == 200
        assert client.get("/v1/spots/no-such-spot").status_code == 404
        r = client.get("/metrics")
    assert r.status_code == 200 and r.headers["content-type"].startswith("text/plain; version=0.0.4")
    text = r.text
    assert 'http_requests_total{method="GET",route="/healthz",status="200"}' in text
    assert 'route="/v1/spots/{spot_id}",status="404"' in text  # the template, not the raw path
    assert "http_request_duration_seconds_bucket" in text


def test_request_id_is_echoed(migrated_db: str) -> None:
    with TestClient(create_app()) as client:
        r = client.get("/healthz", headers={"X-Request-ID": "abc-123"})
    assert r.headers.get("x-request-id") == "abc-123"
