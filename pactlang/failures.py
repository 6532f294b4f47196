"""An unexpected exception while one file is analysed -> an `internal-error`
diagnostic for that file, and exit code 4 for the run.

Light on purpose (no solver imports): every command uses it, `fmt` and
`lint` included.
"""

from __future__ import annotations

import os
import sys
import traceback

from typing import TYPE_CHECKING

from .ast import Span
from .diagnostics import Diagnostic, error

if TYPE_CHECKING:
    from .results import RunReport

FILE_START = Span(1, 1, 1, 2)

INTERNAL = "internal-error"
EXIT_INTERNAL = 4
DEBUG_ENV = "PACTLANG_DEBUG"
REPORT_HELP = ("this is a fault in pactlang, not in the agreement: please report it with the file and this "
               f"message (set {DEBUG_ENV}=1 to print the traceback)")


def internal_reason(exc: BaseException) -> str:
    """A short reason for an unexpected exception: its type and first line."""
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def internal_diagnostic(exc: BaseException, stage: str) -> Diagnostic:
    """The diagnostic that stands for a crash while `stage` ran on one file;
    prints the traceback on stderr when PACTLANG_DEBUG is set."""
    if os.environ.get(DEBUG_ENV):
        traceback.print_exception(type(exc), exc, exc.__traceback__, file=sys.stderr)
    return error(INTERNAL, f"internal error while {stage}: {internal_reason(exc)}", FILE_START, help=REPORT_HELP)


def is_internal(d: Diagnostic) -> bool:
    return d.code == INTERNAL


def internal_failures(run: RunReport) -> list[tuple[str, Diagnostic]]:
    """(path, diagnostic) of every internal error in the run."""
    return [(f.path, d) for f in run.files for d in f.diagnostics if is_internal(d)]


def exit_code(run: RunReport) -> int:
    """4 when the tool failed on any file, else the run's own code (2, 1, 3 or 0)."""
    return EXIT_INTERNAL if internal_failures(run) else run.exit_code


