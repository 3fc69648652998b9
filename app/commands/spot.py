"""`shoalcast spot add|list|show|remove`: the spot registry."""

from __future__ import annotations

import argparse

from app.commands.common import print_json, print_table, ready_database
from app.db.session import session_scope


def _add(args: argparse.Namespace) -> int:
    from app.services import spots as svc

    url = ready_database()
    for path in args.profiles:
        loaded = svc.load_profile(path)  # all checks before any write
        with session_scope(url) as session:
            spot = svc.store_spot(session, loaded)
            public = svc.spot_public(spot)
        if args.json:
            print_json(public)
        else:
            g = public.grid
            regional = "".join(f", regional grid {r.nx}x{r.ny} at {r.dx_m:g} m" for r in public.regional_grids)
            wb = public.wave_base_period_s
            reach = f"grids reach the wave base up to {wb:g} s" if wb is not None else "no open-ocean edge"
            print(
                f"imported {public.id} ({public.name}): grid {g.nx}x{g.ny} at {g.dx_m:g} m, "
                f"depth {g.depth_min_m:g}..{g.depth_max_m:g} m{regional}, {len(public.break_points)} break point(s); {reach}"
            )
    return 0


def _list(args: argparse.Namespace) -> int:
    from app.services import spots as svc

    with session_scope(ready_database()) as session:
        spots = [svc.spot_public(s) for s in svc.list_spots(session)]
    if args.json:
        print_json(spots)
        return 0
    if not spots:
        print("no spots yet: add one with `shoalcast spot add PROFILE.toml`")
        return 0
    print_table(
        ["id", "name", "lat", "lon", "faces", "grid", "spacing m", "depth m", "break points"],
        [
            [
                s.id,
                s.name,
                f"{s.latitude:.4f}",
                f"{s.longitude:.4f}",
                f"{s.faces_deg:g}",
                f"{s.grid.nx}x{s.grid.ny}",
                f"{s.grid.dx_m:g}",
                f"{s.grid.depth_min_m:g}..{s.grid.depth_max_m:g}",
                ", ".join(p.name for p in s.break_points),
            ]
            for s in spots
        ],
    )
    return 0


def _show(args: argparse.Namespace) -> int:
    from app.services import spots as svc

    with session_scope(ready_database()) as session:
        public = svc.spot_public(svc.get_spot(session, args.spot_id))
    print_json(public)
    return 0


def _remove(args: argparse.Namespace) -> int:
    from app.services import spots as svc

    with session_scope(ready_database()) as session:
        svc.delete_spot(session, args.spot_id)
    print(f"removed {args.spot_id}")
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("spot", help="add, list, show and remove surf spots", description=__doc__)
    s = p.add_subparsers(dest="spot_command", required=True, metavar="COMMAND")
    add = s.add_parser("add", help="import spot profiles (TOML + bathymetry file); re-adding an id replaces it")
    add.add_argument("profiles", nargs="+", metavar="PROFILE.toml")
    add.add_argument("--json", action="store_true", help="print the imported spot as JSON")
    add.set_defaults(func=_add)
    ls = s.add_parser("list", help="list spots with grid size, spacing, depth range and break points")
    ls.add_argument("--json", action="store_true", help="print JSON")
    ls.set_defaults(func=_list)
    show = s.add_parser("show", help="print one spot as JSON")
    show.add_argument("spot_id")
    show.add_argument("--json", action="store_true", help="print JSON (the default for show)")
    show.set_defaults(func=_show)
    rm = s.add_parser("remove", help="delete a spot and its tables")
    rm.add_argument("spot_id")
    rm.set_defaults(func=_remove)
