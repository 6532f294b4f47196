"""Agreement text -> the same agreement in canonical layout, proven to mean the same.

The layout: statements in a canonical order (title, shares, parties, params,
worths, payouts, contingencies, requirements; relative order kept within a
kind), one blank line between kinds, runs of blank lines collapsed to one,
aligned party attributes and worth tables, one space around operators,
numbers exactly as written, short contingencies on one line. Every comment
travels with the statement it belongs to: comment lines above it stay above
it, a comment at the end of its line stays there.

Safety (after black's `assert_equivalent` / `assert_stable`): the output is
parsed again and must give the same syntax tree, numbers written the same and
the same comments attached to the same statements, and formatting the output
again must change nothing. Otherwise `FormatError` is raised and nothing is
written.

Stages: `comments` attaches comments and blank lines to statements,
`statement_order` gives the canonical order, `printer` prints each node;
this module lays the printed statements out with their comments, runs the
safety checks and handles files. The layout stays beside the checks that
re-run it, so that a fault in placing comments (`_with_comment`) or in the
layout (`render`) is caught by them; the tests inject such faults here.
"""

from __future__ import annotations

import dataclasses
import difflib
import os
import stat
from dataclasses import dataclass

from . import ast
from .atomic import write_atomic
from .comments import BlockNotes, Layout, Notes, attach, comment_shape, comment_texts, comments_by_line
from .comments import scan_comments as _scan_comments  # noqa: F401 - its old name here, still read by the tests
from .diagnostics import AgreementError, Diagnostic, error
from .load import BOM, FILE_START, Source, agreement_paths, first_newline, normalize_text, read_source
from .parse import parse_text
from .printer import Printer, table_rows
from .statement_order import canonical_order, statement_group

__all__ = [
    "BlockNotes", "FormatError", "Layout", "Notes", "Outcome", "Printer", "attach", "canonical_order",
    "comments_by_line", "expand_paths", "format_file", "format_source", "format_text", "render",
]

WIDTH = 88  # a contingency whose one-line form is longer gets one line per item
INDENT = "    "


class FormatError(Exception):
    """The formatter could not prove its output equivalent: an internal error."""


# ---------------------------------------------------------------- layout


def _with_comment(code: str, comment: str | None, column: int | None = None) -> str:
    if comment is None:
        return code
    if column is None:
        column = len(code) + 2
    return code.ljust(column) + comment


def _notes_lines(entries: list[str | None], indent: str = "") -> list[str]:
    return ["" if c is None else indent + c for c in entries]


def _table_kind(stmt, block: BlockNotes | None, printer: Printer) -> str | None:
    """Which aligned table a statement is a row of, if any."""
    if isinstance(stmt, ast.PartyDecl):
        return "party"
    if isinstance(stmt, (ast.WorthEntry, ast.WorthGrand, ast.WorthOtherwise)):
        return "worth"
    if isinstance(stmt, ast.Contingency) and _one_line(stmt, block, printer):
        return "contingency"
    return None


def _one_line(stmt: ast.Contingency, block: BlockNotes | None, printer: Printer) -> bool:
    has_comments = block is not None and (
        block.header is not None
        or any(comment_texts(n) != ((), None) for n in block.items)
        or block.dangling.leading
    )
    return not has_comments and len(printer.fmt(stmt)) <= WIDTH


def _aligned_comments(codes: list[str], comments: list[str | None]) -> list[str]:
    """Rows of a table with their end-of-line comments in one column."""
    commented = [len(c) for c, t in zip(codes, comments) if t is not None]
    column = max(commented) + 2 if commented else None
    return [_with_comment(c, t, column) for c, t in zip(codes, comments)]


