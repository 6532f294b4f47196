"""`ast.Document` + a place in it -> the names written there, where they are declared, words to complete.

Party, attribute and param names with their spans (`references`), the one
under the cursor (`ref_at`), its declarations (`declarations`), and the words
of the grammar for completion (`keywords`). Lines and columns count from 1,
as in the library's spans.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Iterator

from .. import ast
from ..formula import is_aggregate
from ..parse import parser


@dataclass(frozen=True)
class Ref:
    """A party, attribute or param name written somewhere in the document."""

    kind: str  # "party" | "attribute" | "param"
    name: str
    span: ast.Span
    declaration: bool = False


def declared_names(document: ast.Document) -> dict[str, str]:
    """Every declared party, attribute and param name, with its kind (first declaration wins)."""
    kinds = {}
    for stmt in document.statements:
        if isinstance(stmt, ast.PartyDecl):
            kinds.setdefault(stmt.name.name, "party")
            for attr in stmt.attributes:
                kinds.setdefault(attr.name.name, "attribute")
        elif isinstance(stmt, ast.ParamDecl):
            kinds.setdefault(stmt.name.name, "param")
    return kinds


def references(document: ast.Document) -> list[Ref]:
    """Every party, attribute and param name in the document, with its span."""
    kinds = declared_names(document)
    out: list[Ref] = []

    def ident(kind: str, node: ast.Ident | None, declaration: bool = False) -> None:
        if node is not None and node.span is not None:
            out.append(Ref(kind, node.name, node.span, declaration))

    for stmt in document.statements:
        if isinstance(stmt, ast.PartyDecl):
            ident("party", stmt.name, True)
            for attr in stmt.attributes:
                ident("attribute", attr.name, True)
        elif isinstance(stmt, ast.ParamDecl):
            ident("param", stmt.name, True)
        elif isinstance(stmt, ast.WorthEntry):
            for member in stmt.members:
                ident("party", member)
            out.extend(_expr_refs(stmt.expr, kinds))
        elif isinstance(stmt, (ast.WorthGrand, ast.WorthFormula)):
            out.extend(_expr_refs(stmt.expr, kinds))
        elif isinstance(stmt, ast.PayoutFixed):
            ident("party", stmt.party)
            out.extend(_expr_refs(stmt.expr, kinds))
        elif isinstance(stmt, (ast.PayoutAll, ast.PayoutRest)):
            ident("attribute", stmt.rule.attribute)
        elif isinstance(stmt, ast.Contingency):
            for line in stmt.lines:
                if isinstance(line, (ast.AttrRange, ast.AttrFixed)):
                    ident("attribute", line.attribute)
                    ident("party", line.party)
                elif isinstance(line, (ast.ParamRange, ast.ParamFixed)):
                    ident("param", line.param)
                elif isinstance(line, ast.WorthRange):
                    for member in line.members:
                        ident("party", member)
                elif isinstance(line, ast.Without):
                    ident("party", line.party)
    return out


def _expr_refs(expr: ast.Expr, kinds: dict[str, str], aggregated: bool = False) -> Iterator[Ref]:
    span = getattr(expr, "span", None)
    if isinstance(expr, ast.Name):
        if expr.name in kinds and span is not None:  # else the coalition variable
            yield Ref(kinds[expr.name], expr.name, span)
    elif isinstance(expr, ast.Member):
        if span is not None:  # the span covers `NAME in S`; the name comes first
            name_span = ast.Span(span.line, span.column, span.line, span.column + len(expr.item))
            yield Ref("attribute" if aggregated else "party", expr.item, name_span)
    elif isinstance(expr, ast.Call):
        for arg in expr.args:
            yield from _expr_refs(arg, kinds, is_aggregate(expr))
    else:
        for child in ast.children(expr):
            yield from _expr_refs(child, kinds)


def _contains(span: ast.Span, line: int, column: int) -> bool:
    if not span.line <= line <= span.end_line:
        return False
    if line == span.line and column < span.column:
        return False
    return not (line == span.end_line and column > span.end_column)


def ref_at(document: ast.Document, line: int, column: int) -> Ref | None:
    """The name under the cursor (1-based); the cursor just after a name counts too."""
    hits = [r for r in references(document) if _contains(r.span, line, column)]
    inside = [r for r in hits if column < r.span.end_column or r.span.end_line > line]
    return (inside or hits or [None])[0]


def declarations(document: ast.Document, ref: Ref) -> list[ast.Span]:
    """Where a name is declared: a party's or param's name on its line, or,
    for an attribute, its name on every party line that gives it a value."""
    spans = [r.span for r in references(document)
             if r.declaration and r.kind == ref.kind and r.name == ref.name]
    return spans if ref.kind == "attribute" else spans[:1]


def requirement_at(document: ast.Document, line: int) -> ast.Require | None:
    """The requirement written on a line (1-based), if any."""
    for stmt in document.statements:
        if isinstance(stmt, ast.Require) and stmt.span and stmt.span.line <= line <= stmt.span.end_line:
            return stmt
    return None


@lru_cache(maxsize=1)
def keywords() -> tuple[str, ...]:
    """The words of the grammar, plus the share kinds it matches by pattern."""
    words = {t.pattern.value for t in parser().terminals if t.pattern.type == "str"}
    words = {w for w in words if re.fullmatch(r"[A-Za-z_]\w*", w)} | {"cost", "value"}
    return tuple(sorted(words))


FUNCTIONS = ("sum", "max", "min", "count")
