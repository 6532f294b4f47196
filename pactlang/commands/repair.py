"""`pactlang repair FILE [--target E]` -> the nearest payout that meets the target."""

from __future__ import annotations

import sys
from enum import Enum
from typing import List

import typer

from . import time_limit_option


class RepairFormat(str, Enum):
    text = "text"
    json = "json"


def repair(
    file: str = typer.Argument(..., help="Agreement file (.deal)."),
    target: str = typer.Option(None, "--target", help="Epsilon to meet, e.g. 15 or 2% "
                               "(default: every `require stable ...` of the agreement)."),
    format: RepairFormat = typer.Option(RepairFormat.text, "--format", help="Output format."),
) -> None:
    """Suggest the nearest payout (least money moved) meeting the target, checked under every contingency."""
    from ..load import load_file
    from ..render_solve import repair_json, repair_text
    from ..repair import NoTarget, repair_model
    from ..run import display_path
    from . import reported

    path = display_path(file)
    with reported(path):
        loaded = load_file(file)
        try:
            report = repair_model(loaded.model, target, loaded.text)
        except (NoTarget, ValueError) as exc:
            print(f"{path}: error: {exc}", file=sys.stderr)
            raise typer.Exit(2) from None
    out, code = repair_json(report) if format is RepairFormat.json else repair_text(report, path)
    print(out)
    raise typer.Exit(code)


def repair_files(
    files: List[str] = typer.Argument(..., help="Agreement files (.deal) or directories; `-` reads standard input."),
    target: str = typer.Option(None, "--target", help="Epsilon to meet, e.g. 15 or 2% "
                               "(default: the agreement's own `require stable within`)."),
    format: RepairFormat = typer.Option(RepairFormat.text, "--format", help="Output format."),
    time_limit: float = time_limit_option(),
) -> None:
    from . import command_deadline, each_file

    with command_deadline(time_limit):
        code = each_file(files, lambda path: repair(path, target=target, format=format), format is RepairFormat.json)
    raise typer.Exit(code)


repair_files.__doc__ = repair.__doc__


def register(app: typer.Typer) -> None:
    app.command("repair")(repair_files)
