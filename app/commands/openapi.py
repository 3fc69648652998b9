"""`shoalcast openapi`: print the API's OpenAPI document (committed as openapi.json; `make openapi`)."""

from __future__ import annotations

import argparse
import json


def openapi_text() -> str:
    from app.api.main import create_app

    return json.dumps(create_app().openapi(), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser("openapi", help="print the OpenAPI document of the REST API (JSON)")
    p.set_defaults(func=_run)


def _run(args: argparse.Namespace) -> int:
    import sys

    sys.stdout.write(openapi_text())
    return 0
