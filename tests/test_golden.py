"""Golden cases: agreement text, then the expected parse or diagnostics below a marker.

Each file in tests/cases/parse/ and tests/cases/diagnostics/ holds the input,
a line `#### expected`, then the expected output (the input part is parsed
alone). Run with PACTLANG_REGOLD=1 to rewrite the expected parts after a
deliberate change, then review the diff.
"""

from __future__ import annotations

import dataclasses
import os
from fractions import Fraction
from pathlib import Path

import pytest

from pactlang.check import check_model
from pactlang.diagnostics import AgreementError
from pactlang.load import load_text

CASES = Path(__file__).parent / "cases"
MARKER = "#### expected\n"


def dump(node, indent: int = 0) -> list[str]:
    """A readable, span-free dump of syntax nodes."""
    pad = "  " * indent
    if isinstance(node, tuple):
        out = []
        for item in node:
            out.extend(dump(item, indent))
        return out
    if isinstance(node, Fraction):
        return [pad + str(node)]
    if not dataclasses.is_dataclass(node):
        return [pad + repr(node)]
    fields = [f for f in dataclasses.fields(node) if f.compare and f.name != "span"]
    simple = [f"{f.name}={getattr(node, f.name)}" for f in fields
              if not dataclasses.is_dataclass(getattr(node, f.name)) and not isinstance(getattr(node, f.name), tuple)]
    out = [pad + type(node).__name__ + (" " + " ".join(simple) if simple else "")]
    for f in fields:
        value = getattr(node, f.name)
        if dataclasses.is_dataclass(value) or isinstance(value, tuple):
            out.append(pad + f"  {f.name}:")
            out.extend(dump(value, indent + 2))
    return out


def run_case(path: Path) -> str:
    source = path.read_text().split(MARKER)[0]
    try:
        loaded = load_text(source, path.name)
        if path.parent.name == "diagnostics":
            check_model(loaded.model)  # some errors (division by zero) show only when evaluated
    except AgreementError as exc:
        return "\n".join(d.render(path.name) for d in exc.diagnostics) + "\n"
    if path.parent.name == "diagnostics":
        return "no diagnostics\n"
    return "\n".join(dump(loaded.document.statements)) + "\n"


def cases(folder: str):
    return sorted((CASES / folder).glob("*.deal"))


@pytest.mark.parametrize("path", cases("parse") + cases("diagnostics"), ids=lambda p: f"{p.parent.name}/{p.stem}")
def test_golden(path: Path):
    text = path.read_text()
    got = run_case(path)
    if os.environ.get("PACTLANG_REGOLD"):
        path.write_text(text.split(MARKER)[0] + MARKER + got)
        return
    assert MARKER in text, f"{path} has no expected part"
    assert got == text.split(MARKER)[1]


def test_every_bad_case_is_an_error():
    for path in cases("diagnostics"):
        assert "error" in run_case(path), path
