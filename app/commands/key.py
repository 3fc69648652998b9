"""`shoalcast key create|revoke|list`: API keys for the write endpoints (stored hashed)."""

from __future__ import annotations

import argparse

from app.commands.common import print_json, print_table, ready_database
from app.db.session import session_scope
from app.services import keys


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser("key", help="create, revoke and list API keys")
    ks = p.add_subparsers(dest="key_command", required=True, metavar="ACTION")

    c = ks.add_parser("create", help="create a key (the key is printed once and never stored)")
    c.add_argument("name")
    c.add_argument("--scope", action="append", choices=keys.SCOPES, help="repeatable; default: write")
    c.add_argument("--json", action="store_true")
    c.set_defaults(func=_create)

    r = ks.add_parser("revoke", help="revoke a key by its prefix or id")
    r.add_argument("prefix_or_id")
    r.add_argument("--json", action="store_true")
    r.set_defaults(func=_revoke)

    ls = ks.add_parser("list", help="list keys (prefixes only)")
    ls.add_argument("--json", action="store_true")
    ls.set_defaults(func=_list)


def _create(args: argparse.Namespace) -> int:
    with session_scope(ready_database()) as session:
        created = keys.create_key(session, args.name, args.scope or ["write"])
    if args.json:
        print_json({"key": created.key, **created.public.model_dump(mode="json")})
    else:
        print(created.key)
        print(f"(prefix {created.public.prefix}, scopes {', '.join(created.public.scopes)}; store it now: it is not kept)")
    return 0


def _revoke(args: argparse.Namespace) -> int:
    with session_scope(ready_database()) as session:
        public = keys.revoke_key(session, args.prefix_or_id)
    if args.json:
        print_json(public)
    else:
        print(f"revoked {public.prefix} ({public.name})")
    return 0


def _list(args: argparse.Namespace) -> int:
    with session_scope(ready_database()) as session:
        rows = keys.list_keys(session)
    if args.json:
        print_json(rows)
    else:
        print_table(["id", "prefix", "name", "scopes", "revoked"],
                    [[k.id, k.prefix, k.name, ",".join(k.scopes), k.revoked_at or ""] for k in rows])
    return 0
