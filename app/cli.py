"""The `shoalcast` command. Every command has --help; every command that prints data has --json."""

from __future__ import annotations

import argparse
import importlib
import logging
import sys

from app.errors import BadInput, ShoalcastError

# one module per command group in app/commands/
COMMANDS = (
    "db", "spot", "source", "ingest", "agency", "tables", "outlook", "hazards", "worker", "serve", "key", "openapi", "demo",
    "verify",
)


_SERVICES = ("worker", "serve", "demo")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="shoalcast",
        description="Nearshore wave forecasts for surf spots: swell windows, breaker heights, peel and hazard levels.",
        epilog="Outlooks and hazard levels are guidance only; conditions change. Follow lifeguards, "
        "official warnings and local rules.",
    )
    parser.add_argument("-v", "--verbose", action="store_true", help="log more")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for name in COMMANDS:
        importlib.import_module(f"app.commands.{name}").register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    from app.runtime import limit_blas_threads

    limit_blas_threads()
    if args.command in _SERVICES:  # long-running: structured logs (JSON with SHOALCAST_LOG_JSON=true)
        from app.config import get_settings
        from app.observability import configure_logging

        configure_logging(get_settings())
        if args.command == "demo":  # the demo prints its own account of each poll
            logging.getLogger("httpx").setLevel(logging.WARNING)
    else:
        logging.basicConfig(level=logging.INFO if args.verbose else logging.WARNING, format="%(levelname)s %(name)s: %(message)s")
    try:
        return int(args.func(args) or 0)
    except BadInput as exc:
        print(f"error: {exc.detail}", file=sys.stderr)
        return 2
    except ShoalcastError as exc:
        print(f"error: {exc.detail}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # `shoalcast ... | head`
        sys.stderr.close()
        return 0


if __name__ == "__main__":
    sys.exit(main())
