"""The survey pages: errors beside fields, one record per form, stale edits, copies, photos."""

from __future__ import annotations

import uuid
from typing import Any

import pytest
from fastapi.testclient import TestClient

from server.sites.service import next_tag, photo_type
from tests.pages import csrf_token, field_error, field_value, form_fields, parse
from tests.planner_data import SERIES_FIXTURE, catalogue, form_of, survey

PNG_1PX = (
    b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x01\x00\x00\x00\x01\x08\x06\x00\x00"
    b"\x00\x1f\x15\xc4\x89\x00\x00\x00\rIDATx\x9cc\xf8\xff\xff?\x00\x05\xfe\x02\xfe\xa7"
    b"\x35\x81\x84\x00\x00\x00\x00IEND\xaeB`\x82"
)


def _post(browser: TestClient, path: str, data: dict[str, Any], **extra: Any) -> Any:
    return browser.post(
        path, data={"csrf_token": csrf_token(browser), **data}, follow_redirects=False, **extra
    )


def _fixture_form(tag: str = "T-01", **changes: Any) -> dict[str, Any]:
    return form_of({"id": str(uuid.uuid4()), **SERIES_FIXTURE, "tag": tag, **changes})


def test_building_area_and_fixture_made_through_the_pages(browser_session_as, client_as) -> None:
    browser = browser_session_as("surveyor")
    made = _post(browser, "/buildings/new", {"id": str(uuid.uuid4()), "name": "North wing"})
    assert made.status_code == 303
    building_path = made.headers["location"]
    area_form = parse(browser.get(building_path + "/areas/new").text)
    data = {**form_fields(area_form, "area-form"), "name": "Stair B", "kind": "stairway"}
    made = _post(browser, building_path + "/areas/new", data)
    assert made.status_code == 303, made.text
    area_path = made.headers["location"]
    made = _post(browser, area_path + "/fixtures/new", _fixture_form())
    assert made.status_code == 303, made.text
    page = parse(browser.get(made.headers["location"]).text)
    assert [e.text() for e in page.find_all(class_="row-tag")] == ["T-01"]
    assert "Fixture T-01 saved." in page.find(class_="notice").text()
    fixtures = client_as("surveyor").get(f"/api/v1/areas/{area_path.rsplit('/', 1)[1]}/fixtures")
    assert fixtures.json()["items"][0]["wiring"] == "series"


def test_new_fixture_form_has_the_usual_defaults(browser_session_as, client_as) -> None:
    catalogue(client_as("estimator"))
    made = survey(client_as("surveyor"))
    page = parse(
        browser_session_as("surveyor").get(f"/areas/{made['area']['id']}/fixtures/new").text
    )
    assert field_value(page, "lamp_type") == "T8"
    assert field_value(page, "wiring") == "single"
    assert field_value(page, "ambient_c") == "25"
    assert field_value(page, "tag") == "T-02"  # after the area's T-01
    numeric = page.find("input", name="lamp_w")
    assert numeric.attrs["inputmode"] == "decimal"
    assert field_error(page, "lamp_w") == ""  # nothing marked before the first save
    panel = page.find(id="findings").text()
    assert panel == "To see the findings, fill in or correct: Lamp watts."


def test_the_same_form_sent_twice_makes_one_fixture(browser_session_as, client_as) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    form = _fixture_form("T-09")
    first = _post(browser, f"/areas/{area_id}/fixtures/new", form)
    second = _post(browser, f"/areas/{area_id}/fixtures/new", form)
    assert first.status_code == second.status_code == 303
    assert first.headers["location"] == second.headers["location"]
    items = client_as("surveyor").get(f"/api/v1/areas/{area_id}/fixtures").json()["items"]
    assert [item["tag"] for item in items].count("T-09") == 1


def test_a_wrong_value_is_shown_beside_its_field_and_the_input_kept(
    browser_session_as, client_as
) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    answer = _post(
        browser,
        f"/areas/{area_id}/fixtures/new",
        _fixture_form("T-02", lamp_w="thirty-six", location="Above door 4"),
    )
    assert answer.status_code == 422
    page = parse(answer.text)
    assert field_value(page, "lamp_w") == "thirty-six"
    assert field_value(page, "location") == "Above door 4"
    assert field_error(page, "lamp_w") == "Enter a number, like 36 or 12.5."
    assert page.find("input", name="lamp_w").attrs["aria-invalid"] == "true"


def test_a_rule_across_fields_points_at_its_field(browser_session_as, client_as) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    answer = _post(
        browser,
        f"/areas/{area_id}/fixtures/new",
        _fixture_form("T-02", existing_kit=True, open_circuit_v="5.1", loaded_v="5,4", load_a="1"),
    )
    assert answer.status_code == 422
    page = parse(answer.text)
    assert "cannot be above the open-circuit reading" in field_error(page, "loaded_v")
    assert field_value(page, "loaded_v") == "5,4"


