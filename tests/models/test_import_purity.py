"""models/ is pure numerics: importing it (and every submodule) loads no web, DB or HTTP stack."""

from __future__ import annotations

import pkgutil
import subprocess
import sys
from pathlib import Path

import models

FORBIDDEN = ("fastapi", "sqlalchemy", "httpx", "pydantic", "starlette", "alembic")


def test_importing_models_loads_no_service_libraries():
    names = sorted(m.name for m in pkgutil.walk_packages(models.__path__, prefix="models."))
    assert {"models.waves", "models.spectra", "models.breaking", "models.statistics", "models.directions"} <= set(names)
    code = (
        "import importlib, sys\n"
        f"for name in {['models', *names]!r}:\n"
        "    importlib.import_module(name)\n"
        f"bad = sorted(m for m in sys.modules if m.split('.')[0] in {FORBIDDEN!r})\n"
        "print(','.join(bad))\n"
    )
    root = Path(models.__file__).resolve().parent.parent
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=root, timeout=120, check=False)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "", f"models pulled in: {out.stdout.strip()}"


def test_the_check_can_fail():
    # the same probe sees a forbidden module when one is imported (guards against a vacuous test)
    code = f"import json, sys\nbad = [m for m in sys.modules if m.split('.')[0] in {('json',)!r}]\nprint(','.join(bad))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, check=False)
    assert "json" in out.stdout
