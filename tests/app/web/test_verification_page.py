"""The spot page's verification section: shown once the spot has been verified, with the scores,
the calibration state and the two pictures; the page's ETag changes with a new run.
(Presentation only; the scores are tested against Wilks 2011 §8.3 in tests/models/test_verification.py.)"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from app.db.session import session_scope
from app.services import calibration, verification
from app.services.spots import get_spot
from tests.app.web.conftest import SPOT_ID, Api


def _store(url: str) -> dict:
    t0 = datetime(2030, 1, 1, tzinfo=UTC)
    pairs = [verification.Pair(t0 + timedelta(hours=h), 1.0 + 0.1 * h, 0.9 + 0.1 * h, input="model-forecast",
                               source="model-t", offshore_direction_deg=265.0, offshore_period_s=13.0)
             for h in range(5)]  # fmt: skip
    with session_scope(url) as s:
        body = verification.report(get_spot(s, SPOT_ID), pairs, observations="log.csv", compared="test")
        verification.store_verification(s, body, who="tester")
    return body


def test_spot_page_shows_the_latest_verification_and_calibration(site: Api) -> None:
    c = site.client
    page = c.get(f"/spots/{SPOT_ID}")
    assert page.status_code == 200 and "Against observations" not in page.text
    etag = page.headers["etag"]
    body = _store(site.url)
    page = c.get(f"/spots/{SPOT_ID}", headers={"If-None-Match": etag})
    assert page.status_code == 200  # a new run changes the page
    html = page.text
    assert "Against observations" in html and f"/v1/spots/{SPOT_ID}/verification.svg?kind=scatter" in html
    assert "5 pairs" in html and f"{body['bias_m']:.2f}" in html and "not calibrated" in html
    assert "<th scope=\"row\">W</th>" in html
    assert "lifeguards" in html
    with session_scope(site.url) as s:
        calibration.apply_factor(s, SPOT_ID, 1.1, stderr=0.02, who="tester", metrics={})
    html = c.get(f"/spots/{SPOT_ID}").text
    assert "calibrated: × 1.100 (version 1)" in html
