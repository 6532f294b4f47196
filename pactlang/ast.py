"""Parse tree -> syntax nodes: the frozen dataclasses every later stage reads.

Each node carries a `span` that is excluded from equality, so two parses of
text that means the same compare equal (the formatter relies on this).
Numbers keep the text the user wrote (`text`, also excluded from equality)
beside their exact value.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Union


@dataclass(frozen=True, order=True)
class Span:
    """A 1-based source range; `end_column` is one past the last character."""

    line: int
    column: int
    end_line: int
    end_column: int


def _span() -> Span | None:
    return field(default=None, compare=False, repr=False, kw_only=True)


# ---------------------------------------------------------------- expressions


@dataclass(frozen=True)
class Num:
    """An exact decimal literal; `value` already includes any minus sign."""

    value: Fraction
    text: str = field(compare=False)
    span: Span | None = _span()


@dataclass(frozen=True)
class Percent:
    """`40%`: `value` is 40/100; in a payout it means that share of worth(all)."""

    value: Fraction
    text: str = field(compare=False)
    span: Span | None = _span()


@dataclass(frozen=True)
class Name:
    """A param, or the coalition variable of a `worth S` formula."""

    name: str
    span: Span | None = _span()


@dataclass(frozen=True)
class Member:
    """`PARTY in S` (1 when the party belongs to S), or, as the single argument
    of sum/max/min, `ATTR in S` (the aggregate over the members)."""

    item: str
    coalition: str
    span: Span | None = _span()


@dataclass(frozen=True)
class Call:
    """`sum(...)`, `max(...)`, `min(...)`, `count(S)`."""

    func: str
    args: tuple["Expr", ...]
    span: Span | None = _span()


@dataclass(frozen=True)
class WorthOfAll:
    """`worth(all)`, allowed in payout clauses only."""

    span: Span | None = _span()


@dataclass(frozen=True)
class Neg:
    operand: "Expr"
    span: Span | None = _span()


@dataclass(frozen=True)
class Binary:
    """A comparison `== != < <= > >=` (comparisons do not chain)."""

    op: str
    left: "Expr"
    right: "Expr"
    span: Span | None = _span()


@dataclass(frozen=True)
class Chain:
    """Operators of one precedence level applied left to right: `a + b - c`,
    `a * b / c`, `a and b and c` or `a or b or c`. `first` is the first
    operand and `rest` the (operator, operand) pairs after it.

    The parser builds a chain flat (a parenthesised chain of the same level
    at its start is merged in, as left association reads it), so a formula
    with thousands of terms is one node and no stage recurses over its length.
    """

    first: "Expr"
    rest: tuple[tuple[str, "Expr"], ...]
    span: Span | None = _span()

    @property
    def operands(self) -> tuple["Expr", ...]:
        return (self.first,) + tuple(x for _, x in self.rest)

    def prefix_span(self, k: int) -> Span | None:
        """The span of the chain up to its k-th operator's right operand
        (k counts from 0), e.g. where a division by zero is."""
        end = self.rest[k][1].span
        if self.first.span is None or end is None:
            return self.span
        return Span(self.first.span.line, self.first.span.column, end.end_line, end.end_column)


@dataclass(frozen=True)
class Not:
    operand: "Expr"
    span: Span | None = _span()


@dataclass(frozen=True)
class If:
    cond: "Expr"
    then: "Expr"
    otherwise: "Expr"
    span: Span | None = _span()


Expr = Union[Num, Percent, Name, Member, Call, WorthOfAll, Neg, Binary, Chain, Not, If]

ARITHMETIC = ("+", "-", "*", "/")
COMPARISONS = ("==", "!=", "<", "<=", ">", ">=")
LOGICAL = ("and", "or")
# operators that share a chain: one precedence level each
CHAIN_LEVELS = {"+": "+-", "-": "+-", "*": "*/", "/": "*/", "and": "and", "or": "or"}

# How deeply formulas may nest (unary minus, `not`, `if`, parentheses that
# change the reading, calls): every stage after parsing walks nesting by
# recursion, and this keeps it far inside Python's stack. Chains do not nest.
MAX_DEPTH = 100


def children(expr: "Expr") -> tuple["Expr", ...]:
    """The direct sub-expressions of an expression, left to right."""
    match expr:
        case Chain():
            return expr.operands
        case Binary(left=l, right=r):
            return (l, r)
        case Neg(operand=o) | Not(operand=o):
            return (o,)
        case If(cond=c, then=t, otherwise=o):
            return (c, t, o)
        case Call(args=args):
            return args
    return ()


def too_deep(expr: "Expr", limit: int = MAX_DEPTH) -> "Expr | None":
    """The first node nested more than `limit` levels deep, or None (iterative)."""
    stack = [(expr, 1)]
    while stack:
        node, depth = stack.pop()
        if depth > limit:
            return node
        stack.extend((c, depth + 1) for c in reversed(children(node)))
    return None


# ---------------------------------------------------------------- statements


@dataclass(frozen=True)
class Ident:
    """A name used in a statement, kept with its own span for diagnostics."""

    name: str
    span: Span | None = _span()


@dataclass(frozen=True)
class AgreementTitle:
    title: str
    span: Span | None = _span()


@dataclass(frozen=True)
class Shares:
    kind: str  # "cost" | "value"
    unit: str | None
    span: Span | None = _span()


@dataclass(frozen=True)
class Attribute:
    name: Ident
    value: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class PartyDecl:
    name: Ident
    attributes: tuple[Attribute, ...]
    span: Span | None = _span()


@dataclass(frozen=True)
class PartiesFrom:
    """`parties from "FILE.csv"`: one party per row of a CSV file beside the agreement."""

    path: str
    span: Span | None = _span()


@dataclass(frozen=True)
class RoundPayouts:
    """`round payouts to STEP by largest remainder` (Hamilton's method)."""

    step: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class ParamDecl:
    name: Ident
    value: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class WorthEntry:
    """`worth {A, B} = EXPR`."""

    members: tuple[Ident, ...]
    expr: Expr
    span: Span | None = _span()


@dataclass(frozen=True)
class WorthGrand:
    """`worth all = EXPR`."""

    expr: Expr
    span: Span | None = _span()


@dataclass(frozen=True)
class WorthFormula:
    """`worth S = EXPR`: the formula for every coalition not in the table."""

    var: Ident
    expr: Expr
    span: Span | None = _span()


@dataclass(frozen=True)
class WorthOtherwise:
    value: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class Rule:
    """A payout rule: `equal split`, `proportional to ATTR`, `shapley`,
    `nucleolus`, `separable costs remaining benefits`."""

    kind: str
    attribute: Ident | None = None
    span: Span | None = _span()


RULE_WORDS = {
    "equal": "equal split",
    "proportional": "proportional to",
    "shapley": "shapley",
    "nucleolus": "nucleolus",
    "scrb": "separable costs remaining benefits",
}


@dataclass(frozen=True)
class PayoutFixed:
    party: Ident
    expr: Expr
    span: Span | None = _span()


@dataclass(frozen=True)
class PayoutAll:
    rule: Rule
    span: Span | None = _span()


@dataclass(frozen=True)
class PayoutRest:
    rule: Rule
    span: Span | None = _span()


@dataclass(frozen=True)
class AttrRange:
    attribute: Ident
    party: Ident
    low: Num
    high: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class AttrFixed:
    attribute: Ident
    party: Ident
    value: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class ParamRange:
    param: Ident
    low: Num
    high: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class ParamFixed:
    param: Ident
    value: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class WorthRange:
    members: tuple[Ident, ...]
    low: Num
    high: Num
    span: Span | None = _span()


@dataclass(frozen=True)
class Without:
    party: Ident
    span: Span | None = _span()


ContingencyLine = Union[AttrRange, AttrFixed, ParamRange, ParamFixed, WorthRange, Without]


@dataclass(frozen=True)
class Contingency:
    name: str
    lines: tuple[ContingencyLine, ...]
    span: Span | None = _span()


@dataclass(frozen=True)
class Require:
    """`kind` is "stable" (bound None: the core), "within" (bound a Num or a
    Percent), "rational" or "budget"."""

    kind: str
    bound: Num | Percent | None = None
    span: Span | None = _span()


Statement = Union[
    AgreementTitle, Shares, PartyDecl, ParamDecl, WorthEntry, WorthGrand, WorthFormula,
    WorthOtherwise, PayoutFixed, PayoutAll, PayoutRest, Contingency, Require,
    PartiesFrom, RoundPayouts,
]


@dataclass(frozen=True)
class Document:
    """A whole `.deal` file: its statements in source order."""

    statements: tuple[Statement, ...]
    span: Span | None = _span()


def requirement_text(req: Require) -> str:
    """The requirement as written in canonical form, e.g. `stable within 2%`."""
    if req.kind == "stable":
        return "stable"
    if req.kind == "within":
        assert req.bound is not None
        return f"stable within {req.bound.text}"
    return {"rational": "individually rational", "budget": "balanced budget"}[req.kind]


def rule_text(rule: Rule) -> str:
    """The rule as written in canonical form, e.g. `proportional to calls`."""
    if rule.kind == "proportional":
        assert rule.attribute is not None
        return f"proportional to {rule.attribute.name}"
    return RULE_WORDS[rule.kind]
