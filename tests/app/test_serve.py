"""`shoalcast serve`: uvicorn with uvloop and httptools (the `uvicorn[standard]` dependency) and no
per-request access log unless asked. The reference for what is installed is importlib's finder."""

from __future__ import annotations

import sys
from importlib.util import find_spec
from typing import Any

import pytest

from app import cli
from app.commands import common, serve


@pytest.mark.skipif(sys.platform == "win32", reason="uvloop is not built for Windows")
def test_the_standard_extras_are_installed_and_chosen() -> None:
    assert find_spec("uvloop") is not None and find_spec("httptools") is not None  # uvicorn[standard]
    assert serve.server_impl() == ("uvloop", "httptools")


def test_serve_passes_the_loop_the_parser_and_the_access_log_choice(monkeypatch: pytest.MonkeyPatch) -> None:
    import uvicorn

    seen: list[dict[str, Any]] = []
    monkeypatch.setattr(uvicorn, "run", lambda target, **kw: seen.append({"target": target, **kw}))
    monkeypatch.setattr(common, "ready_database", lambda: "sqlite://")
    monkeypatch.setattr(serve, "server_impl", lambda: ("uvloop", "httptools"))
    assert cli.main(["serve", "--port", "8123"]) == 0
    assert cli.main(["serve", "--access-log"]) == 0
    first, second = seen
    assert first["target"] == "app.api.main:create_app" and first["factory"] is True and first["port"] == 8123
    assert (first["loop"], first["http"], first["access_log"]) == ("uvloop", "httptools", False)
    assert second["access_log"] is True
