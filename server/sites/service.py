"""The survey: buildings and areas with their progress, quick copies of fixtures, photos.

Keyword-only functions over one organisation; a record of another firm is
reported like a missing one (:func:`server.common.crud.get_owned`).
"""

from __future__ import annotations

import re
import uuid
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from server.accounts.models import User
from server.audit import service as audit
from server.catalogue.models import RequirementProfile
from server.common import crud
from server.common.errors import Conflict, InvalidInput, NotFound
from server.engineering.profiles import BUILTIN_PROFILES
from server.sites.models import Area, Building, Fixture, FixturePhoto
from server.sites.schemas import FixtureCreate

MAX_COPIES = 50
# What a photo's first bytes must be: the files the pages accept, checked by content.
PHOTO_SIGNATURES: tuple[tuple[str, bytes, int], ...] = (
    ("image/jpeg", b"\xff\xd8\xff", 0),
    ("image/png", b"\x89PNG\r\n\x1a\n", 0),
    ("image/webp", b"WEBP", 8),
)
_TRAILING_NUMBER = re.compile(r"^(.*?)(\d+)(\D*)$")


@dataclass(frozen=True, slots=True)
class BuildingSummary:
    building: Building
    area_count: int
    fixture_count: int
    areas_in_progress: int


@dataclass(frozen=True, slots=True)
class AreaSummary:
    area: Area
    fixture_count: int


# ---- progress ----


def _fixture_counts(session: Session, org_id: str, area_ids: Iterable[str]) -> dict[str, int]:
    ids = list(area_ids)
    if not ids:
        return {}
    rows = session.execute(
        select(Fixture.area_id, func.count())
        .where(Fixture.org_id == org_id, Fixture.area_id.in_(ids))
        .group_by(Fixture.area_id)
    ).all()
    return {area_id: count for area_id, count in rows}


def list_buildings(*, session: Session, org_id: str) -> list[BuildingSummary]:
    """The firm's buildings, newest first, with their areas and fixtures counted."""
    buildings = session.scalars(
        select(Building)
        .where(Building.org_id == org_id)
        .order_by(Building.created_at.desc(), Building.id)
    ).all()
    areas = session.execute(
        select(Area.id, Area.building_id, Area.survey_complete).where(Area.org_id == org_id)
    ).all()
    fixtures = _fixture_counts(session, org_id, (row.id for row in areas))
    summaries = []
    for building in buildings:
        own = [row for row in areas if row.building_id == building.id]
        summaries.append(
            BuildingSummary(
                building=building,
                area_count=len(own),
                fixture_count=sum(fixtures.get(row.id, 0) for row in own),
                areas_in_progress=sum(1 for row in own if not row.survey_complete),
            )
        )
    return summaries


def building_areas(*, session: Session, org_id: str, building_id: str) -> list[AreaSummary]:
    areas = session.scalars(
        select(Area)
        .where(Area.org_id == org_id, Area.building_id == building_id)
        .order_by(Area.created_at, Area.id)
    ).all()
    counts = _fixture_counts(session, org_id, (area.id for area in areas))
    return [AreaSummary(area=area, fixture_count=counts.get(area.id, 0)) for area in areas]


def areas_in_progress(*, session: Session, org_id: str, limit: int = 20) -> list[AreaSummary]:
    """Areas whose survey is not marked complete, most recently touched first."""
    areas = session.scalars(
        select(Area)
        .where(Area.org_id == org_id, Area.survey_complete.is_(False))
        .order_by(Area.updated_at.desc(), Area.id)
        .limit(limit)
    ).all()
    counts = _fixture_counts(session, org_id, (area.id for area in areas))
    return [AreaSummary(area=area, fixture_count=counts.get(area.id, 0)) for area in areas]


def buildings_by_id(*, session: Session, org_id: str, ids: Iterable[str]) -> dict[str, Building]:
    wanted = set(ids)
    if not wanted:
        return {}
    rows = session.scalars(
        select(Building).where(Building.org_id == org_id, Building.id.in_(wanted))
    ).all()
    return {building.id: building for building in rows}


def area_fixtures(*, session: Session, org_id: str, area_id: str) -> list[Fixture]:
    """An area's fixtures in the order they were surveyed."""
    return list(
        session.scalars(
            select(Fixture)
            .where(Fixture.org_id == org_id, Fixture.area_id == area_id)
            .order_by(Fixture.created_at, Fixture.id)
        ).all()
    )


