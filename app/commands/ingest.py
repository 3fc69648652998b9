"""`shoalcast ingest SOURCE_ID FILE...`: parse and store files for a source (same path as the scheduler)."""

from __future__ import annotations

import argparse
from pathlib import Path

from app.commands.common import print_json, ready_database
from app.db.session import session_scope
from app.errors import BadInput


def _ingest(args: argparse.Namespace) -> int:
    from app.ingest.store import ingest_files

    files = {}
    for name in args.files:
        path = Path(name)
        try:
            files[path.name] = path.read_bytes()
        except OSError as exc:
            raise BadInput(f"{name}: cannot read: {exc}") from exc
    with session_scope(ready_database()) as session:
        report = ingest_files(session, args.source_id, files)
    if args.json:
        print_json(report)
    else:
        print(
            f"{report.source_id}: {report.stored} new, {report.replaced} replaced, "
            f"{report.unchanged} unchanged, {report.rejected} rejected"
        )
        for line in report.rejects:
            print(f"  rejected {line}")
        if report.rejected > len(report.rejects):
            print(f"  ... and {report.rejected - len(report.rejects)} more (see `shoalcast source list`)")
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("ingest", help="parse and store files for a source", description=__doc__)
    p.add_argument("source_id")
    p.add_argument("files", nargs="+", metavar="FILE")
    p.add_argument("--json", action="store_true", help="print the ingest report as JSON")
    p.set_defaults(func=_ingest)
