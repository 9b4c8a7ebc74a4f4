"""Running the Alembic migrations from code (the CLI, the tests, the app's tools)."""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config

ROOT = Path(__file__).resolve().parent.parent


def alembic_config(database_url: str) -> Config:
    config = Config(toml_file=str(ROOT / "pyproject.toml"))
    config.set_main_option("script_location", str(ROOT / "migrations"))
    # ConfigParser interpolation: a literal % must be written %%.
    config.set_main_option("sqlalchemy.url", database_url.replace("%", "%%"))
    return config


def upgrade(database_url: str, revision: str = "head") -> None:
    command.upgrade(alembic_config(database_url), revision)


def downgrade(database_url: str, revision: str = "base") -> None:
    command.downgrade(alembic_config(database_url), revision)