def test_a_stale_edit_shows_both_values_and_overwrites_nothing(
    browser_session_as, client_as
) -> None:
    fixture = survey(client_as("surveyor"))["fixture"]
    mine, theirs = browser_session_as("surveyor"), browser_session_as("estimator")
    my_form = form_fields(parse(mine.get(f"/fixtures/{fixture['id']}").text), "fixture-form")
    their_form = form_fields(parse(theirs.get(f"/fixtures/{fixture['id']}").text), "fixture-form")
    saved = _post(theirs, f"/fixtures/{fixture['id']}", {**their_form, "location": "Stair door"})
    assert saved.status_code == 303
    stale = _post(mine, f"/fixtures/{fixture['id']}", {**my_form, "location": "Lift lobby"})
    assert stale.status_code == 409
    page = parse(stale.text)
    assert field_value(page, "location") == "Lift lobby"
    assert page.find(id="location-stored").text() == "Stored now: Stair door"
    assert "Someone else saved this record first" in page.find(class_="notice").text()
    stored = client_as("surveyor").get(f"/api/v1/fixtures/{fixture['id']}").json()
    assert stored["location"] == "Stair door"


def test_a_form_without_its_csrf_token_is_refused(browser_session_as, client_as) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    answer = browser.post(
        f"/areas/{area_id}/fixtures/new", data=_fixture_form("T-77"), follow_redirects=False
    )
    assert answer.status_code == 403
    items = client_as("surveyor").get(f"/api/v1/areas/{area_id}/fixtures").json()["items"]
    assert "T-77" not in {item["tag"] for item in items}


def test_repeat_last_and_copies_number_on_and_a_retry_adds_nothing(
    browser_session_as, client_as
) -> None:
    area_id = survey(client_as("surveyor"), tag="T-07")["area"]["id"]
    browser = browser_session_as("surveyor")
    repeat = _post(browser, f"/areas/{area_id}/fixtures/copies", {"batch_id": str(uuid.uuid4())})
    assert repeat.status_code == 303
    batch = str(uuid.uuid4())
    copies = _post(browser, f"/areas/{area_id}/fixtures/copies", {"batch_id": batch, "count": "3"})
    again = _post(browser, f"/areas/{area_id}/fixtures/copies", {"batch_id": batch, "count": "3"})
    assert copies.headers["location"] == again.headers["location"]
    page = parse(browser.get(again.headers["location"]).text)
    assert [e.text() for e in page.find_all(class_="row-tag")] == [
        "T-07", "T-08", "T-09", "T-10", "T-11",
    ]  # fmt: skip
    assert "3 fixtures added: T-09 to T-11." in page.find(class_="notice").text()
    items = client_as("surveyor").get(f"/api/v1/areas/{area_id}/fixtures").json()["items"]
    assert {item["wiring"] for item in items} == {"series"}


@pytest.mark.parametrize(
    ("count", "message"),
    [("51", "Add between 1 and 50 fixtures at a time."), ("many", "Enter a whole number.")],
)
def test_too_many_copies_are_refused_beside_the_count(
    browser_session_as, client_as, count: str, message: str
) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    answer = _post(
        browser,
        f"/areas/{area_id}/fixtures/copies",
        {"batch_id": str(uuid.uuid4()), "count": count},
    )
    assert answer.status_code == 422
    page = parse(answer.text)
    assert page.find(id="copy-error").text() == message
    assert page.find("input", id="copy-count").attrs["value"] == count


@pytest.mark.parametrize(
    ("tag", "taken", "expected"),
    [
        ("T-07", set(), "T-08"),
        ("T-009", set(), "T-010"),
        ("A9", set(), "A10"),
        ("Lobby", set(), "Lobby-2"),
        ("T-07", {"T-08", "T-09"}, "T-10"),
        ("2F-03a", set(), "2F-04a"),
    ],
)
def test_next_tag(tag: str, taken: set[str], expected: str) -> None:
    assert next_tag(tag, taken) == expected


def test_a_photo_is_kept_checked_by_its_bytes_and_served(browser_session_as, client_as) -> None:
    fixture = survey(client_as("surveyor"))["fixture"]
    browser = browser_session_as("surveyor")
    path = f"/fixtures/{fixture['id']}/photos"
    photo_id = str(uuid.uuid4())
    fields = {"photo_id": photo_id, "caption": "Pack label"}
    upload = {"photo": ("label.png", PNG_1PX, "image/png")}
    assert _post(browser, path, fields, files=upload).status_code == 303
    assert _post(browser, path, fields, files=upload).status_code == 303  # a retry keeps one
    page = parse(browser.get(f"/fixtures/{fixture['id']}").text)
    images = page.find(id="photos").find_all("img")
    assert [image.attrs["src"] for image in images] == [f"/photos/{photo_id}"]
    served = browser.get(f"/photos/{photo_id}")
    assert served.headers["content-type"] == "image/png" and served.content == PNG_1PX
    fake = {"photo": ("label.jpg", b"<script>not an image</script>", "image/jpeg")}
    refused = _post(browser, path, {"photo_id": str(uuid.uuid4())}, files=fake)
    assert refused.status_code == 422
    assert "Only JPEG, PNG or WebP" in parse(refused.text).find(id="photo-error").text()
    limit = 5 * 1024 * 1024  # settings.upload_max_bytes, its default
    huge = {"photo": ("big.jpg", b"\xff\xd8\xff\xe0" + bytes(limit), "image/jpeg")}
    too_big = _post(browser, path, {"photo_id": str(uuid.uuid4())}, files=huge)
    assert too_big.status_code == 422
    assert "larger than 5 MB" in parse(too_big.text).find(id="photo-error").text()


