"""docker-compose.yml runs commands our CLI really has (parsed by the real argument parser), and the
Makefile and CI script call the README's commands."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
import yaml

from app.cli import build_parser

ROOT = Path(__file__).resolve().parents[1]


def compose_commands() -> dict[str, list[str]]:
    doc = yaml.safe_load((ROOT / "docker-compose.yml").read_text())
    return {name: svc["command"] for name, svc in doc["services"].items() if "command" in svc}


def test_compose_runs_postgres_migrate_api_and_worker() -> None:
    doc = yaml.safe_load((ROOT / "docker-compose.yml").read_text())
    assert {"postgres", "migrate", "api", "worker"} <= set(doc["services"])
    cmds = compose_commands()
    assert cmds["migrate"][:3] == ["shoalcast", "db", "upgrade"]
    assert cmds["api"][:2] == ["shoalcast", "serve"]
    assert cmds["worker"][:2] == ["shoalcast", "worker"]
    url = doc["x-shoalcast"]["environment"]["SHOALCAST_DATABASE_URL"]
    assert url.startswith("postgresql+psycopg://")


@pytest.mark.parametrize("service", sorted(compose_commands()))
def test_each_compose_command_exists_in_the_cli(service: str) -> None:
    command = compose_commands()[service]
    assert command[0] == "shoalcast"
    try:
        args = build_parser().parse_args(command[1:])
    except SystemExit as exc:  # argparse exits on an unknown command or option
        pytest.fail(f"{service}: `{' '.join(command)}` is not a valid shoalcast command ({exc})")
    assert callable(args.func)


def test_readme_commands_are_what_make_and_ci_run() -> None:
    readme = (ROOT / "README.md").read_text()
    assert "make demo" in readme and "make test" in readme
    makefile = (ROOT / "Makefile").read_text()
    assert re.search(r"^test:", makefile, re.M) and re.search(r"^demo:", makefile, re.M)
    assert "make test" in (ROOT / ".ci" / "run").read_text()
