"""`shoalcast hazards AGENCY_ID`: the hazard level now and the highest ahead for each of an agency's spots."""

from __future__ import annotations

import argparse

from app.commands.common import print_json, print_table, ready_database, rfc3339
from app.db.session import session_scope


def _run(args: argparse.Namespace) -> int:
    from app.services.hazards import agency_hazards

    with session_scope(ready_database()) as session:
        result = agency_hazards(session, args.agency_id, horizon_hours=args.horizon)
    if args.json:
        print_json(result)
        return 0
    print(f"{result.name} ({result.agency_id}) — next {result.horizon_hours:g} h")
    rows = [
        [
            h.spot_id, "-" if h.level is None else f"{h.level} {h.label}",
            "-" if h.max_level is None else f"{h.max_level} {h.max_label}",
            "-" if h.onset is None else rfc3339(h.onset),
            f"{_pct(h.rip_current_likelihood)} / {_pct(h.max_rip_current_likelihood)}",
            _shore_break(h), "-" if h.valid_until is None else rfc3339(h.valid_until), h.note or "",
        ]
        for h in result.spots
    ]  # fmt: skip
    print_table(["spot", "now", "highest", "from", "rip now / max", "shore-break", "valid until", "note"], rows)
    print()
    for c in result.cautions:
        print(f"! {c}")
    return 0


def _pct(p: float | None) -> str:
    return "-" if p is None else f"{round(p * 100):d}%"


def _shore_break(h) -> str:  # type: ignore[no-untyped-def]
    if h.level is None:
        return "-"
    if h.shore_break:
        return "now"
    return "none ahead" if h.shore_break_onset is None else f"from {rfc3339(h.shore_break_onset)}"


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("hazards", help="hazard levels of an agency's spots", description=__doc__)
    p.add_argument("agency_id")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument(
        "--horizon", type=float, default=None, metavar="HOURS", help="hours ahead (default: settings)"
    )
    p.set_defaults(func=_run)
