"""`pactlang check FILE...` -> verdicts in text, JSON or SARIF, and the exit code.

The report goes to standard output; diagnostics (`FILE:LINE:COL: ...`), notes
and the progress line go to standard error in text mode. JSON and SARIF carry
the diagnostics inside the document.
"""

from __future__ import annotations

import json
import sys
from enum import Enum
from typing import List

import typer

from . import note, time_limit_option


class OutputFormat(str, Enum):
    text = "text"
    json = "json"
    sarif = "sarif"
    markdown = "markdown"


def check(
    files: List[str] = typer.Argument(..., help="Agreement files (.deal) or directories; `-` reads standard input."),
    format: OutputFormat = typer.Option(OutputFormat.text, "--format", help="Output format."),
    top: int = typer.Option(5, "--top", min=1, help="Counterexamples per requirement, worst first."),
    time_limit: float = time_limit_option(),
    quiet: bool = typer.Option(False, "--quiet", help="No progress output."),
    digits: int = typer.Option(None, "--digits", min=0, max=12, help="Decimals of amounts in text (default: enough to tell a table's numbers apart)."),
    exact: bool = typer.Option(False, "--exact", help="Exact amounts (fractions) in text."),
    full: bool = typer.Option(False, "--full", help="List every member of large coalitions."),
) -> None:
    """Check every requirement of the agreements, in the baseline and each contingency."""
    from ..check import CheckOptions
    from ..deadline import Deadline
    from ..load import agreement_paths
    from ..progress import Progress
    from ..failures import exit_code
    from ..run import check_files

    deadline = Deadline(time_limit)  # one deadline for the whole command
    notes: list[str] = []
    paths = agreement_paths(files, notes)
    for text in notes:
        note(text)
    progress = Progress.for_stream(len(paths), quiet=quiet)
    try:
        run, models = check_files(paths, CheckOptions(top=top, time_limit=time_limit, progress=progress,
                                                      deadline=deadline))
    finally:
        if progress is not None:
            progress.clear()
    if format is OutputFormat.json:
        from ..render_json import render_json

        print(render_json(run))
    elif format is OutputFormat.sarif:
        from ..render_sarif import render_sarif

        print(json.dumps(render_sarif(run, models), indent=2))
    else:
        from ..report.tables import RenderOptions

        options = RenderOptions(digits=digits, exact=exact, full=full, time_limit=time_limit)
        if format is OutputFormat.markdown:
            from ..render_markdown import render_markdown

            print(render_markdown(run, models, options))
        else:
            from ..render_text import render_diagnostics, render_text, use_colour

            problems = render_diagnostics(run, colour=use_colour(sys.stderr))
            if problems:
                print("\n".join(problems), file=sys.stderr)
            print(render_text(run, colour=use_colour(sys.stdout), models=models, options=options,
                              diagnostics=False))
    raise typer.Exit(exit_code(run))


def register(app: typer.Typer) -> None:
    app.command("check")(check)
