"""Syntax nodes -> text: one printer per node kind, and aligned rows for runs of table-like statements.

Printers are found by naming convention: `Printer.fmt` calls `_fmt_<kind>`
for a node of class `<Kind>`. Numbers are printed exactly as written, one
space goes around operators, and parentheses only where the grammar (or the
reader) needs them. Comments and blank lines are not this module's concern:
the formatter places them around what is printed here.
"""

from __future__ import annotations

import re
from functools import lru_cache

from . import ast
from .parse import parser, quote

_PREC = {"or": 1, "and": 2, "==": 4, "!=": 4, "<": 4, "<=": 4, ">": 4, ">=": 4,
         "+": 5, "-": 5, "*": 6, "/": 6}
_ATOM = 8  # the precedence of names, numbers and calls: never parenthesised


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
        """The text of any node, by its kind's printer."""
        return getattr(self, "_fmt_" + _snake(type(node).__name__))(node)

    # ------------------------------------------------------ expressions
    @staticmethod
    def prec(node) -> int:
        """How tightly an expression binds (higher binds tighter)."""
        if isinstance(node, ast.If):
            return 0
        if isinstance(node, ast.Not):
            return 3
        if isinstance(node, ast.Binary):
            return _PREC[node.op]
        if isinstance(node, ast.Chain):
            return _PREC[node.rest[0][0]]
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
        # comparisons do not chain
        return f"{self.sub(node.left, 5, True)} {node.op} {self.sub(node.right, 5, True)}"

    def _fmt_chain(self, node: ast.Chain) -> str:
        # left-associative: later operands of the same level keep their brackets
        p = self.prec(node)
        arithmetic = p >= 4
        parts = [self.sub(node.first, p, arithmetic)]
        for op, operand in node.rest:
            parts.append(f"{op} {self.sub(operand, p + 1, arithmetic)}")
        return " ".join(parts)

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

    def _fmt_parties_from(self, node: ast.PartiesFrom) -> str:
        return f"parties from {quote(node.path)}"

    def _fmt_round_payouts(self, node: ast.RoundPayouts) -> str:
        return f"round payouts to {node.step.text} by largest remainder"

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
        """The right of a worth line: the number or the formula."""
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


# ---------------------------------------------------------------- tables


def party_rows(stmts: list[ast.PartyDecl], printer: Printer) -> list[str]:
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


def table_rows(kind: str, stmts: list, printer: Printer) -> list[str]:
    """A run of table rows ("party", "worth" or "contingency"), their values
    starting in one column."""
    if kind == "party":
        return party_rows(stmts, printer)
    if kind == "worth":
        heads = [printer.worth_head(s) for s in stmts]
        width = max(len(h) for h in heads)
        return [f"{h.ljust(width)} = {printer.worth_body(s)}" for h, s in zip(heads, stmts)]
    heads = [printer.contingency_head(s) for s in stmts]
    width = max(len(h) for h in heads)
    return [f"{h.ljust(width)} {printer.contingency_body(s)}" for h, s in zip(heads, stmts)]
