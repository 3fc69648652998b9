"""`shoalcast agency add|list|show`: lifeguard agencies, the spots they watch and their hazard policies."""

from __future__ import annotations

import argparse

from app.commands.common import print_json, print_table, ready_database
from app.db.session import session_scope


def _add(args: argparse.Namespace) -> int:
    from app.services.agencies import add_agency, load_agency_toml

    url = ready_database()
    for path in args.files:
        config = load_agency_toml(path)
        with session_scope(url) as session:
            add_agency(session, config)
        kind = "its own policy" if config.policy else "the labelled default policy"
        print(f"added agency {config.id}: {len(config.spots)} spot(s), {kind}, alerts at level {config.alert_level}+")
    _print_cautions()
    return 0


def _print_cautions() -> None:
    from app.cautions import HAZARD

    for c in HAZARD:
        print(f"caution: {c}")


def _list(args: argparse.Namespace) -> int:
    from app.services.agencies import agency_public, list_agencies

    with session_scope(ready_database()) as session:
        agencies = [agency_public(session, a) for a in list_agencies(session)]
    if args.json:
        print_json(agencies)
        return 0
    print_table(
        ["id", "name", "spots", "alert level", "policies"],
        [[a.id, a.name, ", ".join(a.spots), a.alert_level, ", ".join(k or "default" for k in a.policies) or "(shoalcast default)"] for a in agencies],
    )
    _print_cautions()
    return 0


def _show(args: argparse.Namespace) -> int:
    from app.services.agencies import agency_public, get_agency

    with session_scope(ready_database()) as session:
        print_json(agency_public(session, get_agency(session, args.agency_id)))
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("agency", help="agencies, their spots and hazard policies", description=__doc__)
    s = p.add_subparsers(dest="agency_command", required=True, metavar="COMMAND")
    add = s.add_parser("add", help="add (or replace) agencies from AGENCY.toml files")
    add.add_argument("files", nargs="+", metavar="AGENCY.toml")
    add.set_defaults(func=_add)
    ls = s.add_parser("list", help="list agencies")
    ls.add_argument("--json", action="store_true", help="print JSON")
    ls.set_defaults(func=_list)
    show = s.add_parser("show", help="print one agency with its policies as JSON")
    show.add_argument("agency_id")
    show.add_argument("--json", action="store_true", help="print JSON (the default for show)")
    show.set_defaults(func=_show)
