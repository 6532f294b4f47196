"""Problems found in an agreement -> one `Diagnostic` type, rendered apart.

Messages follow one style: start lowercase, no final period, user text in
backticks, advice in `help`, always a span, never an internal type name.
"""

from __future__ import annotations

from dataclasses import dataclass

from .ast import Span


@dataclass(frozen=True)
class Diagnostic:
    code: str
    severity: str  # "error" | "warning"
    message: str
    span: Span
    help: str | None = None

    @property
    def is_error(self) -> bool:
        return self.severity == "error"

    def render(self, path: str) -> str:
        """`FILE:LINE:COL: severity: message`, then the help line if any."""
        text = f"{path}:{self.span.line}:{self.span.column}: {self.severity}: {self.message}"
        if self.help:
            text += f"\n  help: {self.help}"
        return text

    def to_json(self) -> dict:
        return {
            "line": self.span.line,
            "column": self.span.column,
            "severity": self.severity,
            "code": self.code,
            "message": self.message,
        } | ({"help": self.help} if self.help else {})


class AgreementError(Exception):
    """Raised when an agreement cannot be read; carries its diagnostics."""

    def __init__(self, diagnostics: list[Diagnostic]):
        super().__init__("; ".join(d.message for d in diagnostics))
        self.diagnostics = diagnostics


def error(code: str, message: str, span: Span, help: str | None = None) -> Diagnostic:
    return Diagnostic(code, "error", message, span, help)


def warning(code: str, message: str, span: Span, help: str | None = None) -> Diagnostic:
    return Diagnostic(code, "warning", message, span, help)
