"""Paths -> `RunReport`: load, lint and check each file, never raising.

Bad input becomes the file's diagnostics (exit 2). Anything else that goes
wrong while one file is analysed is an internal error: it becomes that file's
`internal-error` diagnostic, the other files are still analysed, and the run
exits 4 (`exit_code`), never 1.
"""

from __future__ import annotations

import os
import sys
import traceback

from .check import CheckOptions, check_model
from .diagnostics import AgreementError, Diagnostic, error, warning
from .load import FILE_START, agreement_paths, label_of, load_file
from .results import FileReport, RunReport

INTERNAL = "internal-error"
EXIT_INTERNAL = 4
DEBUG_ENV = "PACTLANG_DEBUG"
REPORT_HELP = ("this is a fault in pactlang, not in the agreement: please report it with the file and this "
               f"message (set {DEBUG_ENV}=1 to print the traceback)")


def display_path(path: str) -> str:
    """A path relative to the working directory when it lies below it; `<stdin>` for `-`."""
    return label_of(path)


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


def lint_diagnostics(loaded) -> list:
    """Lint findings of a loaded agreement (empty when lint is not installed)."""
    try:
        from .lint import lint_model
    except ModuleNotFoundError as exc:
        if exc.name != "pactlang.lint":
            raise
        return []
    return list(lint_model(loaded.document, loaded.model))


def check_file(path: str, options: CheckOptions = CheckOptions()) -> tuple[FileReport, object]:
    """One file's report and its model (None when the file could not be read)."""
    report = FileReport(display_path(path), None)
    deadline = options.deadline
    try:
        loaded = load_file(path)
    except AgreementError as exc:
        report.diagnostics.extend(exc.diagnostics)
        return report, None
    except Exception as exc:  # noqa: BLE001 - the safety net: one file's crash is reported, the run goes on
        report.diagnostics.append(internal_diagnostic(exc, "reading the agreement"))
        return report, None
    model = loaded.model
    report.agreement, report.unit, report.kind = model.title, model.unit, model.kind
    report.parties = model.parties
    try:
        report.results.extend(check_model(model, options))
    except AgreementError as exc:
        report.diagnostics.extend(exc.diagnostics)
    except Exception as exc:  # noqa: BLE001
        report.diagnostics.append(internal_diagnostic(exc, "checking the agreement"))
    # Lint is advice: it runs after the verdicts, in the time left, so it never costs a verdict.
    report.diagnostics[:0] = _lint_within(loaded, deadline)
    return report, model


def _lint_within(loaded, deadline) -> list[Diagnostic]:
    """Lint findings, or a note that lint was cut short by the command's deadline."""
    from .deadline import REASON, TimeLimitReached, active

    stopped = warning("lint-stopped", f"drafting checks (lint) were skipped: {REASON}", FILE_START)
    if deadline is not None and deadline.passed:
        return [stopped]
    try:
        with active(deadline):
            return lint_diagnostics(loaded)
    except TimeLimitReached:
        return [stopped]
    except Exception as exc:  # noqa: BLE001
        return [internal_diagnostic(exc, "linting the agreement")]


def check_files(paths: list[str], options: CheckOptions = CheckOptions(),
                notes: list[str] | None = None) -> tuple[RunReport, dict]:
    """Check every file (directories: every `.deal` inside; `-`: standard
    input); returns the report and the models by display path."""
    run, models = RunReport(), {}
    for path in agreement_paths(paths, notes):
        report, model = check_file(path, options)
        run.files.append(report)
        models[report.path] = model
    return run, models
