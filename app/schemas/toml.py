"""Read TOML into a pydantic model, with errors that name the file and the field."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import TypeVar

from pydantic import BaseModel, ValidationError

from app.errors import BadInput
from app.schemas.profile import describe_validation_error

M = TypeVar("M", bound=BaseModel)


def parse_toml_model(text: str, model: type[M], *, where: str, error: type[BadInput] = BadInput) -> M:
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"{where}: not valid TOML: {exc}") from exc
    try:
        return model.model_validate(raw)
    except ValidationError as exc:
        first = exc.errors()[0]
        raise error(describe_validation_error(exc, where=where), field=".".join(str(p) for p in first["loc"])) from exc


def load_toml_model(path: Path | str, model: type[M], *, error: type[BadInput] = BadInput) -> M:
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise error(f"{path.name}: cannot read: {exc}") from exc
    return parse_toml_model(text, model, where=path.name, error=error)


__all__ = ["load_toml_model", "parse_toml_model"]
