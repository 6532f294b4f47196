"""One module per subcommand; each defines `register(app)`."""

from __future__ import annotations

from contextlib import contextmanager

import typer


@contextmanager
def reported(path: str):
    """Turn the library's errors into messages and exit codes: wrong input
    (`FILE:LINE:COL: ...`) exits 2, an answer that cannot be proved exits 3."""
    from ..diagnostics import AgreementError
    from ..formula import EvaluationError
    from ..solutions import SolverError
    from ..solve import TooLarge

    try:
        yield
    except AgreementError as exc:
        for d in exc.diagnostics:
            print(d.render(path))
        raise typer.Exit(2) from None
    except EvaluationError as exc:
        where = f"{exc.span.line}:{exc.span.column}" if exc.span else "1:1"
        print(f"{path}:{where}: error: {exc.message}")
        raise typer.Exit(2) from None
    except (TooLarge, SolverError) as exc:
        print(f"{path}: unknown: {exc}")
        raise typer.Exit(3) from None