def _block_lines(stmt: ast.Contingency, block: BlockNotes | None, trailing: str | None,
                 printer: Printer) -> list[str]:
    """A contingency with one line per item."""
    block = block or BlockNotes(items=[Notes() for _ in stmt.lines])
    out = [_with_comment(f"{printer.contingency_head(stmt)} {{", block.header)]
    codes = [printer.fmt(item) for item in stmt.lines]
    rows = _aligned_comments(codes, [n.trailing for n in block.items])
    for k, (notes, row) in enumerate(zip(block.items, rows)):
        if notes.blank_before and k > 0:
            out.append("")
        out.extend(_notes_lines(notes.leading, INDENT))
        out.append(INDENT + row)
    if block.dangling.leading:
        if block.dangling.blank_before and stmt.lines:
            out.append("")
        out.extend(_notes_lines(block.dangling.leading, INDENT))
    out.append(_with_comment("}", trailing))
    return out


def render(doc: ast.Document, layout: Layout, order: list[int], printer: Printer | None = None) -> list[str]:
    """The canonical lines of `doc` with its comments, statements in `order`."""
    printer = printer or Printer()
    stmts = [doc.statements[i] for i in order]
    notes = [layout.statements[i] for i in order]
    blocks = [layout.blocks.get(i) for i in order]

    # a blank line between kinds; within a kind, where the source had one
    blank = [False] * len(stmts)
    for k in range(1, len(stmts)):
        if statement_group(stmts[k]) != statement_group(stmts[k - 1]):
            blank[k] = True
        elif notes[k].blank_before:
            source_prev = doc.statements[order[k] - 1] if order[k] > 0 else None
            same_kind = source_prev is not None and statement_group(source_prev) == statement_group(stmts[k])
            blank[k] = same_kind or any(c is not None for c in notes[k].leading)

    # single-line code of each statement, aligned within runs of table rows
    kinds = [_table_kind(s, b, printer) for s, b in zip(stmts, blocks)]
    lines_of: list[list[str] | None] = [None] * len(stmts)
    k = 0
    while k < len(stmts):
        end = k + 1
        if kinds[k] is not None:
            while end < len(stmts) and kinds[end] == kinds[k] and not blank[end]:
                end += 1
            run = list(range(k, end))
            rows = table_rows(kinds[k], [stmts[j] for j in run], printer)
            rows = _aligned_comments(rows, [notes[j].trailing for j in run])
            for j, row in zip(run, rows):
                lines_of[j] = [row]
        elif isinstance(stmts[k], ast.Contingency):
            lines_of[k] = _block_lines(stmts[k], blocks[k], notes[k].trailing, printer)
        else:
            lines_of[k] = [_with_comment(printer.fmt(stmts[k]), notes[k].trailing)]
        k = end

    out: list[str] = []
    for k in range(len(stmts)):
        if blank[k]:
            out.append("")
        out.extend(_notes_lines(notes[k].leading))
        out.extend(lines_of[k])
    if layout.tail.leading:
        if out and layout.tail.blank_before:
            out.append("")
        out.extend(_notes_lines(layout.tail.leading))
    return out


# ---------------------------------------------------------------- safety


def _shape(node):
    """A comparable picture of a syntax tree: every field but spans, with the
    text of numbers included (ast equality ignores it; the formatter must not)."""
    if isinstance(node, tuple):
        return tuple(_shape(n) for n in node)
    if dataclasses.is_dataclass(node):
        return (type(node).__name__,) + tuple(
            _shape(getattr(node, f.name)) for f in dataclasses.fields(node) if f.name != "span")
    return node


def _newline(source: str) -> str:
    first = source.find("\n")
    return "\r\n" if first > 0 and source[first - 1] == "\r" else "\n"


def _layout_text(source: str) -> tuple[str, ast.Document, Layout, list[int], str]:
    doc = parse_text(source)
    normal = source if source.endswith("\n") else source + "\n"
    layout = attach(doc, normal)
    order = canonical_order(doc)
    lines = render(doc, layout, order)
    newline = _newline(source)
    text = newline.join(lines) + newline if lines else ""
    return text, doc, layout, order, newline


