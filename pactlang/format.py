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
"""

from __future__ import annotations

import dataclasses
import difflib
import os
import re
import stat
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

from lark.exceptions import LarkError

from . import ast
from .atomic import write_atomic
from .diagnostics import AgreementError, Diagnostic
from .load import read_text
from .parse import parse_text, parser, quote

WIDTH = 88  # a contingency whose one-line form is longer gets one line per item
INDENT = "    "


class FormatError(Exception):
    """The formatter could not prove its output equivalent: an internal error."""


# ---------------------------------------------------------------- comments


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
        return _scan_comments(source)


def _scan_comments(source: str) -> dict[int, tuple[int, str]]:
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


def _comment_texts(notes: Notes) -> tuple:
    return (tuple(c for c in notes.leading if c is not None), notes.trailing)


def _comment_shape(layout: Layout, order: list[int]) -> list:
    """Which comment belongs where, in output order: what the safety check compares."""
    shape = []
    for index in order:
        block = layout.blocks.get(index)
        inner = None
        if block is not None:
            inner = (block.header, tuple(_comment_texts(n) for n in block.items), _comment_texts(block.dangling))
            if inner == (None, tuple(((), None) for _ in block.items), ((), None)):
                inner = None  # a block without comments may go on one line
        shape.append((_comment_texts(layout.statements[index]), inner))
    shape.append(_comment_texts(layout.tail))
    return shape


# ---------------------------------------------------------------- order

_RANK = {
    ast.AgreementTitle: 0, ast.Shares: 1, ast.PartyDecl: 2, ast.ParamDecl: 3,
    ast.WorthEntry: 4, ast.WorthGrand: 4, ast.WorthFormula: 4, ast.WorthOtherwise: 4,
    ast.PayoutFixed: 5, ast.PayoutAll: 5, ast.PayoutRest: 5, ast.Contingency: 6, ast.Require: 7,
}


def _group(stmt) -> int:
    """Kinds separated by a blank line; the title and `shares` form one header."""
    rank = _RANK[type(stmt)]
    return 0 if rank == 1 else rank


def canonical_order(doc: ast.Document) -> list[int]:
    """Statement indices in canonical order.

    Declarations are order-free, with one exception the resolver enforces:
    the title must come first. A file that does not start with its title is
    left in source order so that its error stays where the user put it.
    """
    stmts = doc.statements
    if not stmts or not isinstance(stmts[0], ast.AgreementTitle):
        return list(range(len(stmts)))
    return sorted(range(len(stmts)), key=lambda i: (_RANK[type(stmts[i])], i))


# ---------------------------------------------------------------- expressions

_PREC = {"or": 1, "and": 2, "==": 4, "!=": 4, "<": 4, "<=": 4, ">": 4, ">=": 4,
         "+": 5, "-": 5, "*": 6, "/": 6}
_ATOM = 8


def _snake(name: str) -> str:
    return re.sub(r"(?<!^)(?=[A-Z])", "_", name).lower()


@lru_cache(maxsize=1)
def _keywords() -> frozenset[str]:
    words = {t.pattern.value for t in parser().terminals if t.pattern.type == "str"}
    return frozenset(w for w in words if re.fullmatch(r"[A-Za-z_]\w*", w)) | {"cost", "value"}


class Printer:
    """Syntax nodes -> text, one `_fmt_<kind>` method per node kind."""

    def __init__(self) -> None:
        self.keywords = _keywords()

    def fmt(self, node) -> str:
        return getattr(self, "_fmt_" + _snake(type(node).__name__))(node)

    # ------------------------------------------------------ expressions
    @staticmethod
    def prec(node) -> int:
        if isinstance(node, ast.If):
            return 0
        if isinstance(node, ast.Not):
            return 3
        if isinstance(node, ast.Binary):
            return _PREC[node.op]
        if isinstance(node, ast.Neg):
            return 7
        return _ATOM

    def sub(self, node, minimum: int, arithmetic: bool = False) -> str:
        """A child expression, in parentheses when it binds more loosely than
        its place needs; `PARTY in S` inside arithmetic is parenthesised too,
        for the reader (the grammar does not need it)."""
        text = self.fmt(node)
        if self.prec(node) < minimum or (arithmetic and isinstance(node, ast.Member)):
            return f"({text})"
        return text

    def _fmt_num(self, node: ast.Num) -> str:
        return node.text

    def _fmt_percent(self, node: ast.Percent) -> str:
        return node.text

    def _fmt_name(self, node: ast.Name) -> str:
        return node.name

    def _fmt_member(self, node: ast.Member) -> str:
        return f"{node.item} in {node.coalition}"

    def _fmt_call(self, node: ast.Call) -> str:
        return f"{node.func}({', '.join(self.fmt(a) for a in node.args)})"

    def _fmt_worth_of_all(self, node: ast.WorthOfAll) -> str:
        return "worth(all)"

    def _fmt_neg(self, node: ast.Neg) -> str:
        operand = self.sub(node.operand, _ATOM if isinstance(node.operand, ast.Neg) else 7, arithmetic=True)
        return "-" + operand

    def _fmt_not(self, node: ast.Not) -> str:
        return "not " + self.sub(node.operand, 3)

    def _fmt_binary(self, node: ast.Binary) -> str:
        p = _PREC[node.op]
        arithmetic = p >= 4
        if p == 4:  # comparisons do not chain
            left, right = self.sub(node.left, 5, arithmetic), self.sub(node.right, 5, arithmetic)
        else:  # left-associative
            left, right = self.sub(node.left, p, arithmetic), self.sub(node.right, p + 1, arithmetic)
        return f"{left} {node.op} {right}"

    def _fmt_if(self, node: ast.If) -> str:
        # a nested `if` is bracketed in the condition and `then` part, where it
        # would otherwise read ambiguously; an `else if` chain stays flat
        cond = self.sub(node.cond, 1)
        then = self.sub(node.then, 1)
        return f"if {cond} then {then} else {self.fmt(node.otherwise)}"

    # ------------------------------------------------------ statements
    def _fmt_agreement_title(self, node: ast.AgreementTitle) -> str:
        return f"agreement {quote(node.title)}"

    def _fmt_shares(self, node: ast.Shares) -> str:
        if node.unit is None:
            return f"shares {node.kind}"
        bare = re.fullmatch(r"[A-Za-z_]\w*", node.unit) and node.unit not in self.keywords
        return f"shares {node.kind} in {node.unit if bare else quote(node.unit)}"

    def _fmt_attribute(self, node: ast.Attribute) -> str:
        return f"{node.name.name} {node.value.text}"

    def _fmt_party_decl(self, node: ast.PartyDecl) -> str:
        if not node.attributes:
            return f"party {node.name.name}"
        return f"party {node.name.name}: " + ", ".join(self.fmt(a) for a in node.attributes)

    def _fmt_param_decl(self, node: ast.ParamDecl) -> str:
        return f"param {node.name.name} = {node.value.text}"

    def worth_head(self, node) -> str:
        """The left of a worth line: `worth {a, b}`, `worth all`, ..."""
        if isinstance(node, ast.WorthEntry):
            return "worth {" + ", ".join(m.name for m in node.members) + "}"
        if isinstance(node, ast.WorthGrand):
            return "worth all"
        if isinstance(node, ast.WorthFormula):
            return f"worth {node.var.name}"
        return "worth otherwise"

    def worth_body(self, node) -> str:
        return node.value.text if isinstance(node, ast.WorthOtherwise) else self.fmt(node.expr)

    def _fmt_worth_entry(self, node) -> str:
        return f"{self.worth_head(node)} = {self.worth_body(node)}"

    _fmt_worth_grand = _fmt_worth_formula = _fmt_worth_otherwise = _fmt_worth_entry

    def _fmt_rule(self, node: ast.Rule) -> str:
        return ast.rule_text(node)

    def _fmt_payout_fixed(self, node: ast.PayoutFixed) -> str:
        return f"payout {node.party.name} = {self.fmt(node.expr)}"

    def _fmt_payout_all(self, node: ast.PayoutAll) -> str:
        return f"payout by {self.fmt(node.rule)}"

    def _fmt_payout_rest(self, node: ast.PayoutRest) -> str:
        return f"payout rest by {self.fmt(node.rule)}"

    def _fmt_require(self, node: ast.Require) -> str:
        return "require " + ast.requirement_text(node)

    def contingency_head(self, node: ast.Contingency) -> str:
        return f"contingency {quote(node.name)}"

    def contingency_body(self, node: ast.Contingency) -> str:
        """The one-line body: `{ a; b }`, or `{}` when empty."""
        if not node.lines:
            return "{}"
        return "{ " + "; ".join(self.fmt(line) for line in node.lines) + " }"

    def _fmt_contingency(self, node: ast.Contingency) -> str:
        return f"{self.contingency_head(node)} {self.contingency_body(node)}"

    def _fmt_attr_range(self, node: ast.AttrRange) -> str:
        return f"{node.attribute.name} of {node.party.name} in {node.low.text} .. {node.high.text}"

    def _fmt_attr_fixed(self, node: ast.AttrFixed) -> str:
        return f"{node.attribute.name} of {node.party.name} = {node.value.text}"

    def _fmt_param_range(self, node: ast.ParamRange) -> str:
        return f"{node.param.name} in {node.low.text} .. {node.high.text}"

    def _fmt_param_fixed(self, node: ast.ParamFixed) -> str:
        return f"{node.param.name} = {node.value.text}"

    def _fmt_worth_range(self, node: ast.WorthRange) -> str:
        members = ", ".join(m.name for m in node.members)
        return f"worth {{{members}}} in {node.low.text} .. {node.high.text}"

    def _fmt_without(self, node: ast.Without) -> str:
        return f"without {node.party.name}"


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
        or any(_comment_texts(n) != ((), None) for n in block.items)
        or block.dangling.leading
    )
    return not has_comments and len(printer.fmt(stmt)) <= WIDTH


def _party_rows(stmts: list[ast.PartyDecl], printer: Printer) -> list[str]:
    """Party lines with the attributes starting in one column; the values of
    parties that list the same attributes in the same order are right-aligned
    in columns."""
    with_attrs = [s for s in stmts if s.attributes]
    name_width = max((len(s.name.name) for s in with_attrs), default=0)
    shape = lambda s: tuple(a.name.name for a in s.attributes)  # noqa: E731
    widths: dict[tuple, list[int]] = {}
    for s in with_attrs:
        texts = [a.value.text for a in s.attributes]
        old = widths.get(shape(s), [0] * len(texts))
        widths[shape(s)] = [max(w, len(t)) for w, t in zip(old, texts)]
    rows = []
    for s in stmts:
        if not s.attributes:
            rows.append(printer.fmt(s))
            continue
        cells = [f"{a.name.name} {a.value.text.rjust(w)}" for a, w in zip(s.attributes, widths[shape(s)])]
        head = f"party {s.name.name}:".ljust(len("party ") + name_width + 1)
        rows.append(head + " " + ", ".join(cells))
    return rows


def _rows(kind: str, stmts: list, printer: Printer) -> list[str]:
    if kind == "party":
        return _party_rows(stmts, printer)
    if kind == "worth":
        heads = [printer.worth_head(s) for s in stmts]
        width = max(len(h) for h in heads)
        return [f"{h.ljust(width)} = {printer.worth_body(s)}" for h, s in zip(heads, stmts)]
    heads = [printer.contingency_head(s) for s in stmts]
    width = max(len(h) for h in heads)
    return [f"{h.ljust(width)} {printer.contingency_body(s)}" for h, s in zip(heads, stmts)]


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
        if _group(stmts[k]) != _group(stmts[k - 1]):
            blank[k] = True
        elif notes[k].blank_before:
            source_prev = doc.statements[order[k] - 1] if order[k] > 0 else None
            same_kind = source_prev is not None and _group(source_prev) == _group(stmts[k])
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
            rows = _rows(kinds[k], [stmts[j] for j in run], printer)
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
    if _comment_shape(layout2, order2) != _comment_shape(layout, order):
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


def format_source(path: str, source: str) -> Outcome:
    """Format text that came from `path` (nothing is written)."""
    try:
        formatted = format_text(source)
    except AgreementError as exc:
        return Outcome(path, "error", source, diagnostics=tuple(exc.diagnostics))
    except FormatError as exc:
        return Outcome(path, "error", source, internal=str(exc))
    return Outcome(path, "unchanged" if formatted == source else "changed", source, formatted)


def format_file(path: str, write: bool = True) -> Outcome:
    """Format one file in place (atomically, keeping its permissions) when
    `write` and it changes; a file that does not parse is never touched."""
    try:
        source = read_text(path)
    except AgreementError as exc:
        return Outcome(path, "error", diagnostics=tuple(exc.diagnostics))
    outcome = format_source(path, source)
    if write and outcome.status == "changed":
        write_atomic(path, outcome.formatted.encode("utf-8"))
    return outcome


def expand_paths(paths: list[str]) -> list[str]:
    """Files as given; a directory stands for every `.deal` file below it."""
    out = []
    for p in paths:
        if p != "-" and os.path.isdir(p):
            out.extend(sorted(str(f) for f in Path(p).rglob("*.deal") if stat.S_ISREG(f.stat().st_mode)))
        else:
            out.append(p)
    return out
