"""`pactlang diff OLD NEW` -> what changed in verdicts and payouts between two versions, and the exit code.

Exit codes: 0 nothing that held now fails, 1 a requirement that held now
fails, 2 either version is wrong input or cannot be read.
"""

from __future__ import annotations

import sys
from enum import Enum

import typer


class DiffFormat(str, Enum):
    text = "text"
    json = "json"
    markdown = "markdown"


def diff(
    old: str = typer.Argument(..., help="The earlier version: a file or REV:PATH (read with `git show`)."),
    new: str = typer.Argument(..., help="The later version: a file or REV:PATH."),
    format: DiffFormat = typer.Option(DiffFormat.text, "--format", help="Output format."),
    top: int = typer.Option(5, "--top", min=1, help="Counterexamples per requirement looked at for newly breaking coalitions."),
) -> None:
    """Compare two versions of an agreement: requirements whose verdict changed, and every payout change."""
    from ..check import CheckOptions
    from ..diff import diff_versions
    from ..render_diff import render_diff_json, render_diff_markdown, render_diff_text

    result = diff_versions(old, new, CheckOptions(top=top))
    for version in (result.old, result.new):
        for d in version.diagnostics:
            print(d.render(version.label), file=sys.stderr)
    if format is DiffFormat.json:
        print(render_diff_json(result))
    elif format is DiffFormat.markdown:
        print(render_diff_markdown(result))
    else:
        print(render_diff_text(result))
    raise typer.Exit(result.exit_code)


def register(app: typer.Typer) -> None:
    app.command("diff")(diff)
