"""`pactlang solve FILE` -> worth(all), least-core value and proof, every rule's split."""

from __future__ import annotations

from enum import Enum
from typing import List

import typer

from . import time_limit_option


class SolveFormat(str, Enum):
    text = "text"
    json = "json"


def solve(
    file: str = typer.Argument(..., help="Agreement file (.deal)."),
    format: SolveFormat = typer.Option(SolveFormat.text, "--format", help="Output format."),
) -> None:
    """Compute the least-core value with its certificate and the reference splits."""
    from ..load import load_file
    from ..run import display_path
    from ..solve import solve_model
    from . import reported

    path = display_path(file)
    with reported(path):
        report = solve_model(load_file(file).model)
    from ..render_solve import solve_json, solve_text

    print(solve_json(report) if format is SolveFormat.json else solve_text(report))


def solve_files(
    files: List[str] = typer.Argument(..., help="Agreement files (.deal) or directories; `-` reads standard input."),
    format: SolveFormat = typer.Option(SolveFormat.text, "--format", help="Output format."),
    time_limit: float = time_limit_option(),
) -> None:
    from . import command_deadline, each_file

    with command_deadline(time_limit):
        code = each_file(files, lambda path: solve(path, format=format), format is SolveFormat.json)
    raise typer.Exit(code)


solve_files.__doc__ = solve.__doc__


def register(app: typer.Typer) -> None:
    app.command("solve")(solve_files)
