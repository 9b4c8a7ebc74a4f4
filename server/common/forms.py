"""HTML forms over the API's create schemas: read, validate, re-show, save.

A page validates with the same ``XCreate`` schema as the JSON API, so a page
and the API accept and refuse the same input. What the user typed is kept as
typed (strings) and shown again beside the message for each field.

Every create form carries a UUID made when the form is rendered; it becomes
the record's id, so a form sent twice (double tap, retry) makes one record.
Every edit form carries the version it was read at; a stale save answers
the form again with both values side by side instead of overwriting.
"""

from __future__ import annotations

import types
import uuid
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date
from decimal import Decimal
from enum import Enum
from typing import Annotated, Any, Union, get_args, get_origin

from fastapi import Depends, Request
from pydantic import BaseModel, ValidationError
from pydantic.fields import FieldInfo
from sqlalchemy.orm import Session
from starlette.datastructures import FormData

from server.accounts.models import User
from server.common import crud
from server.common.api import Resource
from server.common.errors import Conflict
from server.common.models import OrgOwned

TRUE_WORDS = frozenset({"true", "on", "yes", "1"})
FORM_LEVEL = "__form__"


async def read_form_data(request: Request) -> FormData:
    """The submitted form (Starlette caches it: the CSRF check read it first)."""
    return await request.form()


FormDep = Depends(read_form_data)


def _union_members(annotation: Any) -> tuple[Any, ...]:
    if get_origin(annotation) in (Union, types.UnionType):
        return get_args(annotation)
    return (annotation,)


def _kind(info: FieldInfo) -> str:
    """How a field travels in an HTML form: text, number, whole, bool, date, list."""
    members = [m for m in _union_members(info.annotation) if m is not type(None)]
    base = members[0] if members else str
    if get_origin(base) is Annotated:
        base = get_args(base)[0]
    if get_origin(base) is list:
        return "list"
    if base is bool:
        return "bool"
    if base is int:
        return "whole"
    if isinstance(base, type) and issubclass(base, float | Decimal):
        return "number"
    if base is date:
        return "date"
    return "text"


def _allows_none(info: FieldInfo) -> bool:
    return type(None) in _union_members(info.annotation)


def shown(value: Any) -> Any:
    """A stored or default value as a form shows it (strings; lists of strings)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, Enum):
        return str(value.value)
    if isinstance(value, float):
        return f"{value:.10g}"
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, list | tuple | frozenset | set):
        return [shown(item) for item in value]
    return str(value)


@dataclass
class FormView:
    """What a form shows: values as typed, a message per field, the hidden ids.

    ``stored`` holds, after a stale save, the value someone else saved for
    each field where it differs from the user's.
    """

    values: dict[str, Any]
    record_id: str
    version: int | None = None
    errors: dict[str, str] = field(default_factory=dict)
    stored: dict[str, str] = field(default_factory=dict)
    notice: str = ""

    def value(self, name: str) -> str:
        value = self.values.get(name, "")
        return ", ".join(value) if isinstance(value, list) else str(value)

    def has(self, name: str, option: str) -> bool:
        """Whether ``option`` is the chosen value (or among the chosen ones)."""
        value = self.values.get(name, "")
        return option in value if isinstance(value, list) else value == option

    def error(self, name: str) -> str:
        return self.errors.get(name, "")

    @property
    def form_error(self) -> str:
        return self.errors.get(FORM_LEVEL, "")

    @property
    def has_errors(self) -> bool:
        return bool(self.errors)


def blank_form(schema: type[BaseModel], **overrides: Any) -> FormView:
    """A form for a new record: the schema's defaults and a fresh client UUID."""
    values = {
        name: shown(info.default)
        for name, info in schema.model_fields.items()
        if name != "id" and not info.is_required()
    }
    values.update({name: shown(value) for name, value in overrides.items()})
    return FormView(values=values, record_id=str(uuid.uuid4()))


def record_form(schema: type[BaseModel], record: OrgOwned) -> FormView:
    """A form showing a stored record, with its version for the stale check."""
    values = {name: shown(getattr(record, name)) for name in schema.model_fields if name != "id"}
    return FormView(values=values, record_id=record.id, version=record.version)


def _typed(form: FormData, name: str, kind: str) -> Any:
    if kind == "list":
        return [str(item) for item in form.getlist(name)]
    raw = form.get(name)
    text = raw if isinstance(raw, str) else ""
    if kind == "bool":
        return "true" if text.strip().lower() in TRUE_WORDS else "false"
    return text


def _for_schema(kind: str, info: FieldInfo, typed: Any) -> tuple[bool, Any]:
    """(send it, value) for the schema: blanks take the default or None."""
    if kind == "list":
        return True, [item for item in typed if item]
    if kind == "bool":
        return True, typed == "true"
    text = typed.strip()
    if kind in ("number", "whole"):
        # Decimal keypads in some locales offer a comma; spaces group thousands.
        text = text.replace(",", ".").replace(" ", "")
    if text:
        return True, text
    if _allows_none(info):
        return True, None
    return False, None


def read_form(
    schema: type[BaseModel],
    form: FormData,
    *,
    messages: Mapping[tuple[str, str], str] | None = None,
) -> tuple[Any | None, FormView]:
    """Validate a submitted form with ``schema``.

    Returns the validated model (None when invalid) and the form as typed,
    with a message beside each field that is wrong.
    """
    values: dict[str, Any] = {}
    data: dict[str, Any] = {}
    for name, info in schema.model_fields.items():
        if name == "id":
            continue
        kind = _kind(info)
        typed = _typed(form, name, kind)
        values[name] = typed
        send, value = _for_schema(kind, info, typed)
        if send:
            data[name] = value
    record_id = str(form.get("id") or "")
    if "id" in schema.model_fields:
        data["id"] = record_id or None
    version_text = str(form.get("version") or "")
    view = FormView(
        values=values,
        record_id=record_id or str(uuid.uuid4()),
        version=int(version_text) if version_text.isdigit() else None,
    )
    try:
        model = schema.model_validate(data)
    except ValidationError as exc:
        view.errors = field_errors(exc, set(values), messages or {})
        return None, view
    return model, view


