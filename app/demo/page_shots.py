"""Screenshots of the three main pages (the README's images), taken with headless Chromium from a
server this module starts on a free loopback port over the current database. Run after
`shoalcast demo --no-serve` on the same data dir:

    python -m app.demo.page_shots docs/images [--spot ostravel-strand] [--agency skellmarrow-shorewatch]

Needs Chromium (Debian's `chromium`); pages are shot at a desktop width, the board also at a phone's.
"""

from __future__ import annotations

import argparse
import socket
import sys
import threading
import time
from pathlib import Path

from app.demo.pictures import render_url_png

__all__ = ["write_page_shots"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def write_page_shots(out: Path, *, spot: str, agency: str) -> list[Path]:
    import uvicorn

    from app.api.main import create_app
    from app.commands.common import ready_database
    from app.config import get_settings

    ready_database()
    settings = get_settings().model_copy(update={"scheduler_enabled": False})
    port = _free_port()
    server = uvicorn.Server(uvicorn.Config(create_app(settings), host="127.0.0.1", port=port, log_level="warning"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    while not server.started:
        if not thread.is_alive():
            raise RuntimeError("the page server did not start")
        time.sleep(0.05)
    base = f"http://127.0.0.1:{port}"
    shots = [("page-spots.png", "/", (1280, 900)), (f"page-spot-{spot}.png", f"/spots/{spot}?hours=48&agency={agency}", (1280, 1900)),
             ("page-board.png", f"/agencies/{agency}", (1280, 760)), ("page-board-phone.png", f"/agencies/{agency}", (390, 900))]
    out.mkdir(parents=True, exist_ok=True)
    written = []
    try:
        for name, path, (w, h) in shots:
            if render_url_png(base + path, out / name, w, h):
                written.append(out / name)
    finally:
        server.should_exit = True
        thread.join(timeout=20)
    return written


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("out", type=Path)
    ap.add_argument("--spot", default="ostravel-strand")
    ap.add_argument("--agency", default="skellmarrow-shorewatch")
    args = ap.parse_args(argv)
    written = write_page_shots(args.out, spot=args.spot, agency=args.agency)
    for path in written:
        print(path)
    if not written:
        print("no screenshots: chromium is not installed", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
