"""Paths -> `RunReport`: load, lint and check each file, never raising.

Bad input becomes the file's diagnostics (exit 2). Anything else that goes
wrong while one file is analysed is an internal error: it becomes that file's
`internal-error` diagnostic, the other files are still analysed, and the run
exits 4 (`exit_code`), never 1.
"""

from __future__ import annotations

from .check import CheckOptions, check_model
from .diagnostics import AgreementError, Diagnostic, warning
from .failures import (DEBUG_ENV, EXIT_INTERNAL, INTERNAL, REPORT_HELP, exit_code,  # noqa: F401 - re-exported
                       internal_diagnostic, internal_failures, internal_reason, is_internal)
from .load import FILE_START, agreement_paths, label_of, load_file
from .results import FileReport, RunReport


def display_path(path: str) -> str:
    """A path relative to the working directory when it lies below it; `<stdin>` for `-`."""
    return label_of(path)



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
