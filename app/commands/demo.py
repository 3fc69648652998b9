"""`shoalcast demo`: the whole job on an invented coast, from nothing (see app/demo/run.py)."""

from __future__ import annotations

import argparse


def _run(args: argparse.Namespace) -> int:
    from app.demo.run import run_demo

    return run_demo(args.dir, serve=not args.no_serve, port=args.port, feed_port=args.feed_port)


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser("demo", help="run the whole job on the fictional demo coast", description=__doc__)
    p.add_argument("--no-serve", action="store_true", help="stop after printing the outlooks (no API)")
    p.add_argument("--port", type=int, default=8000, help="API port (default 8000)")
    p.add_argument("--feed-port", type=int, default=None, help="demo feed port on 127.0.0.1 (default 8765, else any free port)")
    p.add_argument("--dir", default="var/demo", help="where the coast, feed and source files go (default var/demo)")
    p.set_defaults(func=_run)