# ---- requirement profiles ----


def profile_choices(*, session: Session, org_id: str) -> list[tuple[str, str]]:
    """``(id, name)`` of the built-in profiles and the firm's own."""
    own = session.execute(
        select(RequirementProfile.id, RequirementProfile.name)
        .where(RequirementProfile.org_id == org_id)
        .order_by(RequirementProfile.name)
    ).all()
    builtin = [(profile.id, profile.name) for profile in BUILTIN_PROFILES.values()]
    return builtin + [(row.id, f"{row.name} (our own)") for row in own]


def check_profile_id(*, session: Session, org_id: str, profile_id: str) -> None:
    """Refuse a profile that is neither built in nor one of the firm's."""
    if profile_id in BUILTIN_PROFILES:
        return
    own = session.get(RequirementProfile, profile_id)
    if own is None or own.org_id != org_id:
        raise InvalidInput("profile_id", "choose one of the listed requirement profiles")


# ---- quick copies ----


def next_tag(tag: str, taken: set[str]) -> str:
    """The tag after ``tag`` that is not yet used: T-07 -> T-08, A9 -> A10, Lobby -> Lobby-2.

    Zero padding is kept (T-007 -> T-008).
    """
    match = _TRAILING_NUMBER.match(tag)
    if match:
        head, digits, tail = match.groups()
        number, width = int(digits), len(digits)
    else:
        head, tail, number, width = f"{tag}-", "", 1, 1
    while True:
        number += 1
        candidate = f"{head}{number:0{width}d}{tail}"
        if candidate not in taken:
            return candidate


def suggested_tag(*, session: Session, org_id: str, area_id: str) -> str:
    """The tag a new fixture in this area would get: after the last one, or T-01."""
    last = last_fixture(session=session, org_id=org_id, area_id=area_id)
    if last is None:
        return "T-01"
    return next_tag(last.tag, _tags(session, org_id, area_id))


def last_fixture(*, session: Session, org_id: str, area_id: str) -> Fixture | None:
    return session.scalars(
        select(Fixture)
        .where(Fixture.org_id == org_id, Fixture.area_id == area_id)
        .order_by(Fixture.created_at.desc(), Fixture.id.desc())
        .limit(1)
    ).first()


def _tags(session: Session, org_id: str, area_id: str) -> set[str]:
    return set(
        session.scalars(
            select(Fixture.tag).where(Fixture.org_id == org_id, Fixture.area_id == area_id)
        ).all()
    )


def _copy_values(source: Fixture) -> dict[str, object]:
    """Everything the survey recorded about ``source``, as the create schema has it."""
    return {
        name: getattr(source, name) for name in FixtureCreate.model_fields if name not in ("id",)
    }


def _batch_ids(batch_id: str, count: int) -> list[str]:
    """Stable ids for the copies one request makes, so a retry makes none twice."""
    namespace = uuid.UUID(batch_id)
    return [str(uuid.uuid5(namespace, f"copy-{index}")) for index in range(count)]


def copies_of(*, session: Session, org_id: str, batch_id: str, count: int) -> list[Fixture]:
    """The fixtures one copy request made (for the page that reports them)."""
    try:
        ids = _batch_ids(batch_id, count)
    except ValueError:
        return []
    found = [session.get(Fixture, record_id) for record_id in ids]
    return [fixture for fixture in found if fixture is not None and fixture.org_id == org_id]


