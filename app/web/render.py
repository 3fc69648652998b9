"""The Jinja2 environment of the pages: templates from app/web/templates, HTML autoescaped."""

from __future__ import annotations

from functools import cache
from pathlib import Path
from typing import Any

from jinja2 import Environment, FileSystemLoader, StrictUndefined, select_autoescape

from app.cautions import RIP_CAUTION

__all__ = ["STATIC_DIR", "TEMPLATE_DIR", "render"]

TEMPLATE_DIR = Path(__file__).with_name("templates")
STATIC_DIR = Path(__file__).with_name("static")
ASSET_VERSION = "2"  # bump when a static file changes (it is part of every asset URL)


@cache
def environment() -> Environment:
    env = Environment(
        loader=FileSystemLoader(TEMPLATE_DIR),
        autoescape=select_autoescape(["html"], default_for_string=True),
        undefined=StrictUndefined,  # a misspelt name fails the test, not silently blank
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.globals["asset_version"] = ASSET_VERSION
    env.globals["rip_caution"] = RIP_CAUTION  # beside every rip-current likelihood shown
    return env


def render(name: str, **context: Any) -> str:
    return environment().get_template(name).render(**context)
