"""The layering rules of DESIGN.md, checked on the source."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
FORBIDDEN_IN_CORE = {"fastapi", "starlette", "sqlalchemy", "pydantic", "jinja2", "reportlab"}
NO_IO_IN_CORE = {"logging", "requests", "httpx", "sqlite3", "psycopg"}


def _imported_roots(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(), filename=str(path))
    roots: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            roots.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            roots.add(node.module.split(".")[0])
    return roots


def test_engineering_core_is_pure() -> None:
    offenders = {}
    files = sorted((ROOT / "server" / "engineering").rglob("*.py"))
    assert files
    for path in files:
        bad = _imported_roots(path) & (FORBIDDEN_IN_CORE | NO_IO_IN_CORE)
        if bad:
            offenders[str(path.relative_to(ROOT))] = sorted(bad)
    assert offenders == {}, f"server/engineering/ must stay pure: {offenders}"


def test_engineering_core_imports_nothing_else_of_the_app() -> None:
    for path in sorted((ROOT / "server" / "engineering").rglob("*.py")):
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            if (
                isinstance(node, ast.ImportFrom)
                and node.module
                and node.module.startswith("server.")
            ):
                assert node.module.startswith("server.engineering"), (path, node.module)


def test_no_schema_made_outside_migrations() -> None:
    for path in sorted((ROOT / "server").rglob("*.py")):
        assert "create_all(" not in path.read_text(), f"{path}: the schema comes from migrations"


def test_templates_have_no_inline_script_or_style() -> None:
    for path in sorted((ROOT / "templates").rglob("*.html")):
        text = path.read_text()
        assert "<script>" not in text and "<script " not in text.replace("<script src=", ""), path
        assert " style=" not in text and "<style" not in text, path
        assert " on" not in text.replace(" only", "") or not any(
            f" on{event}=" in text for event in ("click", "load", "submit", "change", "input")
        ), path


def test_relationships_refuse_lazy_loading() -> None:
    from sqlalchemy import inspect

    from server.db import Base, import_all_models

    import_all_models()
    for mapper in Base.registry.mappers:
        for relationship in inspect(mapper).relationships:
            assert relationship.lazy == "raise", f"{mapper.class_.__name__}.{relationship.key}"
