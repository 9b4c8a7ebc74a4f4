"""The app's route table, flattened: what the tenancy and role tests walk."""

from __future__ import annotations

from dataclasses import dataclass

from fastapi import FastAPI
from fastapi.routing import APIRoute


@dataclass(frozen=True, slots=True)
class RouteEntry:
    method: str
    path: str
    name: str


def route_table(app: FastAPI) -> list[RouteEntry]:
    """Every (method, path) the app answers with a route of ours (not docs or static)."""
    entries = []
    for route in app.routes:
        router = getattr(route, "original_router", None)
        routes = router.routes if router is not None else [route]
        for inner in routes:
            if isinstance(inner, APIRoute):
                for method in sorted((inner.methods or set()) - {"HEAD"}):
                    entries.append(RouteEntry(method, inner.path, inner.name))
    return entries
