"""The list / create / read / update / delete routes every editable record has.

A feature describes its record once (:class:`Resource`) and mounts the
routes at its own paths; the answers, the organisation scoping, the
idempotent create and the version check are then the same everywhere.
"""

from dataclasses import dataclass
from typing import Any

from fastapi import APIRouter, Depends, Path, Query, Response, status

from server.accounts.models import Role, User
from server.common import crud
from server.common.errors import Conflict
from server.common.models import OrgOwned
from server.common.schemas import CreateBase, Page, Problem, ReadBase, UpdateBase
from server.deps import SessionDep, require_role

ERROR_RESPONSES: dict[int | str, dict[str, Any]] = {
    403: {"model": Problem, "description": "Your role may not do this."},
    404: {"model": Problem, "description": "No such record in your organisation."},
    409: {"model": Problem, "description": "Stale version or reused id."},
}


@dataclass(frozen=True)
class Resource:
    """One kind of editable record and who may change it."""

    model: type[OrgOwned]
    create: type[CreateBase]
    update: type[UpdateBase]
    read: type[ReadBase]
    write_role: Role
    label: str
    parent_model: type[OrgOwned] | None = None
    parent_key: str | None = None

    def as_read(self, record: OrgOwned) -> dict[str, Any]:
        return self.read.model_validate(record).model_dump(mode="json")

    def editable_values(self, record: OrgOwned) -> dict[str, Any]:
        return {name: getattr(record, name) for name in self.create.model_fields if name != "id"}


def validated_changes(resource: Resource, record: OrgOwned, body: UpdateBase) -> dict[str, Any]:
    """The changes a PATCH asks for, checked on the record as it would become.

    The create schema validates the merged record, so cross-field rules
    (a loaded reading above the open-circuit one ...) hold after every edit.
    """
    requested = body.model_dump(exclude_unset=True, exclude={"version"})
    merged = {**resource.editable_values(record), **requested}
    checked = resource.create.model_validate(merged).model_dump(exclude={"id"})
    return {name: checked[name] for name in requested}


def _parent_id_dependency(resource: Resource) -> Any:
    """The ``{parent_id}`` path parameter, for resources that live under a parent."""
    if resource.parent_model is None:

        def no_parent() -> None:
            return None

        return no_parent

    def parent_id(parent_id: str = Path(description="Id of the record this one belongs to")) -> str:
        return parent_id

    return parent_id


def add_collection_routes(router: APIRouter, path: str, resource: Resource, *, tag: str) -> None:
    """GET (paginated list) and POST (idempotent create) at ``path``.

    With a parent, ``path`` has one ``{parent_id}`` parameter.
    """
    writer = Depends(require_role(resource.write_role))
    reader = Depends(require_role(Role.SURVEYOR))
    page_model: Any = Page[resource.read]  # type: ignore[name-defined]
    create_model: Any = resource.create

    parent = Depends(_parent_id_dependency(resource))

    def _parent_filter(session: SessionDep, user: User, parent_id: str | None) -> list[Any]:
        if resource.parent_model is None or parent_id is None:
            return []
        crud.get_owned(session, resource.parent_model, org_id=user.org_id, record_id=parent_id)
        return [getattr(resource.model, resource.parent_key or "") == parent_id]

    def list_records(
        session: SessionDep,
        user: User = reader,
        parent_id: str | None = parent,
        limit: int = Query(50, ge=1, le=500),
        offset: int = Query(0, ge=0, le=1_000_000),
    ) -> dict[str, Any]:
        where = _parent_filter(session, user, parent_id)
        items, total = crud.list_owned(
            session, resource.model, org_id=user.org_id, where=where, limit=limit, offset=offset
        )
        return {
            "items": [resource.as_read(item) for item in items],
            "total": total,
            "limit": limit,
            "offset": offset,
        }

    def create_record(
        body: create_model,  # type: ignore[valid-type]
        response: Response,
        session: SessionDep,
        user: User = writer,
        parent_id: str | None = parent,
    ) -> dict[str, Any]:
        _parent_filter(session, user, parent_id)
        values = body.model_dump(exclude={"id"})
        if resource.parent_key and parent_id is not None:
            values[resource.parent_key] = parent_id
        record, created = crud.create_idempotent(
            session,
            resource.model,
            org_id=user.org_id,
            user=user,
            values=values,
            record_id=str(body.id) if body.id else None,
        )
        response.status_code = status.HTTP_201_CREATED if created else status.HTTP_200_OK
        return resource.as_read(record)

    for function in (list_records, create_record):
        function.__name__ = f"{function.__name__}_{resource.model.__tablename__}"  # type: ignore[attr-defined]
    router.add_api_route(
        path,
        list_records,
        methods=["GET"],
        response_model=page_model,
        summary=f"List {resource.label}s",
        tags=[tag],
        responses=ERROR_RESPONSES,
    )
    router.add_api_route(
        path,
        create_record,
        methods=["POST"],
        response_model=resource.read,
        status_code=status.HTTP_201_CREATED,
        summary=f"Create a {resource.label} (idempotent on the client's id)",
        tags=[tag],
        responses={
            200: {"model": resource.read, "description": "Same create seen before."},
            **ERROR_RESPONSES,
        },
    )


def add_item_routes(router: APIRouter, path: str, resource: Resource, *, tag: str) -> None:
    """GET, PATCH (with version) and DELETE at ``path`` (one ``{record_id}``)."""
    writer = Depends(require_role(resource.write_role))
    reader = Depends(require_role(Role.SURVEYOR))
    update_model: Any = resource.update

    def read_record(record_id: str, session: SessionDep, user: User = reader) -> dict[str, Any]:
        record = crud.get_owned(session, resource.model, org_id=user.org_id, record_id=record_id)
        return resource.as_read(record)

    def update_record(
        record_id: str,
        body: update_model,  # type: ignore[valid-type]
        session: SessionDep,
        user: User = writer,
    ) -> dict[str, Any]:
        record = crud.get_owned(session, resource.model, org_id=user.org_id, record_id=record_id)
        changes = validated_changes(resource, record, body)
        crud.update_versioned(
            session,
            record,
            user=user,
            version=body.version,
            changes=changes,
            current=resource.as_read(record),
        )
        return resource.as_read(record)

    def delete_record(
        record_id: str,
        session: SessionDep,
        user: User = writer,
        version: int | None = Query(None, ge=1, description="Refuse if the record moved on."),
    ) -> Response:
        record = crud.get_owned(session, resource.model, org_id=user.org_id, record_id=record_id)
        if version is not None and version != record.version:
            raise Conflict(
                f"Someone else changed this record (now version {record.version}); "
                "it was not deleted.",
                current=resource.as_read(record),
            )
        crud.delete_owned(session, record, user=user)
        return Response(status_code=status.HTTP_204_NO_CONTENT)

    for function in (read_record, update_record, delete_record):
        function.__name__ = f"{function.__name__}_{resource.model.__tablename__}"  # type: ignore[attr-defined]
    router.add_api_route(
        path,
        read_record,
        methods=["GET"],
        response_model=resource.read,
        summary=f"Read a {resource.label}",
        tags=[tag],
        responses=ERROR_RESPONSES,
    )
    router.add_api_route(
        path,
        update_record,
        methods=["PATCH"],
        response_model=resource.read,
        summary=f"Change a {resource.label} (send the version you read)",
        tags=[tag],
        responses=ERROR_RESPONSES,
    )
    router.add_api_route(
        path,
        delete_record,
        methods=["DELETE"],
        status_code=204,
        summary=f"Delete a {resource.label}",
        tags=[tag],
        responses=ERROR_RESPONSES,
    )
