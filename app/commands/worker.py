"""`shoalcast worker [--once] [--json]`: poll the sources on their schedules (the scheduler alone).

However many workers start, one schedules (a PostgreSQL advisory lock, or a file lock on SQLite); the
others wait and take over if it stops. `--once` polls every source once, prints what each did and
exits (it takes no lock: polls are idempotent).
"""

from __future__ import annotations

import argparse

from app.commands.common import print_json, print_table, ready_database


def _worker(args: argparse.Namespace) -> int:
    url = ready_database()
    if not args.once:
        from app.ingest.scheduler import run_worker

        print("worker: polling sources (Ctrl-C to stop)", flush=True)
        run_worker(database_url=url)
        return 0
    from sqlalchemy import select

    from app.db.session import session_scope
    from app.db.tables import Source
    from app.ingest.scheduler import poll_source

    with session_scope(url) as session:
        ids = list(session.scalars(select(Source.id).order_by(Source.id)))
    outcomes = [poll_source(url, sid) for sid in ids]
    rows = [o.to_dict() for o in outcomes if o is not None]
    if args.json:
        print_json(rows)
        return 0
    if not rows:
        print("no sources yet: add one with `shoalcast source add SOURCE.toml`")
        return 0
    print_table(
        ["source", "status", "changed", "stored", "replaced", "unchanged", "rejected", "error"],
        [
            [r["source_id"], r["status"], len(r["changed"]), r["stored"], r["replaced"], r["unchanged"], r["rejected"],
             (r["error"] or "")[:70]]
            for r in rows
        ],
    )
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("worker", help="poll sources on their schedules", description=__doc__)
    p.add_argument("--once", action="store_true", help="poll every source once, print a summary and exit")
    p.add_argument("--json", action="store_true", help="with --once: print the summary as JSON")
    p.set_defaults(func=_worker)
