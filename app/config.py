"""The one settings class. Every value can be set by an environment variable `SHOALCAST_<NAME>`
(or a `.env` file in the working directory)."""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

from pydantic import Field, field_validator
from pydantic_settings import BaseSettings, SettingsConfigDict

__all__ = ["Settings", "get_settings"]


class Settings(BaseSettings):
    model_config = SettingsConfigDict(env_prefix="SHOALCAST_", env_file=".env", extra="ignore")

    # Storage. Default: an embedded SQLite file under ./var/, created on demand.
    data_dir: Path = Field(default=Path("var"), description="Working directory for the SQLite file, locks and caches.")
    database_url: str = Field(default="", description="SQLAlchemy URL; empty = sqlite file in data_dir.")

    # Scheduler and fetching.
    scheduler_enabled: bool = True
    fetch_timeout_s: float = 20.0
    fetch_retries: int = 3
    fetch_max_bytes: int = 50 * 1024 * 1024
    allow_local_sources: bool = Field(
        default=False, description="Let API-added sources use file:// or loopback URLs (CLI-added always may)."
    )

    # Tables and outlooks.
    table_workers: int = 0  # 0 = os.cpu_count()
    blas_threads: int = Field(default=1, ge=0, description="BLAS threads per process (0 = the library's default).")
    outlook_hours: int = 72
    hazard_horizon_hours: int = 24

    # API.
    cors_origins: list[str] = Field(default_factory=lambda: ["*"])
    max_upload_bytes: int = 64 * 1024 * 1024
    max_body_bytes: int = 1 * 1024 * 1024
    public_base_url: str = "http://127.0.0.1:8000"
    refresh_seconds: int = 900  # how often outlooks can change; drives Cache-Control max-age
    cap_sender: str = "shoalcast@localhost"
    log_json: bool = False
    log_level: str = "INFO"

    @field_validator("database_url")
    @classmethod
    def _normalise_url(cls, value: str) -> str:
        value = value.strip()
        # Plain postgresql:// URLs would pick psycopg2; we ship psycopg 3.
        for prefix in ("postgresql://", "postgres://"):
            if value.startswith(prefix):
                return "postgresql+psycopg://" + value[len(prefix) :]
        return value

    def resolved_database_url(self) -> str:
        if self.database_url:
            return self.database_url
        self.data_dir.mkdir(parents=True, exist_ok=True)
        return f"sqlite:///{(self.data_dir / 'shoalcast.sqlite3').resolve()}"

    @property
    def is_sqlite(self) -> bool:
        return self.resolved_database_url().startswith("sqlite")


@lru_cache
def get_settings() -> Settings:
    return Settings()
