"""`pactlang serve` -> the language server for editors, over standard input and output.

pygls is an optional extra (`pip install pactlang[editor]`), imported only
when the server starts, so the rest of the command line never needs it.
"""

from __future__ import annotations

import sys

import typer

INSTALL_HINT = "the language server needs pygls 2: install pactlang[editor]  (pip install 'pactlang[editor]')"


def _pygls_ready() -> bool:
    try:
        import lsprotocol.types  # noqa: F401
        import pygls.lsp.server  # noqa: F401  (pygls 2; version 1 kept the server elsewhere)
    except ImportError:
        return False
    return True


def serve(
    stdio: bool = typer.Option(
        False, "--stdio", help="Accepted for clients that pass it; standard input and output is the only transport."),
    check_delay: float = typer.Option(
        0.5, "--check-delay", min=0.0, help="Seconds of quiet typing before the stability check runs."),
    time_limit: float = typer.Option(
        30.0, "--time-limit", min=0.1, help="Seconds per requirement before the editor is told `unknown`."),
) -> None:
    """Run the language server (diagnostics, hover, formatting, definitions, completion)."""
    if not _pygls_ready():
        from ..results import EXIT_INPUT

        print(f"error: {INSTALL_HINT}", file=sys.stderr)
        raise typer.Exit(EXIT_INPUT)
    import logging

    from ..server import build_server

    logging.basicConfig(level=logging.WARNING, stream=sys.stderr)
    # The protocol owns standard output: a stray print anywhere must not corrupt it.
    channel = sys.stdout.buffer
    sys.stdout = sys.stderr
    build_server(delay=check_delay, time_limit=time_limit).start_io(sys.stdin.buffer, channel)


def register(app: typer.Typer) -> None:
    app.command("serve")(serve)
