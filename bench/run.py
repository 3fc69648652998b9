"""`make bench` / `python -m bench.run [--quick] [NAME ...]`: run every bench_<topic>.py and print one table."""

from __future__ import annotations

import argparse
import datetime as dt
import importlib
import pkgutil
import sys
import traceback

import bench
from bench.common import machine, print_rows


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("names", nargs="*", help="only these topics (e.g. physics rays)")
    parser.add_argument("--quick", action="store_true", help="smaller sizes (a smoke run)")
    args = parser.parse_args(argv)
    topics = sorted(m.name.removeprefix("bench_") for m in pkgutil.iter_modules(bench.__path__) if m.name.startswith("bench_"))
    if args.names:
        topics = [t for t in topics if t in args.names]
    rows = []
    failed = 0
    for topic in topics:
        print(f"running {topic} ...", file=sys.stderr, flush=True)
        try:
            rows.extend(importlib.import_module(f"bench.bench_{topic}").run(quick=args.quick))
        except Exception:  # noqa: BLE001 - report and go on with the other benchmarks
            failed += 1
            traceback.print_exc()
            rows.append({"benchmark": topic, "result": "FAILED (see traceback above)"})
    print(f"shoalcast benchmarks, {dt.date.today().isoformat()}, {machine()}{' (quick)' if args.quick else ''}\n")
    print_rows(rows)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
