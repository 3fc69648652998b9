"""`shoalcast source add|list`: offshore buoys and model feeds."""

from __future__ import annotations

import argparse

from app.commands.common import print_json, print_table, ready_database, rfc3339
from app.db.session import session_scope


def _add(args: argparse.Namespace) -> int:
    from app.ingest.sources import add_source, load_source_toml

    url = ready_database()
    for path in args.files:
        config = load_source_toml(path)
        with session_scope(url) as session:
            add_source(session, config)
        print(f"added source {config.id} ({config.format}, every {config.poll_minutes:g} min, {len(config.urls)} URL(s))")
    return 0


def _list(args: argparse.Namespace) -> int:
    from app.ingest.sources import list_sources

    with session_scope(ready_database()) as session:
        sources = list_sources(session)
    if args.json:
        print_json(sources)
        return 0
    if not sources:
        print("no sources yet: add one with `shoalcast source add SOURCE.toml`")
        return 0
    print_table(
        ["id", "format", "poll min", "records", "latest", "last success", "stored", "rejected", "last error"],
        [
            [
                s.id,
                s.format,
                f"{s.poll_minutes:g}",
                s.observations,
                rfc3339(s.latest_time) if s.latest_time else "-",
                rfc3339(s.health.last_success) if s.health.last_success else "-",
                s.health.stored,
                s.health.rejected,
                (s.health.last_error or "")[:60],
            ]
            for s in sources
        ],
    )
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("source", help="add and list offshore sources", description=__doc__)
    s = p.add_subparsers(dest="source_command", required=True, metavar="COMMAND")
    add = s.add_parser("add", help="add (or replace) sources from SOURCE.toml files")
    add.add_argument("files", nargs="+", metavar="SOURCE.toml")
    add.set_defaults(func=_add)
    ls = s.add_parser("list", help="list sources with their health")
    ls.add_argument("--json", action="store_true", help="print JSON")
    ls.set_defaults(func=_list)
