"""The engineering core stays pure: no web, database, template or PDF code."""

from __future__ import annotations

import ast
from pathlib import Path

import server.engineering

FORBIDDEN = {"fastapi", "starlette", "sqlalchemy", "pydantic", "jinja2", "reportlab", "alembic"}
CORE = Path(server.engineering.__file__).parent


def imported_roots(source: str) -> set[str]:
    roots = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            roots.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            roots.add(node.module.split(".")[0])
    return roots


def test_the_walker_sees_imports_inside_functions() -> None:
    # A guard against a walker that only reads the top of the file.
    source = "def f():\n    from fastapi import APIRouter\n    import sqlalchemy.orm\n"
    assert imported_roots(source) == {"fastapi", "sqlalchemy"}


def test_no_module_of_the_core_imports_web_db_template_or_pdf_code() -> None:
    files = sorted(CORE.rglob("*.py"))
    assert len(files) > 5
    offenders = {
        path.name: sorted(imported_roots(path.read_text()) & FORBIDDEN)
        for path in files
        if imported_roots(path.read_text()) & FORBIDDEN
    }
    assert offenders == {}
