"""`pactlang repair FILE [--target E]` -> the nearest payout that meets the target."""

from __future__ import annotations

import json
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
                               "(default: the agreement's own `require stable within`)."),
    format: RepairFormat = typer.Option(RepairFormat.text, "--format", help="Output format."),
) -> None:
    """Suggest the nearest payout (least money moved) that is stable within the target."""
    from ..load import load_file
    from ..numbers import exact_str, human
    from ..render_text import CAUTION
    from ..repair import NoTarget, default_target, parse_target, payout_literal, repair_model
    from ..run import display_path
    from . import reported

    path = display_path(file)
    with reported(path):
        model = load_file(file).model
        try:
            if target is None:
                epsilon, relative, label = default_target(model)
            else:
                epsilon, relative = parse_target(target)
                label = f"stable within {target.strip()}"
        except (NoTarget, ValueError) as exc:
            print(f"{path}: error: {exc}", file=sys.stderr)
            raise typer.Exit(2) from None
        report = repair_model(model, epsilon, relative, label)

    if format is RepairFormat.json:
        doc = {"agreement": report.agreement, "target": report.target, "feasible": report.feasible}
        if report.feasible:
            doc["payout"] = {p: exact_str(v) for p, v in zip(report.parties, report.payout)}
            doc["total_change"] = exact_str(report.total_change)
            doc["max_change"] = exact_str(report.max_change)
        else:
            doc["least_core_value"] = exact_str(report.least_core_value)
            doc["certificate"] = [{"coalition": list(c), "weight": exact_str(w)} for c, w in report.certificate]
        print(json.dumps(doc, indent=2, ensure_ascii=False))
        raise typer.Exit(0 if report.feasible else 1)

    unit = f" {report.unit}" if report.unit else ""
    if not report.feasible:
        print(f"{path}: no payout is `{report.target}`: the least-core value is "
              f"{human(report.least_core_value)}{unit}, above the target.")
        print("proof: a balanced collection (each party's weights add up to 1) that every split")
        print("leaves, on weighted average, with at least that excess:")
        for names, weight in report.certificate:
            print(f"  {human(weight):>16}  {{{', '.join(names)}}}")
        print(CAUTION)
        raise typer.Exit(1)
    if report.total_change == 0:
        print(f"# {path}: the current payout already meets `{report.target}`")
    else:
        print(f"# {path}: nearest payout meeting `{report.target}`: moves {human(report.total_change)}{unit}"
              f" in total, at most {human(report.max_change)}{unit} for one party")
    for name, value in zip(report.parties, report.payout):
        was = ""
        if report.current is not None and report.current[report.parties.index(name)] != value:
            was = f"  # was {human(report.current[report.parties.index(name)])}"
        print(f"payout {name} = {payout_literal(value)}{was}")
    print(f"# {CAUTION}")


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
