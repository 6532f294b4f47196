"""`pactlang fmt FILE... [--check] [--diff]` -> files in canonical layout, and the exit code.

Exit codes: 0 nothing to do or all written; 1 `--check` found a file that
would change; 2 a file is missing, does not parse, or the formatter could not
prove its output equivalent (then nothing is written). `-` reads standard
input and writes the result to standard output.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from typing import List

import typer

from ..results import EXIT_FAILS, EXIT_INPUT, EXIT_OK

STDIN = "-"


@dataclass(frozen=True)
class FmtOptions:
    check: bool = False
    diff: bool = False

    @property
    def write(self) -> bool:
        return not (self.check or self.diff)


def _paint(text: str, code: str, colour: bool) -> str:
    return f"\x1b[{code}m{text}\x1b[0m" if colour else text


def _files(n: int) -> str:
    return f"{n} file{'s' if n != 1 else ''}"


def run_fmt(paths: list[str], options: FmtOptions, out=None, err=None) -> int:
    """Format the files and print what happened; returns the exit code."""
    from ..format import expand_paths, format_file, format_source
    from ..render_text import use_colour
    from ..run import display_path

    out = out or sys.stdout
    err = err or sys.stderr
    colour = use_colour(err)
    changed = unchanged = failed = 0
    for path in expand_paths(paths):
        if path == STDIN:
            label = "<stdin>"
            outcome = format_source(label, sys.stdin.read())
        else:
            label = display_path(path)
            outcome = format_file(path, write=options.write)
        if outcome.status == "error":
            failed += 1
            for d in outcome.diagnostics:
                print(_paint(d.render(label), "31", colour), file=err)
            if outcome.internal:
                print(_paint(f"{label}: error: the layout pass went wrong, so the file was left as it was: "
                             f"{outcome.internal}", "31", colour), file=err)
                print("  help: please report this with the file attached", file=err)
            if path == STDIN and outcome.original is not None and options.write:
                out.write(outcome.original)  # a filter must not swallow its input
            continue
        if outcome.status == "unchanged":
            unchanged += 1
        else:
            changed += 1
        if options.diff and outcome.status == "changed":
            out.write(outcome.diff(label))
        if path == STDIN and options.write:
            out.write(outcome.formatted)  # a filter: the result goes to standard output
        elif outcome.status == "changed" and not options.diff:
            what = "layout would change" if options.check else "rewritten in canonical layout"
            print(_paint(f"{label}: {what}", "1", colour), file=err)
    parts = [f"{changed} {'to rewrite' if not options.write else 'rewritten'}"] if changed else []
    if unchanged or not (changed or failed):
        parts.append(f"{unchanged} already in canonical layout")
    if failed:
        parts.append(_paint(f"{failed} left untouched (errors above)", "31", colour))
    print(f"{_files(changed + unchanged + failed)}: " + ", ".join(parts), file=err)
    if failed:
        return EXIT_INPUT
    if options.check and changed:
        return EXIT_FAILS
    return EXIT_OK


def fmt(
    files: List[str] = typer.Argument(..., help="Agreement files or directories; `-` reads standard input."),
    check: bool = typer.Option(False, "--check", help="Change nothing; exit 1 if a file would change."),
    diff: bool = typer.Option(False, "--diff", help="Change nothing; print a unified diff of the changes."),
) -> None:
    """Rewrite agreements in the canonical layout (comments and meaning kept)."""
    raise typer.Exit(run_fmt(files, FmtOptions(check=check, diff=diff)))


def register(app: typer.Typer) -> None:
    app.command("fmt")(fmt)
