"""Verdicts -> plain data: what `check` found, ready for any renderer.

A `Result` is one requirement under one scenario (the baseline or a
contingency). `FileReport` gathers the results and diagnostics of one file and
`RunReport` owns the exit code of a whole run.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

from . import ast
from .diagnostics import Diagnostic

HOLDS, FAILS, UNKNOWN = "holds", "fails", "unknown"

EXIT_OK, EXIT_FAILS, EXIT_INPUT, EXIT_UNKNOWN = 0, 1, 2, 3


@dataclass(frozen=True)
class Counterexample:
    """A coalition that gains more than allowed by walking away.

    `parameters` holds the values of ranged quantities at which it was found
    (keys like `draft of north_quay` or a param's name), empty in the baseline.
    """

    coalition: tuple[str, ...]
    worth: Fraction
    payout: Fraction
    excess: Fraction
    allowed: Fraction | None = None
    parameters: dict[str, Fraction] = field(default_factory=dict)


@dataclass(frozen=True)
class Result:
    requirement: str  # canonical text, e.g. "stable within 2%"
    line: int
    contingency: str | None
    status: str  # holds | fails | unknown
    worst_excess: Fraction | None
    method: str
    reason: str | None = None
    counterexamples: tuple[Counterexample, ...] = ()
    span: ast.Span | None = None
    worst_coalition: tuple[str, ...] | None = None


@dataclass
class FileReport:
    path: str
    agreement: str | None
    unit: str | None = None
    kind: str | None = None
    results: list[Result] = field(default_factory=list)
    diagnostics: list[Diagnostic] = field(default_factory=list)
    parties: tuple[str, ...] = ()

    @property
    def has_errors(self) -> bool:
        return any(d.is_error for d in self.diagnostics)


@dataclass
class RunReport:
    files: list[FileReport] = field(default_factory=list)

    def count(self, status: str) -> int:
        return sum(1 for f in self.files for r in f.results if r.status == status)

    @property
    def exit_code(self) -> int:
        """2 if any input is wrong, else 1 if any requirement fails, else 3
        if any result is unknown, else 0."""
        if any(f.has_errors for f in self.files):
            return EXIT_INPUT
        if self.count(FAILS):
            return EXIT_FAILS
        if self.count(UNKNOWN):
            return EXIT_UNKNOWN
        return EXIT_OK