def format_text(source: str) -> str:
    """Canonical text of an agreement.

    Raises `AgreementError` when the source does not parse and `FormatError`
    when the result cannot be proven to mean the same (a bug; nothing should
    then be written).
    """
    text, doc, layout, order, _ = _layout_text(source)
    try:
        again, doc2, layout2, order2, _ = _layout_text(text)
    except AgreementError as exc:
        raise FormatError(f"the formatted text does not parse: {exc}") from None
    expected = tuple(doc.statements[i] for i in order)
    if doc2.statements != expected or _shape(doc2.statements) != _shape(expected):
        raise FormatError("the formatted text does not mean the same as the original")
    if comment_shape(layout2, order2) != comment_shape(layout, order):
        raise FormatError("a comment moved away from its statement")
    if again != text:
        raise FormatError("formatting the formatted text changes it again")
    return text


# ---------------------------------------------------------------- files


@dataclass(frozen=True)
class Outcome:
    """What formatting one file found: `status` is "unchanged", "changed"
    (written unless only checking), or "error" with diagnostics."""

    path: str
    status: str
    original: str | None = None
    formatted: str | None = None
    diagnostics: tuple[Diagnostic, ...] = ()
    internal: str | None = None  # the FormatError message, when the formatter failed

    def diff(self, label: str) -> str:
        """A unified diff from the original to the formatted text."""
        if self.original is None or self.formatted is None:
            return ""
        return "".join(difflib.unified_diff(
            self.original.splitlines(keepends=True), self.formatted.splitlines(keepends=True),
            fromfile=f"a/{label}", tofile=f"b/{label}"))


def format_source(path: str, source: str, original: Source | None = None) -> Outcome:
    """Format text that came from `path` (nothing is written). With `original`
    (the decoded file), `source` is its LF text and the result is written back
    in the file's own line ending and byte-order mark."""
    if original is None:
        original = Source(normalize_text(source), first_newline(source), source.startswith(BOM))
        source_text = source
    else:
        source_text = original.restore(original.text)
    try:
        formatted = original.restore(format_text(original.text))
    except AgreementError as exc:
        return Outcome(path, "error", source_text, diagnostics=tuple(exc.diagnostics))
    except FormatError as exc:
        return Outcome(path, "error", source_text, internal=str(exc))
    return Outcome(path, "unchanged" if formatted == source_text else "changed", source_text, formatted)


def _refusal(path: str, message: str, help: str | None = None) -> Outcome:
    return Outcome(path, "error", diagnostics=(error("not-written", message, FILE_START, help),))


def writable_problem(path: str) -> Outcome | None:
    """Why a file must not be rewritten in place, as an outcome, or None.

    Read-only files are refused as editors do (even for root, who could);
    a file with other hard links is refused, since replacing it would split
    it from its other names and writing into it is not atomic."""
    try:
        info = os.stat(path)
    except OSError as exc:
        return _refusal(path, f"cannot read the file's permissions: {exc.strerror or exc}")
    if not info.st_mode & (stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH) or not os.access(path, os.W_OK):
        return _refusal(path, "the file is read-only, so it was not reformatted",
                        help="make it writable first, or see the changes with `pactlang fmt --diff`")
    if info.st_nlink > 1:
        return _refusal(path, f"the file has {info.st_nlink} hard links, so it was not reformatted "
                        "(replacing it would separate it from its other names)",
                        help="see the changes with `pactlang fmt --diff`, or format a copy")
    return None


def format_file(path: str, write: bool = True) -> Outcome:
    """Format one file in place (atomically, keeping its permissions and owner)
    when `write` and it changes; a file that does not parse is never touched,
    nor one that is read-only or has other hard links. Never raises for a
    file that cannot be read or written: that is the outcome."""
    try:
        original = read_source(path)
    except AgreementError as exc:
        return Outcome(path, "error", diagnostics=tuple(exc.diagnostics))
    outcome = format_source(path, original.text, original)
    if write and outcome.status == "changed":
        problem = writable_problem(path)
        if problem is not None:
            return dataclasses.replace(problem, original=outcome.original)
        try:
            write_atomic(path, outcome.formatted.encode("utf-8"))
        except OSError as exc:
            return _refusal(path, f"cannot write the file: {exc.strerror or exc}")
    return outcome


def expand_paths(paths: list[str], notes: list[str] | None = None) -> list[str]:
    """Files as given; a directory stands for every `.deal` file below it
    (links to missing files skipped, each with a line in `notes`)."""
    return agreement_paths(paths, notes)
