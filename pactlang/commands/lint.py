"""`pactlang lint FILE... [--format text|json|sarif]` -> drafting warnings, no solver.

Exit codes: 0 no errors (warnings allowed unless `--strict`); 1 `--strict`
and a warning was found; 2 a file is missing or cannot be read (syntax or
name errors, which are reported like any finding); 4 lint itself failed on a
file (an internal error; the other files are still reported). The findings
are this command's report, so in text mode they go to standard output.
"""

from __future__ import annotations

import json
import sys
from enum import Enum
from typing import List, Optional

import typer



class LintFormat(str, Enum):
    text = "text"
    json = "json"
    sarif = "sarif"


def lint_file(path: str, label: str, ignore: frozenset[str] = frozenset()):
    """One file's report (diagnostics only) and its model, None if it did not resolve."""
    from ..diagnostics import AgreementError
    from ..lint import lint_model
    from ..load import read_text
    from ..results import FileReport
    from ..parse import parse_text
    from ..resolve import resolve

    report = FileReport(label, None)
    model = None
    try:
        text = read_text(path)
        doc = parse_text(text)
    except AgreementError as exc:
        report.diagnostics.extend(exc.diagnostics)
        return report, None
    try:
        model = resolve(doc, label)
        report.agreement, report.unit, report.kind = model.title, model.unit, model.kind
    except AgreementError as exc:
        report.diagnostics.extend(exc.diagnostics)
    report.diagnostics.extend(d for d in lint_model(doc, model) if d.code not in ignore)
    report.diagnostics.sort(key=lambda d: (d.span.line, d.span.column))
    return report, model


def lint_paths(paths: list[str], ignore: frozenset[str] = frozenset(),
               notes: list[str] | None = None) -> tuple[RunReport, dict]:
    """Lint every file; the report and the models by display path."""
    from ..format import expand_paths
    from ..results import FileReport, RunReport
    from ..failures import internal_diagnostic
    from ..load import label_of as display_path

    run, models = RunReport(), {}
    for path in expand_paths(paths, notes):
        label = "<stdin>" if path == "-" else display_path(path)
        try:
            report, model = lint_file(path, label, ignore)
        except Exception as exc:  # noqa: BLE001 - one file's crash is reported; the others go on
            report, model = FileReport(label, None), None
            report.diagnostics.append(internal_diagnostic(exc, "linting the agreement"))
        run.files.append(report)
        models[label] = model
    return run, models


def render_lint_text(run: RunReport, colour: bool = False) -> str:
    """`FILE:LINE:COL: severity: message [code]` lines and a one-line summary."""
    lines = []
    for f in run.files:
        for d in f.diagnostics:
            head = f"{f.path}:{d.span.line}:{d.span.column}: {d.severity}: {d.message} [{d.code}]"
            if colour:
                head = f"\x1b[{'31' if d.is_error else '33'}m{head}\x1b[0m"
            lines.append(head)
            if d.help:
                lines.append(f"  help: {d.help}")
    errors = sum(1 for f in run.files for d in f.diagnostics if d.is_error)
    warnings = sum(1 for f in run.files for d in f.diagnostics if not d.is_error)
    n = len(run.files)
    lines.append(f"{n} file{'s' if n != 1 else ''}: {warnings} warning{'s' if warnings != 1 else ''}, "
                 f"{errors} error{'s' if errors != 1 else ''}")
    return "\n".join(lines)


def render_lint_json(run: RunReport) -> str:
    """The `check --format json` file shape, with diagnostics only."""
    from ..render_json import internal_error_json

    files = [{"path": f.path, "agreement": f.agreement, "diagnostics": [d.to_json() for d in f.diagnostics]}
             | internal_error_json(f) for f in run.files]
    return json.dumps({"files": files}, indent=2)


def lint_exit_code(run: RunReport, strict: bool) -> int:
    from ..results import EXIT_FAILS, EXIT_INPUT, EXIT_OK
    from ..failures import EXIT_INTERNAL, internal_failures

    if internal_failures(run):
        return EXIT_INTERNAL
    if any(f.has_errors for f in run.files):
        return EXIT_INPUT
    if strict and any(f.diagnostics for f in run.files):
        return EXIT_FAILS
    return EXIT_OK


def lint(
    files: List[str] = typer.Argument(..., help="Agreement files or directories; `-` reads standard input."),
    format: LintFormat = typer.Option(LintFormat.text, "--format", help="Output format."),
    strict: bool = typer.Option(False, "--strict", help="Exit 1 when there is any warning."),
    ignore: Optional[List[str]] = typer.Option(None, "--ignore", metavar="CODE", help="Skip a lint code (repeatable)."),
) -> None:
    """Find drafting mistakes without running any solver."""
    notes: list[str] = []
    run, models = lint_paths(files, frozenset(ignore or ()), notes)
    for text in notes:
        print(text, file=sys.stderr)
    if format is LintFormat.json:
        print(render_lint_json(run))
    elif format is LintFormat.sarif:
        from ..render_sarif import render_sarif

        print(json.dumps(render_sarif(run, models), indent=2))
    else:
        from ..render_text import use_colour

        print(render_lint_text(run, colour=use_colour(sys.stdout)))
    raise typer.Exit(lint_exit_code(run, strict))


def register(app: typer.Typer) -> None:
    app.command("lint")(lint)
