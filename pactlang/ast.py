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
    """Arithmetic `+ - * /`, comparisons `== != < <= > >=` and `and`/`or`."""

    op: str
    left: "Expr"
    right: "Expr"
    span: Span | None = _span()


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


Expr = Union[Num, Percent, Name, Member, Call, WorthOfAll, Neg, Binary, Not, If]

ARITHMETIC = ("+", "-", "*", "/")
COMPARISONS = ("==", "!=", "<", "<=", ">", ">=")
LOGICAL = ("and", "or")


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
