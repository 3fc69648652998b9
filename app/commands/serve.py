"""`shoalcast serve`: the REST API and the web pages under uvicorn (app factory), optionally with the in-process scheduler."""

from __future__ import annotations

import argparse
import os


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser("serve", help="serve the REST API and the web pages (uvicorn)")
    p.add_argument("--host", default="127.0.0.1")
    p.add_argument("--port", type=int, default=8000)
    p.add_argument("--workers", type=int, default=1, help="uvicorn worker processes (stateless; one scheduler at most)")
    p.add_argument("--no-scheduler", action="store_true",
                   help="do not run the scheduler in-process (run `shoalcast worker` instead)")
    p.add_argument("--migrate", action="store_true", help="upgrade the database schema before serving")
    p.add_argument("--access-log", action="store_true",
                   help="log a line per request (off by default: it costs throughput; /metrics counts requests)")
    p.set_defaults(func=_run)


def server_impl() -> tuple[str, str]:
    """uvicorn's event loop and HTTP parser: uvloop and httptools (`uvicorn[standard]`, about 1.6x
    the requests per second of asyncio and h11 on a bare endpoint, bench/bench_api.py) where they
    are installed (uvloop is not built for Windows), else asyncio and h11."""
    from importlib.util import find_spec

    return ("uvloop" if find_spec("uvloop") else "asyncio"), ("httptools" if find_spec("httptools") else "h11")


def _run(args: argparse.Namespace) -> int:
    import uvicorn

    from app.commands.common import database_url, ready_database
    from app.config import get_settings

    if args.no_scheduler:
        os.environ["SHOALCAST_SCHEDULER_ENABLED"] = "false"  # inherited by the workers
        get_settings.cache_clear()
    if args.migrate:
        from app.db import migrate

        migrate.upgrade(database_url())
    ready_database()
    if args.workers < 1:
        from app.errors import BadInput

        raise BadInput("`--workers` must be at least 1", field="workers")
    loop, http = server_impl()
    uvicorn.run("app.api.main:create_app", factory=True, host=args.host, port=args.port, workers=args.workers,
                log_level="info", proxy_headers=False, loop=loop, http=http, access_log=args.access_log)  # fmt: skip
    return 0