def add_copies(
    *,
    session: Session,
    user: User,
    area_id: str,
    batch_id: str,
    count: int,
    source_id: str | None = None,
) -> list[Fixture]:
    """Copy a fixture ``count`` times with the next free tags, in one transaction.

    The copies take everything from ``source_id`` (or the area's last fixture)
    except the tag. ``batch_id`` is the client-made UUID of the request: the
    same request sent again answers the fixtures it made the first time.
    """
    area = crud.get_owned(session, Area, org_id=user.org_id, record_id=area_id)
    if not 1 <= count <= MAX_COPIES:
        raise InvalidInput("count", f"add between 1 and {MAX_COPIES} fixtures at a time")
    try:
        ids = _batch_ids(batch_id, count)
    except ValueError:
        raise InvalidInput("batch_id", "this form is damaged: reload the page") from None
    done = [session.get(Fixture, record_id) for record_id in ids]
    if any(record is not None for record in done):
        if any(record is None or record.org_id != user.org_id for record in done):
            raise Conflict("This request was already used for another set of fixtures.")
        return [record for record in done if record is not None]
    last = last_fixture(session=session, org_id=user.org_id, area_id=area.id)
    if last is None:
        raise InvalidInput("count", "survey one fixture first; then it can be repeated")
    source = last
    if source_id:
        source = crud.get_owned(session, Fixture, org_id=user.org_id, record_id=source_id)
        if source.area_id != area.id:
            raise InvalidInput("source_id", "copy a fixture of this area")
    # Copies continue after the area's last tag, wherever the source sits.
    taken = _tags(session, user.org_id, area.id)
    tag = last.tag
    created = []
    for record_id in ids:
        tag = next_tag(tag, taken)
        taken.add(tag)
        values = {**_copy_values(source), "tag": tag, "area_id": area.id}
        fixture = Fixture(org_id=user.org_id, id=record_id, **values)
        session.add(fixture)
        created.append(fixture)
    session.flush()
    for fixture in created:
        audit.record(
            session=session,
            user=user,
            org_id=user.org_id,
            entity=Fixture.__tablename__,
            entity_id=fixture.id,
            action="create",
            changes={"copied_from": source.id, "tag": fixture.tag},
        )
    session.commit()
    return created


# ---- photos ----


def photo_type(data: bytes) -> str | None:
    """The image type the bytes really are (JPEG, PNG, WebP), or None."""
    for content_type, signature, offset in PHOTO_SIGNATURES:
        if data[offset : offset + len(signature)] == signature:
            if content_type == "image/webp" and data[:4] != b"RIFF":
                continue
            return content_type
    return None


def add_photo(
    *,
    session: Session,
    user: User,
    fixture: Fixture,
    data: bytes,
    caption: str,
    photo_id: str,
    max_bytes: int,
) -> FixturePhoto:
    """Keep a photo of a fixture or its pack label; the same upload twice keeps one."""
    existing = session.get(FixturePhoto, photo_id)
    if existing is not None:
        if existing.org_id != user.org_id or existing.fixture_id != fixture.id:
            raise Conflict("This upload id is already used; reload the page and try again.")
        return existing
    if not data:
        raise InvalidInput("photo", "choose a photo to upload")
    if len(data) > max_bytes:
        raise InvalidInput(
            "photo", f"the photo is larger than {max_bytes // (1024 * 1024)} MB; take it again"
        )
    content_type = photo_type(data)
    if content_type is None:
        raise InvalidInput("photo", "only JPEG, PNG or WebP photos can be kept")
    photo = FixturePhoto(
        id=photo_id,
        org_id=user.org_id,
        fixture_id=fixture.id,
        content_type=content_type,
        caption=caption.strip()[:200],
        data=data,
    )
    session.add(photo)
    session.flush()
    audit.record(
        session=session,
        user=user,
        org_id=user.org_id,
        entity=FixturePhoto.__tablename__,
        entity_id=photo.id,
        action="create",
        changes={"fixture_id": fixture.id, "content_type": content_type, "bytes": len(data)},
    )
    session.commit()
    return photo


@dataclass(frozen=True, slots=True)
class PhotoInfo:
    id: str
    caption: str
    created_at: datetime


def photos_of(*, session: Session, org_id: str, fixture_id: str) -> list[PhotoInfo]:
    """The photos of a fixture, without their bytes."""
    rows = session.execute(
        select(FixturePhoto.id, FixturePhoto.caption, FixturePhoto.created_at)
        .where(FixturePhoto.org_id == org_id, FixturePhoto.fixture_id == fixture_id)
        .order_by(FixturePhoto.created_at, FixturePhoto.id)
    ).all()
    return [PhotoInfo(id=row.id, caption=row.caption, created_at=row.created_at) for row in rows]


def get_photo(*, session: Session, org_id: str, photo_id: str) -> FixturePhoto:
    photo = session.get(FixturePhoto, photo_id)
    if photo is None or photo.org_id != org_id:
        raise NotFound("FixturePhoto")
    return photo
