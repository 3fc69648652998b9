"""Server time of the spot page against the JSON outlook of the same spot, in-process side by side.

One app (TestClient, SQLite), one spot with a 72-hour model forecast (the web tests' site). Both
requests are warmed first, so both read the same cached outlook; each round then times full 200
answers (no If-None-Match). The ratio is page time over JSON time (aim <= 1.5).
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

from bench.common import best_of


def run(quick: bool = False) -> list[dict]:
    from fastapi.testclient import TestClient

    from app.api.main import create_app
    from app.db import migrate
    from tests.app.web import conftest as fx

    tmp = Path(tempfile.mkdtemp(prefix="shoalcast-bench-web-"))
    url = f"sqlite:///{tmp / 'bench.sqlite3'}"
    migrate.upgrade(url)
    number = 5 if quick else 20
    with TestClient(create_app(fx.make_settings(url))) as client:
        fx.build_site(client, url, fx.new_key(url))
        page_path = f"/spots/{fx.SPOT_ID}?hours=72"
        json_path = f"/v1/spots/{fx.SPOT_ID}/outlook?hours=72"
        for path in (page_path, json_path):  # warm: the outlook is computed once and cached
            r = client.get(path)
            assert r.status_code == 200, r.text[:500]
        steps = len(client.get(json_path).json()["steps"])
        rounds = []
        for _ in range(3 if quick else 5):  # alternate so both see the same machine load
            rounds.append((best_of(lambda: client.get(page_path), repeat=1, number=number),
                           best_of(lambda: client.get(json_path), repeat=1, number=number)))
    page = min(p for p, _ in rounds)
    json_ = min(j for _, j in rounds)
    return [
        {"benchmark": f"web: JSON outlook, {steps} steps (cached)", "result": f"{json_ * 1000:.1f} ms per request"},
        {"benchmark": f"web: spot page, {steps} hourly rows (same cached outlook)",
         "result": f"{page * 1000:.1f} ms per request", "ratio": round(page / json_, 3),
         "ratio_of": "page time vs JSON outlook time, same app, in-process", "target": "<= 1.5"},
    ]


if __name__ == "__main__":
    from bench.common import print_rows

    print_rows(run(quick="--quick" in sys.argv))
