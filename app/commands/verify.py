"""`shoalcast verify SPOT_ID FILE`: score a spot's outlook against observations and calibrate it.

FILE is a CSV of observed breaker heights (`time,breaker_height_m` or `_ft`, optional `point`,
`observer`; RFC 3339 times) or the id of a nearshore spectral station inside the spot's grid
(compared by Hm0 at its own position). Each observation is paired with the outlook recomputed
from the inputs known at its time (docs/verification.md). `--apply` stores the calibration factor;
`shoalcast calibration SPOT_ID [--remove]` shows or removes it.
"""

from __future__ import annotations

import argparse
import getpass
from pathlib import Path
from typing import Any

from app.cautions import GENERAL as CAUTIONS
from app.commands.common import print_json, print_table, ready_database
from app.commands.outlook import parse_time
from app.db.session import session_scope
from app.errors import BadInput

MAX_FILE_BYTES = 20 * 1024 * 1024


def _who(args: argparse.Namespace) -> str:
    if args.by:
        return args.by
    try:
        return f"cli:{getpass.getuser()}"
    except (KeyError, OSError):  # no user name in a container
        return "cli"


def _f(v: Any, fmt: str = ".3f") -> str:
    return "-" if v is None else format(v, fmt)


def _score_rows(groups: dict[str, dict[str, Any]]) -> list[list[str]]:
    return [[k, str(v["n"]), _f(v["bias_m"]), _f(v["rmse_m"]), _f(v["scatter_index"]), _f(v["correlation"]),
             f"{_f(v['calibration_factor'])} ± {_f(v['calibration_factor_stderr'])}"]
            for k, v in groups.items()]  # fmt: skip


def print_report(body: dict[str, Any]) -> None:
    head = ["", "n", "bias m", "rmse m", "SI", "r", "factor ± se"]
    print(f"verification of {body['spot_id']} against {body['observations']}: {body['compared']}")
    print("bias = observed − forecast; factor multiplies the raw forecast (least squares through the origin)")
    print()
    print_table(head, _score_rows({"all": body}))
    if body["by_sector"]:
        print("\nby offshore direction sector")
        print_table(head, _score_rows(body["by_sector"]))
    if body["by_period_band"]:
        print("\nby offshore peak period")
        print_table(head, _score_rows(body["by_period_band"]))
    if body["inputs_used"]:
        print("\ninputs used (as known at each observation time): "
              + ", ".join(f"{k} ×{v}" for k, v in body["inputs_used"].items()))  # fmt: skip
    if body["unpaired"]:
        print(f"{body['unpaired']} observation(s) without a forecast known at their time")
    for r in body["rejects"]:
        where = f"{r['file']}:{r['line']}" if r["line"] is not None else r["file"]
        print(f"rejected: {where}: {r['field']}: {r['reason']}")
    if body["rejected"] > len(body["rejects"]):
        print(f"... {body['rejected'] - len(body['rejects'])} more rejected")
    for note in body.get("notes") or []:
        print(f"note: {note}")
    cal = body.get("calibration")
    if cal:
        print(f"\nstored calibration version {cal['version']}: ×{cal['factor']:.3f} by {cal['created_by']}")
    print()
    for c in body.get("cautions") or CAUTIONS:
        print(f"! {c}")


def _run(args: argparse.Namespace) -> int:
    from app.services.verification import run_verification

    start = parse_time(args.start) if args.start else None
    end = parse_time(args.end) if args.end else None
    path = Path(args.file)
    with session_scope(ready_database()) as session:
        if path.is_file():
            if path.stat().st_size > MAX_FILE_BYTES:
                raise BadInput(f"{path}: over {MAX_FILE_BYTES // 2**20} MiB", field="file")
            body = run_verification(session, args.spot_id, csv_data=path.read_bytes(), name=str(path), start=start,
                                    end=end, who=_who(args), apply=args.apply)  # fmt: skip
        else:
            from app.db.tables import Source

            if session.get(Source, args.file) is None:
                raise BadInput(f"{args.file!r} is neither a file nor a source id", field="file")
            body = run_verification(session, args.spot_id, station=args.file, start=start, end=end, who=_who(args),
                                    apply=args.apply)  # fmt: skip
    if args.json:
        print_json(body)
    else:
        print_report(body)
    return 1 if args.apply and not body.get("calibration") else 0


def _calibration(args: argparse.Namespace) -> int:
    from app.services.calibration import active_calibration, calibration_body, history, remove_calibration
    from app.services.spots import get_spot

    with session_scope(ready_database()) as session:
        get_spot(session, args.spot_id)
        if args.remove:
            remove_calibration(session, args.spot_id, who=_who(args))
        rows = history(session, args.spot_id)
        active = active_calibration(session, args.spot_id)
        data = {"spot_id": args.spot_id, "active": None if active is None else calibration_body(active),
                "versions": [calibration_body(r) for r in rows]}  # fmt: skip
    if args.json:
        print_json(data)
        return 0
    if not rows:
        print(f"{args.spot_id}: no calibration stored (raw heights)")
        return 0
    print_table(
        ["version", "factor", "± se", "by", "at", "removed"],
        [[str(r["version"]), _f(r["factor"]), _f(r["factor_stderr"]), r["created_by"], r["created_at"],
          "-" if r["active"] else f"{r['removed_at']} ({r['removed_by']})"] for r in data["versions"]],
    )  # fmt: skip
    print("active: " + ("none (raw heights)" if active is None else f"version {active.version}"))
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("verify", help="score a spot's outlook against observations; calibrate it",
                       description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)  # fmt: skip
    p.add_argument("spot_id")
    p.add_argument("file", metavar="FILE", help="CSV of observed breaker heights, or a nearshore station's source id")
    p.add_argument("--json", action="store_true", help="print the verification JSON")
    p.add_argument("--apply", action="store_true", help="store the calibration factor for the spot")
    p.add_argument("--from", dest="start", metavar="TIME", help="only observations at or after TIME (RFC 3339)")
    p.add_argument("--to", dest="end", metavar="TIME", help="only observations at or before TIME (RFC 3339)")
    p.add_argument("--by", metavar="NAME", help="who runs it (stored with the run; default cli:<user>)")
    p.set_defaults(func=_run)
    c = sub.add_parser("calibration", help="a spot's calibration factor: show its versions, or remove it")
    c.add_argument("spot_id")
    c.add_argument("--remove", action="store_true", help="remove the active factor (outlooks go back to raw)")
    c.add_argument("--json", action="store_true")
    c.add_argument("--by", metavar="NAME", help="who removes it (default cli:<user>)")
    c.set_defaults(func=_calibration)
