"""Command-line arguments -> library calls -> exit code.

The CLI only parses arguments and calls library functions that return data;
each subcommand lives in `pactlang.commands.<name>` and is imported only when
it is run or when the help lists it (`LazyCommands`), so start-up pays for
typer and that one command. Help is plain text (no rich formatting to load).

Whatever escapes a command unexpectedly is an internal error: a message that
says so and asks for a report on stderr (the traceback only with
PACTLANG_DEBUG=1) and exit code 4, never a traceback and never 1.
"""

from __future__ import annotations

import importlib
import sys

import typer
from typer.core import TyperGroup

COMMANDS = ("check", "solve", "repair", "report", "diff", "fmt", "lint", "serve")
EXIT_INTERNAL = 4


class LazyCommands(TyperGroup):
    """The subcommands, each imported from `pactlang.commands.<name>` on first use."""

    def list_commands(self, ctx) -> list[str]:
        return [name for name in COMMANDS if self.get_command(ctx, name) is not None]

    def parse_args(self, ctx, args):
        _plain_coercion(self.get_params(ctx))
        return super().parse_args(ctx, args)

    def get_command(self, ctx, name: str):
        if name not in COMMANDS:
            return None
        cache = self.__dict__.setdefault("_loaded", {})
        if name not in cache:
            cache[name] = command = _load_command(name)
            if command is not None:
                _plain_coercion(command.get_params(ctx))
        return cache[name]


def _load_command(name: str):
    try:
        module = importlib.import_module(f"pactlang.commands.{name}")
    except ModuleNotFoundError as exc:  # a command still being built is simply absent
        if exc.name != f"pactlang.commands.{name}":
            raise
        return None
    single = typer.Typer(add_completion=False, rich_markup_mode=None, pretty_exceptions_enable=False)
    module.register(single)
    command = typer.main.get_command(single)
    command.name = name
    return command


def _plain_coercion(params) -> None:
    """Convert the options of plain types (str, int, float, an Enum, a list of
    str) in a few lines of Python instead of typer's pydantic adapters, whose
    import costs more than a small check: start-up matters for a command run
    on every save. Any other type, or a typer without this hook, keeps typer's own."""
    try:
        from typer._coercion import RuntimeParam
    except ImportError:  # pragma: no cover - another typer: its own coercion is used
        return
    from .plain_params import plain_runtime_param

    for param in params:
        descriptor = getattr(param, "type_descriptor", None)
        if descriptor is None or getattr(param, "_runtime_param", "absent") is not None:
            continue
        runtime = plain_runtime_param(RuntimeParam, descriptor)
        if runtime is not None:
            param._runtime_param = runtime


app = typer.Typer(
    cls=LazyCommands,
    add_completion=False,
    no_args_is_help=True,
    help="Check multi-party sharing agreements (.deal files) for stability, exactly.",
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)


def _version(value: bool) -> None:
    if value:
        from . import __version__

        print(f"pactlang {__version__}")
        raise typer.Exit(0)


@app.callback()
def _root(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                 help="Print the version and exit."),
) -> None:
    """Check multi-party sharing agreements (.deal files) for stability, exactly."""


def report_internal_error(exc: BaseException) -> None:
    """The message for a crash that escaped a command (stderr)."""
    import os
    import traceback

    from .failures import DEBUG_ENV, REPORT_HELP, internal_reason

    if os.environ.get(DEBUG_ENV):
        traceback.print_exception(type(exc), exc, exc.__traceback__, file=sys.stderr)
    print(f"pactlang: error: internal error: {internal_reason(exc)}\n  help: {REPORT_HELP}", file=sys.stderr)


def main() -> None:
    """Entry point of the `pactlang` console command."""
    try:
        app()
    except KeyboardInterrupt:
        print("pactlang: interrupted", file=sys.stderr)
        sys.exit(130)
    except Exception as exc:  # noqa: BLE001 - the last safety net: exit 4, never a traceback or 1
        report_internal_error(exc)
        sys.exit(EXIT_INTERNAL)
