"""Jinja2 templates (autoescaped) and the values every page receives."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from fastapi import Request
from fastapi.responses import HTMLResponse
from fastapi.templating import Jinja2Templates

from server.safety import CAUTIONS

ROOT = Path(__file__).resolve().parent.parent
templates = Jinja2Templates(directory=str(ROOT / "templates"))


def render(
    request: Request, name: str, context: dict[str, Any] | None = None, *, status_code: int = 200
) -> HTMLResponse:
    """Render a page with the signed-in user, the CSRF token and the cautions."""
    values = {
        "user": getattr(request.state, "user", None),
        "csrf_token": getattr(request.state, "csrf_token", ""),
        "cautions": CAUTIONS,
        **(context or {}),
    }
    return templates.TemplateResponse(request, name, values, status_code=status_code)
