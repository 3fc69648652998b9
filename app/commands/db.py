"""`shoalcast db upgrade|downgrade|current`: schema migrations (Alembic)."""

from __future__ import annotations

import argparse

from app.commands.common import database_url, print_json
from app.db import migrate


def _upgrade(args: argparse.Namespace) -> int:
    url = database_url()
    migrate.upgrade(url, args.revision)
    print(f"database at {migrate.current_revision(url)}")
    return 0


def _downgrade(args: argparse.Namespace) -> int:
    url = database_url()
    migrate.downgrade(url, args.revision)
    print(f"database at {migrate.current_revision(url) or 'base (empty)'}")
    return 0


def _current(args: argparse.Namespace) -> int:
    rev = migrate.current_revision(database_url())
    if args.json:
        print_json({"revision": rev})
    else:
        print(rev or "base (empty)")
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("db", help="database schema migrations", description=__doc__)
    s = p.add_subparsers(dest="db_command", required=True, metavar="COMMAND")
    up = s.add_parser("upgrade", help="migrate the database to the latest schema (or REVISION)")
    up.add_argument("revision", nargs="?", default="head")
    up.set_defaults(func=_upgrade)
    down = s.add_parser("downgrade", help="migrate down to REVISION ('base' empties the database)")
    down.add_argument("revision")
    down.set_defaults(func=_downgrade)
    cur = s.add_parser("current", help="print the current schema revision")
    cur.add_argument("--json", action="store_true", help="print JSON")
    cur.set_defaults(func=_current)
