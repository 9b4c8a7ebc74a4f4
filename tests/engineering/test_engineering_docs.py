"""docs/engineering.md lists every finding code and every calculator the code has."""

from __future__ import annotations

from pathlib import Path

from server.calc.api import router
from server.engineering.batteries import CHEMISTRY_DEFAULTS
from server.engineering.compatibility import FINDINGS

DOC = (Path(__file__).resolve().parents[2] / "docs" / "engineering.md").read_text()


def test_every_finding_code_is_documented() -> None:
    missing = [code for code in FINDINGS if f"`{code}`" not in DOC]
    assert missing == []


def test_every_calculator_path_is_documented() -> None:
    paths = [route.path for route in router.routes]  # type: ignore[attr-defined]
    assert len(paths) == 4
    assert [path for path in paths if f"POST {path}" not in DOC] == []


def test_the_default_peukert_exponents_are_documented() -> None:
    row = next(line for line in DOC.splitlines() if line.startswith("| Peukert k"))
    for defaults in CHEMISTRY_DEFAULTS.values():
        assert f"{defaults.peukert_k:.2f}" in row
