"""Command-line arguments -> library calls -> exit code.

The CLI only parses arguments and calls library functions that return data;
each subcommand lives in `pactlang.commands.<name>` and registers itself here.
"""

from __future__ import annotations

import importlib

import typer

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Check multi-party sharing agreements (.deal files) for stability, exactly.",
    pretty_exceptions_enable=False,
)



@app.callback()
def _root() -> None:
    """Check multi-party sharing agreements (.deal files) for stability, exactly."""


COMMANDS = ("check", "solve", "repair", "report", "diff", "fmt", "lint", "serve")

for _name in COMMANDS:
    try:
        _module = importlib.import_module(f"pactlang.commands.{_name}")
    except ModuleNotFoundError as _exc:  # a command still being built is simply absent
        if _exc.name != f"pactlang.commands.{_name}":
            raise
        continue
    _module.register(app)


def main() -> None:
    """Entry point of the `pactlang` console command."""
    app()
