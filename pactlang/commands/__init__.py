"""One module per subcommand; each defines `register(app)`. Shared here: the
`--time-limit` option, error reporting and running a one-file command over
several files (directories, `-`)."""

from __future__ import annotations

import io
import json
import sys
from contextlib import contextmanager, redirect_stdout

import typer

EXIT_ORDER = (4, 2, 1, 3, 0)  # the code of a run over several files: the first that any file gave


def combined_exit(codes) -> int:
    """One exit code for several files: internal error, then input, fails, unknown, ok."""
    codes = set(codes) or {0}
    return next((c for c in EXIT_ORDER if c in codes), max(codes))


def _seconds(value: float | None) -> float | None:
    if value is None:
        return None
    from ..deadline import parse_seconds

    try:
        return parse_seconds(value)
    except ValueError as exc:
        raise typer.BadParameter(str(exc)) from None


def time_limit_option(help: str = "Seconds for the whole command; what is not done by then is `unknown`."):
    """`--time-limit SECONDS`: a positive, finite number (else exit 2 with a message)."""
    return typer.Option(None, "--time-limit", help=help, callback=_seconds)


def note(text: str) -> None:
    print(text, file=sys.stderr)


def internal_error(label: str, exc: BaseException, stage: str) -> None:
    """Print an internal error for one file on stderr (the traceback only with PACTLANG_DEBUG)."""
    from ..failures import internal_diagnostic

    note(internal_diagnostic(exc, stage).render(label))


@contextmanager
def reported(path: str):
    """Turn the library's errors into messages on stderr and exit codes: wrong
    input (`FILE:LINE:COL: ...`) exits 2, an answer that cannot be proved or
    the time limit exits 3, anything unexpected is an internal error and exits 4."""
    from ..deadline import REASON, TimeLimitReached
    from ..diagnostics import AgreementError
    from ..formula import EvaluationError

    try:
        from ..solutions import SolverError
        from ..solve import TooLarge
        unproved: tuple = (TooLarge, SolverError)
    except ImportError:  # pragma: no cover - the solvers ship with the package
        unproved = ()
    try:
        yield
    except (typer.Exit, typer.Abort, KeyboardInterrupt):
        raise
    except AgreementError as exc:
        for d in exc.diagnostics:
            note(d.render(path))
        raise typer.Exit(2) from None
    except EvaluationError as exc:
        where = f"{exc.span.line}:{exc.span.column}" if exc.span else "1:1"
        note(f"{path}:{where}: error: {exc.message}")
        raise typer.Exit(2) from None
    except TimeLimitReached:
        note(f"{path}: unknown: {REASON}")
        raise typer.Exit(3) from None
    except unproved as exc:
        note(f"{path}: unknown: {exc}")
        raise typer.Exit(3) from None
    except Exception as exc:  # noqa: BLE001 - the safety net: never a traceback, never exit 1
        internal_error(path, exc, "analysing the agreement")
        raise typer.Exit(4) from None


def each_file(paths: list[str], run_one, json_output: bool) -> int:
    """Run a one-file command (`run_one(path)`, which prints its answer and may
    raise typer.Exit) on every agreement the paths name; the combined exit code.

    With one file the output is the command's own. With several, text answers
    follow each other; JSON answers are gathered into `{"files": [{"path": ...,
    ...answer}]}` so the output stays one valid document."""
    from ..load import agreement_paths
    from ..load import label_of as display_path

    notes: list[str] = []
    files = agreement_paths(paths, notes)
    for text in notes:
        note(text)
    if not files:
        note("error: no `.deal` file found in " + ", ".join(f"`{p}`" for p in paths))
        return 2
    codes, documents = [], []
    for path in files:
        label = display_path(path)
        buffer = io.StringIO() if json_output and len(files) > 1 else None
        try:
            with reported(label):
                if buffer is None:
                    run_one(path)
                else:
                    with redirect_stdout(buffer):
                        run_one(path)
            code = 0
        except typer.Exit as exc:
            code = exc.exit_code
        codes.append(code)
        if buffer is not None:
            entry = {"path": label}
            answer = buffer.getvalue().strip()
            if answer:
                try:
                    entry.update(json.loads(answer))
                except ValueError:
                    entry["error"] = answer
            else:
                entry["error"] = {2: "input error", 3: "unknown", 4: "internal error"}.get(code, "no answer")
            documents.append(entry)
    if documents:
        print(json.dumps({"files": documents}, indent=2, ensure_ascii=False))
    return combined_exit(codes)


@contextmanager
def command_deadline(seconds: float | None):
    """The deadline of the whole command, active for every stage it reaches."""
    from ..deadline import Deadline, active

    deadline = Deadline(seconds)
    with active(deadline):
        yield deadline
