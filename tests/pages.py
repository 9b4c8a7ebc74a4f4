"""Reading pages in tests: parse the HTML (stdlib parser) and find elements by tag and attributes.

Pages are parsed, not grepped: a test asks for the input named ``lamp_w`` and
reads its value, or for the message beside it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from html.parser import HTMLParser

from fastapi.testclient import TestClient

VOID = frozenset(
    {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "wbr"}
)


@dataclass
class Element:
    tag: str
    attrs: dict[str, str]
    children: list[Element | str] = field(default_factory=list)
    parent: Element | None = field(default=None, repr=False)

    def text(self) -> str:
        parts = [child if isinstance(child, str) else child.text() for child in self.children]
        return re.sub(r"\s+", " ", " ".join(parts)).strip()

    def iter(self) -> list[Element]:
        found = []
        for child in self.children:
            if isinstance(child, Element):
                found.append(child)
                found.extend(child.iter())
        return found

    def find_all(self, tag: str | None = None, **attrs: str) -> list[Element]:
        """Elements by tag and attributes; ``class_`` matches one class among several."""
        wanted = {name.rstrip("_").replace("_", "-"): value for name, value in attrs.items()}
        found = []
        for element in self.iter():
            if tag is not None and element.tag != tag:
                continue
            if all(_matches(element, name, value) for name, value in wanted.items()):
                found.append(element)
        return found

    def find(self, tag: str | None = None, **attrs: str) -> Element:
        found = self.find_all(tag, **attrs)
        assert found, f"no <{tag}> with {attrs}"
        return found[0]


def _matches(element: Element, name: str, value: str) -> bool:
    if name == "class":
        return value in element.attrs.get("class", "").split()
    return element.attrs.get(name) == value


class _Builder(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.root = Element("#document", {})
        self.current = self.root

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        element = Element(tag, {name: value or "" for name, value in attrs}, parent=self.current)
        self.current.children.append(element)
        if tag not in VOID:
            self.current = element

    def handle_endtag(self, tag: str) -> None:
        node: Element | None = self.current
        while node is not None and node.tag != tag:
            node = node.parent
        if node is not None and node.parent is not None:
            self.current = node.parent

    def handle_data(self, data: str) -> None:
        self.current.children.append(data)


def parse(html: str) -> Element:
    builder = _Builder()
    builder.feed(html)
    builder.close()
    return builder.root


def csrf_token(client: TestClient) -> str:
    """The session's CSRF token, read from the sign-out form of the home page."""
    page = parse(client.get("/").text)
    return page.find("input", name="csrf_token").attrs["value"]


def field_value(page: Element, name: str) -> str:
    """What a form shows in the input, textarea or checked radio named ``name``."""
    for element in page.find_all(name=name):
        if element.tag == "textarea":
            return element.text()
        if element.tag == "select":
            chosen = [o for o in element.find_all("option") if "selected" in o.attrs]
            return chosen[0].attrs.get("value", "") if chosen else ""
        if element.attrs.get("type") in ("radio", "checkbox"):
            if "checked" in element.attrs:
                return element.attrs.get("value", "")
            continue
        return element.attrs.get("value", "")
    return ""


def field_error(page: Element, name: str) -> str:
    """The message shown beside the field ``name``, or ""."""
    found = page.find_all(id=f"{name}-error")
    return found[0].text() if found else ""


def form_fields(page: Element, form_id: str | None = None) -> dict[str, str]:
    """A form's fields as the browser would send them (first form, or by id)."""
    form = page.find("form", id=form_id) if form_id else page.find("form")
    values: dict[str, str] = {}
    for element in form.iter():
        name = element.attrs.get("name")
        if not name or element.tag not in ("input", "select", "textarea"):
            continue
        kind = element.attrs.get("type", "")
        if kind in ("radio", "checkbox") and "checked" not in element.attrs:
            continue
        if kind == "file":
            continue
        values[name] = (
            field_value(form, name) if element.tag != "input" else element.attrs.get("value", "")
        )
    return values