def _limit(ctx: Mapping[str, Any], key: str) -> str:
    value = ctx.get(key)
    return f"{value:g}" if isinstance(value, float) else str(value)


def friendly_message(error: Mapping[str, Any]) -> str:
    """A pydantic error in words for the person at the form."""
    kind = str(error.get("type", ""))
    ctx = error.get("ctx") or {}
    texts = {
        "missing": "Enter a value.",
        "string_too_short": "Enter a value.",
        "float_parsing": "Enter a number, like 36 or 12.5.",
        "float_type": "Enter a number, like 36 or 12.5.",
        "decimal_parsing": "Enter an amount, like 24.50.",
        "int_parsing": "Enter a whole number.",
        "int_from_float": "Enter a whole number.",
        "enum": "Choose one of the options.",
        "literal_error": "Choose one of the options.",
        "too_short": "Tick at least one.",
        "date_from_datetime_parsing": "Enter a date.",
        "date_parsing": "Enter a date.",
        "uuid_parsing": "This form is damaged: reload the page and enter it again.",
        "greater_than": "Enter a number above {gt}.",
        "greater_than_equal": "Enter {ge} or more.",
        "less_than": "Enter a number below {lt}.",
        "less_than_equal": "Enter {le} or less.",
        "string_too_long": "Use at most {max_length} characters.",
        "decimal_max_places": "Use at most {decimal_places} decimal places.",
        "decimal_max_digits": "Use at most {max_digits} digits.",
    }
    if kind in texts:
        return texts[kind].format(**{key: _limit(ctx, key) for key in ctx})
    message = str(error.get("msg", "")).removeprefix("Value error, ")
    head, sep, tail = message.partition(": ")
    if sep and head.isidentifier():
        message = tail
    return message[:1].upper() + message[1:] if message else "Check this value."


def sentence(text: str) -> str:
    """A service's message ("choose a photo") as a sentence for a page ("Choose a photo.")."""
    text = text.strip()
    if not text:
        return text
    return text[:1].upper() + text[1:] + ("" if text.endswith((".", "!", "?")) else ".")


def field_errors(
    exc: ValidationError, fields: set[str], messages: Mapping[tuple[str, str], str]
) -> dict[str, str]:
    """The first message for each field; rules across fields name their field first."""
    errors: dict[str, str] = {}
    for error in exc.errors():
        loc = [part for part in error.get("loc", ()) if isinstance(part, str)]
        name = loc[0] if loc else ""
        if not name:
            head, sep, _ = str(error.get("msg", "")).removeprefix("Value error, ").partition(": ")
            name = head if sep else ""
        if name not in fields:
            name = FORM_LEVEL
        text = messages.get((name, str(error.get("type")))) or friendly_message(error)
        errors.setdefault(name, text)
    return errors


def show_conflict(view: FormView, conflict: Conflict) -> FormView:
    """Keep the user's values and add, beside each field that differs, the stored one.

    The hidden version moves to the stored one, so saving again is a
    deliberate choice to keep one's own values.
    """
    current = conflict.current or {}
    for name, typed in view.values.items():
        if name not in current:
            continue
        stored = shown(current[name])
        if _same(stored, typed):
            continue
        view.stored[name] = ", ".join(stored) if isinstance(stored, list) else stored or "(empty)"
    version = current.get("version")
    view.version = version if isinstance(version, int) else view.version
    view.notice = (
        f"{conflict.message} Your values are still in the form; what is stored now is shown "
        "beside each field that differs. Save again to keep yours, or reload the page to "
        "take the stored ones."
    )
    return view


def show_id_taken(view: FormView, conflict: Conflict) -> FormView:
    """A create whose client UUID already names another record: keep the input, new UUID.

    (The same form sent again with the same values is not this case: it answers
    the stored record.)
    """
    view.notice = f"{conflict.message} Nothing new was saved; press Save to add it as a new one."
    view.record_id = str(uuid.uuid4())
    return view


def _same(stored: Any, typed: Any) -> bool:
    if isinstance(stored, list) or isinstance(typed, list):
        return sorted(stored or []) == sorted(typed or [])
    if stored == typed:
        return True
    try:
        return float(str(stored).replace(",", ".")) == float(str(typed).replace(",", "."))
    except ValueError:
        return str(stored).strip() == str(typed).strip()


def create_from_form(
    session: Session,
    resource: Resource,
    *,
    user: User,
    body: BaseModel,
    parent_id: str | None = None,
) -> tuple[OrgOwned, bool]:
    """The idempotent create of the JSON API, for a validated page form."""
    values = body.model_dump(exclude={"id"})
    if resource.parent_key and parent_id is not None:
        values[resource.parent_key] = parent_id
    record_id = getattr(body, "id", None)
    return crud.create_idempotent(
        session,
        resource.model,
        org_id=user.org_id,
        user=user,
        values=values,
        record_id=str(record_id) if record_id else None,
    )


def update_from_form(
    session: Session,
    resource: Resource,
    record: OrgOwned,
    *,
    user: User,
    body: BaseModel,
    version: int | None,
) -> OrgOwned:
    """The versioned update of the JSON API, for a validated page form (all fields)."""
    return crud.update_versioned(
        session,
        record,
        user=user,
        version=version or 0,
        changes=body.model_dump(exclude={"id"}),
        current=resource.as_read(record),
    )
