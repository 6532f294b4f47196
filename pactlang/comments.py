"""Agreement text + its syntax tree -> `Layout`: every comment and blank line attached to a statement.

Comment lines above a statement belong to it, a comment at the end of its
line stays there; inside a multi-line contingency the same holds for each
item, plus a comment after `{` and comment lines before `}`. The formatter
puts them back from the `Layout`, and its safety check compares
`comment_shape` before and after.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lark.exceptions import LarkError

from . import ast
from .parse import parser


@dataclass
class Notes:
    """Comments and blank lines that travel with one statement or block item.

    `leading` holds the comment lines above it, `None` marking a blank line
    between them; `blank_before` says a blank line separated it (or its
    comments) from what came before.
    """

    leading: list[str | None] = field(default_factory=list)
    trailing: str | None = None
    blank_before: bool = False


@dataclass
class BlockNotes:
    """Comments inside a multi-line contingency block."""

    header: str | None = None  # after `{` on the first line
    items: list[Notes] = field(default_factory=list)
    dangling: Notes = field(default_factory=Notes)  # comment lines before `}`


@dataclass
class Layout:
    """The comments and blank lines of one file, attached to its statements."""

    statements: list[Notes]
    blocks: dict[int, BlockNotes]
    tail: Notes  # comment lines after the last statement


def comments_by_line(source: str) -> dict[int, tuple[int, str]]:
    """Line -> (column, text) of each comment, from the grammar's own lexer
    (so a `#` inside a string is never taken for a comment)."""
    try:
        tokens = [t for t in parser().lex(source, dont_ignore=True) if t.type == "COMMENT"]
        return {t.line: (t.column, str(t).rstrip()) for t in tokens}
    except LarkError:  # pragma: no cover - the text parsed, so it lexes; keep a scanner anyway
        return scan_comments(source)


def scan_comments(source: str) -> dict[int, tuple[int, str]]:
    """The same as `comments_by_line`, by a plain scan that skips strings
    (the fallback should the lexer refuse the text)."""
    found = {}
    for number, line in enumerate(source.split("\n"), 1):
        in_string, i = False, 0
        while i < len(line):
            ch = line[i]
            if in_string and ch == "\\":
                i += 2
                continue
            if ch == '"':
                in_string = not in_string
            elif ch == "#" and not in_string:
                found[number] = (i + 1, line[i:].rstrip())
                break
            i += 1
    return found


def _gap(lines: list[str], comments, first: int, last: int) -> Notes:
    """The comment and blank lines `first..last` (1-based, inclusive); other
    lines there hold only separators (a stray `;` in a block)."""
    entries: list[str | None] = []
    for number in range(first, last + 1):
        if number in comments:
            entries.append(comments[number][1])
        elif not lines[number - 1].strip() and (not entries or entries[-1] is not None):
            entries.append(None)
    blank_before = bool(entries) and entries[0] is None
    while entries and entries[0] is None:
        entries.pop(0)
    return Notes(entries, None, blank_before)


def attach(doc: ast.Document, source: str) -> Layout:
    """Attach every comment and blank line of `source` to a statement of `doc`."""
    lines = source.split("\n")
    comments = comments_by_line(source)
    statements, blocks = [], {}
    prev_end = 0
    for index, stmt in enumerate(doc.statements):
        span = stmt.span
        notes = _gap(lines, comments, prev_end + 1, span.line - 1)
        if span.end_line in comments:
            notes.trailing = comments[span.end_line][1]
        if isinstance(stmt, ast.Contingency) and span.end_line > span.line:
            blocks[index] = _attach_block(stmt, lines, comments)
        statements.append(notes)
        prev_end = span.end_line
    tail = _gap(lines, comments, prev_end + 1, len(lines))
    while tail.leading and tail.leading[-1] is None:
        tail.leading.pop()
    return Layout(statements, blocks, tail)


def _attach_block(stmt: ast.Contingency, lines, comments) -> BlockNotes:
    first, last = stmt.span.line, stmt.span.end_line
    block = BlockNotes()
    ends = [item.span.end_line for item in stmt.lines]
    if first in comments and first not in ends:
        block.header = comments[first][1]
    prev = first
    for k, item in enumerate(stmt.lines):
        line = item.span.line
        notes = _gap(lines, comments, prev + 1, line - 1) if line > prev else Notes()
        last_on_line = k + 1 == len(stmt.lines) or stmt.lines[k + 1].span.line != item.span.end_line
        if last_on_line and item.span.end_line != last and item.span.end_line in comments:
            notes.trailing = comments[item.span.end_line][1]
        block.items.append(notes)
        prev = max(prev, item.span.end_line)
    block.dangling = _gap(lines, comments, prev + 1, last - 1)
    return block


def comment_texts(notes: Notes) -> tuple:
    """The comments of one statement or item, without the blank lines between them."""
    return (tuple(c for c in notes.leading if c is not None), notes.trailing)


def comment_shape(layout: Layout, order: list[int]) -> list:
    """Which comment belongs where, in output order: what the safety check compares."""
    shape = []
    for index in order:
        block = layout.blocks.get(index)
        inner = None
        if block is not None:
            inner = (block.header, tuple(comment_texts(n) for n in block.items), comment_texts(block.dangling))
            if inner == (None, tuple(((), None) for _ in block.items), ((), None)):
                inner = None  # a block without comments may go on one line
        shape.append((comment_texts(layout.statements[index]), inner))
    shape.append(comment_texts(layout.tail))
    return shape
