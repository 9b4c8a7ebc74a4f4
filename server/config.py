"""Settings, read from the environment (and a .env file) by pydantic-settings.

Every setting is documented in DEVELOPERS.md; a test checks that.
"""

from __future__ import annotations

import secrets
from enum import StrEnum
from functools import lru_cache
from pathlib import Path

from pydantic import Field, model_validator
from pydantic_settings import BaseSettings, SettingsConfigDict

VAR_DIR = Path("var")


class Mode(StrEnum):
    DEVELOPMENT = "development"
    PRODUCTION = "production"
    TEST = "test"


class Settings(BaseSettings):
    """The planner's settings. Names are the environment variables, upper-cased."""

    model_config = SettingsConfigDict(env_file=".env", extra="ignore")

    mode: Mode = Mode.DEVELOPMENT
    database_url: str = Field(default=f"sqlite:///{VAR_DIR}/planner.sqlite3")
    secret_key: str = ""
    session_max_age_s: int = 12 * 3600
    token_max_age_s: int = 12 * 3600
    sqlite_busy_timeout_ms: int = 5000
    upload_max_bytes: int = 5 * 1024 * 1024
    signin_attempts_per_15min: int = 10
    public_base_url: str = "http://127.0.0.1:8000"

    @model_validator(mode="after")
    def _secret_key_present(self) -> Settings:
        if not self.secret_key:
            if self.mode is Mode.PRODUCTION:
                raise ValueError(
                    "SECRET_KEY must be set in production mode (a long random string; "
                    "keep it the same on every instance)"
                )
            self.secret_key = _development_secret()
        return self

    @property
    def is_sqlite(self) -> bool:
        return self.database_url.startswith("sqlite")


def _development_secret() -> str:
    """A secret kept in ./var/ so development sessions survive restarts."""
    path = VAR_DIR / "secret_key"
    if path.exists():
        return path.read_text().strip()
    VAR_DIR.mkdir(parents=True, exist_ok=True)
    key = secrets.token_urlsafe(48)
    path.write_text(key)
    path.chmod(0o600)
    return key


@lru_cache
def get_settings() -> Settings:
    return Settings()
