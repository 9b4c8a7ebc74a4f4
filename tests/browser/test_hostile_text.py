"""Hostile text in every survey field: the pages show it as typed, run none of it,
and keep their layout."""

from __future__ import annotations

from typing import Any

from tests.browser_support import Site, new_site, no_horizontal_scroll

SCRIPT = "<script>window.pwned=1</script>"
ATTRIBUTE = '"\'><img src=x onerror="window.pwned=2">'
UNICODE = "Ünïcödé \u202eevil\u202c ﷽ e\u0301 \u200b 🔋⚡ 中文"
LONG_WORD = "W" * 400  # no spaces: must wrap, not widen the page


def hostile_site(site: Site) -> dict[str, Any]:
    made = new_site(
        site,
        fixtures=[
            {
                "tag": "<b>&</para>",
                "location": SCRIPT + ATTRIBUTE,
                "lamp_type": "T8",
                "lamp_w": 36,
                "ballast": "electronic-instant-start",
                "notes": f"{SCRIPT} {ATTRIBUTE} {UNICODE} {LONG_WORD}",
            }
        ],
    )
    with site.api("surveyor") as api:
        building = made["building"]
        api.patch(
            f"/api/v1/buildings/{building['id']}",
            json={"version": building["version"], "name": f"{SCRIPT}{UNICODE}"[:200]},
        ).raise_for_status()
        area = made["area"]
        api.patch(
            f"/api/v1/areas/{area['id']}",
            json={"version": area["version"], "name": ATTRIBUTE, "notes": LONG_WORD},
        ).raise_for_status()
    return made


def test_pages_show_hostile_text_escaped_and_run_none_of_it(site: Site, page_as: Any) -> None:
    made = hostile_site(site)
    fixture_id = made["fixtures"][0]["id"]
    paths = [
        "/buildings",
        f"/buildings/{made['building']['id']}",
        f"/areas/{made['area']['id']}",
        f"/fixtures/{fixture_id}",
        f"/areas/{made['area']['id']}/proposals",
        f"/fixtures/{fixture_id}/proposal",
        f"/maintenance/fixtures/{fixture_id}",
    ]
    for viewport in ("820x1180", "1440x900"):
        page = page_as("estimator", viewport)
        dialogs: list[str] = []
        page.on("dialog", lambda dialog, seen=dialogs: seen.append(dialog.message))
        for path in paths:
            answer = page.goto(path)
            assert answer is not None and answer.status == 200, path
            assert page.evaluate("() => window.pwned") is None, path
            injected = page.evaluate(
                """() => ({
                    handlers: document.querySelectorAll('[onerror], [onload]').length,
                    scripts: [...document.scripts].filter(
                        s => s.textContent.includes('pwned')).length,
                    images: document.querySelectorAll('img[src="x"]').length,
                })"""
            )
            assert injected == {"handlers": 0, "scripts": 0, "images": 0}, (path, injected)
            assert no_horizontal_scroll(page), (viewport, path)
        assert dialogs == []
        fixture_page = page.goto(f"/fixtures/{fixture_id}")
        assert fixture_page is not None
        assert page.get_by_text("<b>&</para>").first.is_visible()
