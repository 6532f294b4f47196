"""`pactlang fmt FILE... [--check] [--diff]` -> files in canonical layout, and the exit code.

Exit codes: 0 nothing to do or all written; 1 `--check` found a file that
would change; 2 a file is missing, does not parse, or cannot be rewritten
(read-only, other hard links, not writable); 4 the formatter failed (it
could not prove its output equivalent, or crashed): then nothing is written.
Each file gets its own result and the others go on. `-` reads standard input
(as bytes, decoded like a file) and writes the result to standard output.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from typing import List

import typer

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


def _emit(out, text: str) -> None:
    """Agreement text to `out` as UTF-8 (as it was read), whatever the locale's encoding."""
    buffer = getattr(out, "buffer", None)
    if buffer is None:
        out.write(text)
        return
    out.flush()
    buffer.write(text.encode("utf-8"))
    buffer.flush()


def _format_one(path: str, label: str, options: FmtOptions):
    from ..diagnostics import AgreementError
    from ..format import Outcome, format_file, format_source
    from ..load import read_source

    if path != STDIN:
        return format_file(path, write=options.write)
    try:
        original = read_source(STDIN)
    except AgreementError as exc:
        return Outcome(label, "error", diagnostics=tuple(exc.diagnostics))
    return format_source(label, original.text, original)


def run_fmt(paths: list[str], options: FmtOptions, out=None, err=None) -> int:
    """Format the files and print what happened; returns the exit code."""
    from ..format import expand_paths
    from ..render_text import use_colour
    from ..results import EXIT_FAILS, EXIT_INPUT, EXIT_OK
    from ..failures import EXIT_INTERNAL, REPORT_HELP
    from ..load import label_of as display_path

    out = out or sys.stdout
    err = err or sys.stderr
    colour = use_colour(err)
    changed = unchanged = failed = internal = 0
    notes: list[str] = []
    files = expand_paths(paths, notes)
    for text in notes:
        print(text, file=err)
    for path in files:
        label = "<stdin>" if path == STDIN else display_path(path)
        try:
            outcome = _format_one(path, label, options)
        except Exception as exc:  # noqa: BLE001 - one file's crash is reported; the others go on
            from ..format import Outcome
            from ..failures import internal_reason

            outcome = Outcome(path, "error", internal=f"the formatter crashed: {internal_reason(exc)}")
        if outcome.status == "error":
            failed += 1
            for d in outcome.diagnostics:
                print(_paint(d.render(label), "31", colour), file=err)
            if outcome.internal:
                internal += 1
                print(_paint(f"{label}: error: the layout pass went wrong, so the file was left as it was: "
                             f"{outcome.internal}", "31", colour), file=err)
                print(f"  help: {REPORT_HELP}", file=err)
            if path == STDIN and outcome.original is not None and options.write:
                _emit(out, outcome.original)  # a filter must not swallow its input
            continue
        if outcome.status == "unchanged":
            unchanged += 1
        else:
            changed += 1
        if options.diff and outcome.status == "changed":
            _emit(out, outcome.diff(label))
        if path == STDIN and options.write:
            _emit(out, outcome.formatted)  # a filter: the result goes to standard output
        elif outcome.status == "changed" and not options.diff:
            what = "layout would change" if options.check else "rewritten in canonical layout"
            print(_paint(f"{label}: {what}", "1", colour), file=err)
    parts = [f"{changed} {'to rewrite' if not options.write else 'rewritten'}"] if changed else []
    if unchanged or not (changed or failed):
        parts.append(f"{unchanged} already in canonical layout")
    if failed:
        parts.append(_paint(f"{failed} left untouched (errors above)", "31", colour))
    print(f"{_files(changed + unchanged + failed)}: " + ", ".join(parts), file=err)
    if internal:
        return EXIT_INTERNAL
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
