"""`shoalcast tables build [SPOT_ID ...]` and `shoalcast window SPOT_ID`: transfer tables (rays, or\nrefraction-diffraction when the profile's `[model] method` asks for it)."""

from __future__ import annotations

import argparse
import sys
import time

from app.commands.common import print_json, print_table, ready_database
from app.db.session import session_scope


class ProgressBar:
    """A one-line bar on a terminal; a line per spot otherwise (CI logs)."""

    def __init__(self, stream=None) -> None:  # type: ignore[no-untyped-def]
        # sys.stderr as it is now, not as it was at import (a test harness swaps it per test)
        self.stream = sys.stderr if stream is None else stream
        self.tty = self.stream.isatty()
        self.last_label = ""
        self.t0 = time.perf_counter()

    def __call__(self, label: str, done: int, total: int) -> None:
        if self.tty:
            width = 30
            fill = int(width * done / max(total, 1))
            self.stream.write(f"\r  {label:<32} [{'#' * fill}{'.' * (width - fill)}] {done}/{total}")
            if done >= total:
                self.stream.write(f"  {time.perf_counter() - self.t0:.1f} s\n")
            self.stream.flush()
        elif done >= total or (label != self.last_label and " T " in label):
            # a line per finished stage; refraction-diffraction labels name each component
            self.stream.write(f"  {label}: {done}/{total}, {time.perf_counter() - self.t0:.1f} s\n")
            self.stream.flush()
        if label != self.last_label:
            self.last_label = label


def _build(args: argparse.Namespace) -> int:
    from app.config import get_settings
    from app.services.tables import build_tables, executor_for

    url = ready_database()
    workers = args.workers if args.workers is not None else (get_settings().table_workers or None)
    with executor_for(workers, args.dask) as executor:
        report = build_tables(url, args.spot_ids or None, executor=executor, force=args.force,
                              progress=None if args.json else ProgressBar())
    if args.json:
        print_json({"built": report.built, "skipped": report.skipped, "failed": report.failed, "seconds": report.seconds})
    else:
        print(f"built {len(report.built)} table(s), {report.skipped} up to date, {len(report.failed)} failed, {report.seconds:g} s")
        for f in report.failed:
            print(f"  failed {f['spot']} / {f['point']}: {f['reason']}")
    return 1 if report.failed else 0


def _window(args: argparse.Namespace) -> int:
    from app.services.tables import window_body

    with session_scope(ready_database()) as session:
        body = window_body(session, args.spot_id, **({} if args.threshold is None else {"threshold": args.threshold}))
    if args.json:
        print_json(body)
        return 0
    print(f"{body['name']} ({body['spot_id']}), faces {body['faces_deg']:g}°: swell window (K > {body['threshold']:g})")
    wb = body.get("wave_base_period_s")
    if wb is not None:
        print(f"  the grids reach the wave base up to {wb:g} s; beyond their edges longer periods rest on assumed "
              "straight contours (last column)")
    for p in body["points"]:
        if not p.get("built"):
            print(f"\n  {p['name']}: no table yet (run `shoalcast tables build {body['spot_id']}`)")
            continue
        print(f"\n  {p['name']}: reference depth {p['reference_depth_m']:g} m")
        rows = []
        for i, period in enumerate(p["periods_s"]):
            if len(p["periods_s"]) > 12 and i % 3:
                continue
            ks = p["coefficient"][i]
            kmax = max(ks)
            j = ks.index(kmax)
            arcs = p["open_arcs_deg"][i]
            text = ", ".join(f"{a:g}-{b:g}" for a, b in arcs) if arcs else "closed"
            near = p["nearshore_direction_deg"][i][j]
            cont = p.get("continued_arcs_deg", [[]] * len(p["periods_s"]))[i]
            ctext = ", ".join(f"{a:g}-{b:g}" for a, b in cont) if cont else "-"
            rows.append([f"{period:.1f}", text, f"{kmax:.2f}", f"{p['directions_deg'][j]:g}", "-" if near is None else f"{near:.0f}",
                         ctext])  # fmt: skip
        print_table(["period s", "open from-directions °", "K max", "at °", "arrives from °", "assumed contours °"], rows)
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("tables", help="build refraction transfer tables", description=__doc__)
    s = p.add_subparsers(dest="tables_command", required=True, metavar="COMMAND")
    b = s.add_parser("build", help="build missing or stale tables (all spots, or the ones named)")
    b.add_argument("spot_ids", nargs="*", metavar="SPOT_ID")
    b.add_argument("--force", action="store_true", help="rebuild even when up to date")
    b.add_argument("--workers", type=int, default=None, help="local processes (default: all cores; 1 = in this process)")
    b.add_argument("--dask", metavar="ADDRESS", default=None, help="run on a Dask cluster (scheduler address)")
    b.add_argument("--json", action="store_true", help="print the build report as JSON")
    b.set_defaults(func=_build)

    w = sub.add_parser("window", help="show a spot's swell window (open directions per period)")
    w.add_argument("spot_id")
    w.add_argument("--threshold", type=float, default=None,
                   help="K above which a direction counts as open (default 0.15: about 2 %% of the energy)")
    w.add_argument("--json", action="store_true", help="print JSON")
    w.set_defaults(func=_window)
