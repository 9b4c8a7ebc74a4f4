"""The docs name every setting and every command, and the README keeps its promises."""

from __future__ import annotations

import re
from pathlib import Path

from server.config import Settings

ROOT = Path(__file__).resolve().parent.parent


def _docs() -> str:
    return "\n".join(path.read_text() for path in [ROOT / "README.md", ROOT / "DEVELOPERS.md"])


def test_every_setting_is_documented() -> None:
    text = _docs()
    missing = [name.upper() for name in Settings.model_fields if name.upper() not in text]
    assert missing == []


def test_every_command_is_documented() -> None:
    from server.__main__ import build_parser

    parser = build_parser()
    commands = next(
        action.choices
        for action in parser._actions
        if hasattr(action, "choices") and action.choices
    )
    text = (ROOT / "DEVELOPERS.md").read_text()
    missing = [name for name in commands if f"`{name}" not in text]
    assert missing == []


def test_readme_quick_start_has_exactly_two_commands() -> None:
    readme = (ROOT / "README.md").read_text()
    block = re.search(r"## Quick start\s+```sh\n(.*?)```", readme, re.S)
    assert block, "README needs a Quick start with one sh block"
    commands = [line for line in block.group(1).splitlines() if line.strip()]
    assert [c.split("#")[0].strip() for c in commands] == ["make run", "make test"]
    ci = (ROOT / ".ci" / "run").read_text()
    assert "make test" in ci
