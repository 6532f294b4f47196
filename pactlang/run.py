"""Paths -> `RunReport`: load, lint and check each file, never raising on bad input."""

from __future__ import annotations

import os

from .check import CheckOptions, check_model
from .diagnostics import AgreementError
from .load import load_file
from .results import FileReport, RunReport


def display_path(path: str) -> str:
    """A path relative to the working directory when it lies below it."""
    if path == "-":
        return path
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return path
    return path if rel.startswith("..") else rel


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
    try:
        loaded = load_file(path)
    except AgreementError as exc:
        report.diagnostics.extend(exc.diagnostics)
        return report, None
    model = loaded.model
    report.agreement, report.unit, report.kind = model.title, model.unit, model.kind
    report.parties = model.parties
    report.diagnostics.extend(lint_diagnostics(loaded))
    try:
        report.results.extend(check_model(model, options))
    except AgreementError as exc:
        report.diagnostics.extend(exc.diagnostics)
    return report, model


def check_files(paths: list[str], options: CheckOptions = CheckOptions()) -> tuple[RunReport, dict]:
    """Check every file; returns the report and the models by display path."""
    run, models = RunReport(), {}
    for path in paths:
        report, model = check_file(path, options)
        run.files.append(report)
        models[report.path] = model
    return run, models
