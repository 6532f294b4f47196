"""`pactlang solve FILE` -> worth(all), least-core value and proof, every rule's split."""

from __future__ import annotations

from enum import Enum

import typer


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


def register(app: typer.Typer) -> None:
    app.command("solve")(solve)
