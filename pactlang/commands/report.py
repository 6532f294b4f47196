"""`pactlang report FILE [-o report.html]` -> one self-contained HTML page for the people at the table."""

from __future__ import annotations

import sys

import typer


def report(
    file: str = typer.Argument(..., help="Agreement file (.deal)."),
    output: str = typer.Option("report.html", "-o", "--output", help="Where to write the page; `-` for standard output."),
    digits: int = typer.Option(None, "--digits", min=0, max=12, help="Decimals of amounts (default: enough to tell a table's numbers apart)."),
    exact: bool = typer.Option(False, "--exact", help="Exact amounts (fractions)."),
    full: bool = typer.Option(False, "--full", help="List every member of large coalitions."),
    time_limit: float = typer.Option(None, "--time-limit", help="Seconds per requirement before `unknown`."),
) -> None:
    """Write an HTML report: findings in plain words, tables, charts and the agreement text."""
    from ..report.html import ReportInputError, build_report
    from ..report.tables import RenderOptions

    try:
        page = build_report(file, RenderOptions(digits=digits, exact=exact, full=full, time_limit=time_limit))
    except ReportInputError as exc:
        for d in exc.report.diagnostics:
            print(d.render(exc.report.path), file=sys.stderr)
        raise typer.Exit(2) from None
    if output == "-":
        sys.stdout.write(page)
        return
    from ..atomic import write_atomic

    try:
        write_atomic(output, page.encode("utf-8"))
    except OSError as exc:
        print(f"{output}: error: cannot write the report: {exc.strerror}", file=sys.stderr)
        raise typer.Exit(2) from None
    print(f"wrote {output}", file=sys.stderr)


def register(app: typer.Typer) -> None:
    app.command("report")(report)