def test_photo_types_by_their_first_bytes() -> None:
    # Signatures: JPEG SOI marker FF D8 FF; PNG 8-byte signature; WebP "RIFF....WEBP"
    # (the formats' own specifications: JPEG/JFIF, PNG (ISO/IEC 15948), RIFF/WebP container).
    assert photo_type(b"\xff\xd8\xff\xe0rest") == "image/jpeg"
    assert photo_type(PNG_1PX) == "image/png"
    assert photo_type(b"RIFF\x10\x00\x00\x00WEBPVP8 ") == "image/webp"
    assert photo_type(b"GIF89a") is None
    assert photo_type(b"JUNK\x10\x00\x00\x00WEBP") is None


def test_another_firms_area_answers_404_like_a_missing_one(browser_session_as, client_as) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    other = browser_session_as("surveyor", org="B")
    assert other.get(f"/areas/{area_id}").status_code == 404
    assert other.get(f"/areas/{uuid.uuid4()}").status_code == 404


def test_an_unknown_requirement_profile_is_refused_beside_its_field(
    browser_session_as, client_as
) -> None:
    building_id = survey(client_as("surveyor"))["building"]["id"]
    browser = browser_session_as("surveyor")
    form = form_fields(parse(browser.get(f"/buildings/{building_id}/areas/new").text), "area-form")
    answer = _post(
        browser,
        f"/buildings/{building_id}/areas/new",
        {**form, "name": "Plant room", "profile_id": "no-such-profile"},
    )
    assert answer.status_code == 422
    assert field_error(parse(answer.text), "profile_id") == (
        "Choose one of the listed requirement profiles."
    )


def test_findings_beside_the_form_follow_the_chosen_module(browser_session_as, client_as) -> None:
    """Series wiring with a one-end module fails; both ends passes.

    ENGINEERING.md section 5: two lamps in series on one electronic ballast need
    changeover on both lamp ends (module listings, common practice).
    """
    items = catalogue(client_as("estimator"))
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    form = _fixture_form("T-02", check_pack_id=items["big"]["id"])
    one_end = _post(
        browser, f"/areas/{area_id}/findings", {**form, "check_module_id": items["one"]["id"]}
    )
    panel = parse(one_end.text)
    assert panel.find(class_="verdict-line").find(class_="badge").text() == "Fail"
    fails = [f.text() for f in panel.find_all(class_="finding") if f.find_all(class_="fail")]
    assert any("switches one lamp end only" in text for text in fails)
    both = _post(
        browser, f"/areas/{area_id}/findings", {**form, "check_module_id": items["both"]["id"]}
    )
    assert parse(both.text).find(class_="verdict-line").find(class_="badge").text() == "Pass"


def test_findings_say_which_fields_to_complete_first(browser_session_as, client_as) -> None:
    catalogue(client_as("estimator"))
    area_id = survey(client_as("surveyor"))["area"]["id"]
    answer = _post(
        browser_session_as("surveyor"), f"/areas/{area_id}/findings", _fixture_form(lamp_w="")
    )
    assert answer.status_code == 200
    assert "Lamp watts" in parse(answer.text).find(class_="notice").text()


def test_the_cautions_are_on_the_area_and_fixture_pages(browser_session_as, client_as) -> None:
    made = survey(client_as("surveyor"))
    browser = browser_session_as("surveyor")
    for path in (f"/areas/{made['area']['id']}", f"/fixtures/{made['fixture']['id']}"):
        cautions = parse(browser.get(path).text).find(class_="cautions").text()
        assert "unplug the pack" in cautions and "several hundred volts" in cautions
        assert "cadmium" in cautions


def test_a_changed_form_sent_with_a_used_id_saves_nothing_and_offers_a_new_one(
    browser_session_as, client_as
) -> None:
    area_id = survey(client_as("surveyor"))["area"]["id"]
    browser = browser_session_as("surveyor")
    form = _fixture_form("T-20")
    assert _post(browser, f"/areas/{area_id}/fixtures/new", form).status_code == 303
    answer = _post(browser, f"/areas/{area_id}/fixtures/new", {**form, "tag": "T-21"})
    assert answer.status_code == 409
    page = parse(answer.text)
    assert "exists with other values" in page.find(class_="notice").text()
    assert field_value(page, "tag") == "T-21"
    assert page.find("input", name="id").attrs["value"] != form["id"]
    tags = [
        i["tag"]
        for i in client_as("surveyor").get(f"/api/v1/areas/{area_id}/fixtures").json()["items"]
    ]
    assert "T-21" not in tags
