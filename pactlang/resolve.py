"""`ast.Document` -> `Model` plus diagnostics: names, duplicates, coverage.

Every name in the agreement is checked here, once, so later stages can index
dictionaries without guarding. Errors are collected (not raised one by one)
so a user sees every mistake of a file in one run.
"""

from __future__ import annotations

from fractions import Fraction

from . import ast
from .diagnostics import AgreementError, Diagnostic, error
from .formula import walk
from .model import Model, Payouts

FUNCTIONS = ("sum", "max", "min", "count")
WHOLE_FILE = ast.Span(1, 1, 1, 2)


class _Resolver:
    def __init__(self, doc: ast.Document, path: str):
        self.doc = doc
        self.path = path
        self.diags: list[Diagnostic] = []

    def err(self, code: str, message: str, span: ast.Span | None, help: str | None = None) -> None:
        self.diags.append(error(code, message, span or WHOLE_FILE, help))

    # ------------------------------------------------------------ statements
    def run(self) -> Model:
        stmts = self.doc.statements
        titles = [s for s in stmts if isinstance(s, ast.AgreementTitle)]
        if not titles:
            self.err("missing-title", "the agreement has no `agreement \"TITLE\"` line", stmts[0].span if stmts else None,
                     "start the file with `agreement \"...\"`")
        elif stmts[0] is not titles[0]:
            self.err("title-not-first", "`agreement` must be the first statement", titles[0].span)
        for extra in titles[1:]:
            self.err("duplicate-title", "a second `agreement` line", extra.span)
        shares = [s for s in stmts if isinstance(s, ast.Shares)]
        if not shares:
            self.err("missing-shares", "the agreement does not say `shares cost` or `shares value`",
                     titles[0].span if titles else None)
        for extra in shares[1:]:
            self.err("duplicate-shares", "a second `shares` line", extra.span)

        self._parties([s for s in stmts if isinstance(s, (ast.PartyDecl, ast.PartiesFrom))])
        self._params([s for s in stmts if isinstance(s, ast.ParamDecl)])
        self._worths(stmts)
        payouts = self._payouts(stmts)
        contingencies = tuple(s for s in stmts if isinstance(s, ast.Contingency))
        for c in contingencies:
            self._contingency(c)
        seen_names: dict[str, ast.Span] = {}
        for c in contingencies:
            if c.name in seen_names:
                self.err("duplicate-contingency", f"a second contingency named `{c.name}`", c.span)
            seen_names[c.name] = c.span
        requirements = tuple(s for s in stmts if isinstance(s, ast.Require))
        if self.diags:
            raise AgreementError(self.diags)
        return Model(
            path=self.path,
            title=titles[0].title,
            kind=shares[0].kind,
            unit=shares[0].unit,
            parties=tuple(self.parties),
            attributes=self.attributes,
            params=self.params,
            table=self.table,
            table_spans=self.table_spans,
            grand=self.grand,
            formula=self.formula,
            otherwise=self.otherwise,
            payouts=payouts,
            requirements=requirements,
            contingencies=contingencies,
            document=self.doc,
            party_spans=self.party_spans,
        )

    def _party_rows(self, source: ast.PartiesFrom) -> list[ast.PartyDecl]:
        """The parties of a `parties from` file, as if each row were a `party` line at the statement."""
        from pathlib import Path

        from .party_table import PartyTableError, read_party_table
        from .printer import _keywords

        base = Path(self.path).parent if self.path not in ("-", "<agreement>") else Path(".")
        try:
            table = read_party_table(base / source.path, source.path, _keywords())
        except PartyTableError as exc:
            self.err("party-table", str(exc), source.span)
            return []
        span = source.span
        decls = []
        for row in table.rows:
            attrs = tuple(ast.Attribute(ast.Ident(col, span=span), ast.Num(value, str(value), span=span), span=span)
                          for col, value in row.attributes.items())
            decls.append(ast.PartyDecl(ast.Ident(row.name, span=span), attrs, span=span))
        if not decls:
            self.err("party-table", f"`{source.path}` lists no parties", span)
        return decls

    def _parties(self, decls: list) -> None:
        self.parties: list[str] = []
        self.party_spans: dict[str, ast.Span] = {}
        self.attributes: dict[str, dict[str, Fraction]] = {}
        self.attribute_spans: dict[str, ast.Span] = {}
        expanded = []
        for decl in decls:
            expanded.extend(self._party_rows(decl) if isinstance(decl, ast.PartiesFrom) else [decl])
        for decl in expanded:
            name = decl.name.name
            if name in self.party_spans:
                self.err("duplicate-party", f"party `{name}` is declared twice", decl.name.span,
                         f"first declared at line {self.party_spans[name].line}")
                continue
            self.parties.append(name)
            self.party_spans[name] = decl.name.span
            seen = set()
            for attr in decl.attributes:
                if attr.name.name in seen:
                    self.err("duplicate-attribute", f"attribute `{attr.name.name}` is given twice for `{name}`", attr.name.span)
                    continue
                seen.add(attr.name.name)
                self.attributes.setdefault(attr.name.name, {})[name] = attr.value.value
                self.attribute_spans.setdefault(attr.name.name, attr.name.span)
        if len(self.parties) < 2:
            span = decls[0].span if decls else (self.doc.statements[0].span if self.doc.statements else None)
            if any(d.code == "party-table" for d in self.diags):
                return  # the table's own error says it
            self.err("too-few-parties", "an agreement needs at least two parties", span)
        for attr, span in self.attribute_spans.items():
            if attr in self.party_spans:
                self.err("name-clash", f"`{attr}` names both a party and an attribute", span)

    def _params(self, decls: list[ast.ParamDecl]) -> None:
        self.params: dict[str, Fraction] = {}
        self.param_spans: dict[str, ast.Span] = {}
        for decl in decls:
            name = decl.name.name
            if name in self.params:
                self.err("duplicate-param", f"param `{name}` is declared twice", decl.name.span)
                continue
            if name in self.party_spans or name in self.attributes:
                self.err("name-clash", f"param `{name}` has the name of a party or attribute", decl.name.span)
                continue
            self.params[name] = decl.value.value
            self.param_spans[name] = decl.name.span

    def _coalition(self, members: tuple[ast.Ident, ...]) -> int | None:
        mask, ok = 0, True
        for ident in members:
            if ident.name not in self.party_spans:
                self.err("unknown-party", f"unknown party `{ident.name}`", ident.span)
                ok = False
                continue
            bit = 1 << self.parties.index(ident.name)
            if mask & bit:
                self.err("duplicate-member", f"`{ident.name}` is listed twice in this coalition", ident.span)
            mask |= bit
        return mask if ok else None

    def _worths(self, stmts) -> None:
        self.table: dict[int, ast.Expr] = {}
        self.table_spans: dict[int, ast.Span] = {}
        self.grand: ast.Expr | None = None
        self.formula: ast.WorthFormula | None = None
        self.otherwise: Fraction | None = None
        full = (1 << len(self.parties)) - 1
        grand_span = None
        for s in stmts:
            if isinstance(s, ast.WorthEntry):
                mask = self._coalition(s.members)
                self._check_expr(s.expr, "constant")
                if mask is None:
                    continue
                if mask in self.table or (mask == full and self.grand is not None):
                    self.err("duplicate-worth", "this coalition already has a worth", s.span)
                    continue
                self.table[mask] = s.expr
                self.table_spans[mask] = s.span
            elif isinstance(s, ast.WorthGrand):
                self._check_expr(s.expr, "constant")
                if self.grand is not None or full in self.table:
                    self.err("duplicate-worth", "the worth of `all` is given twice", s.span)
                    continue
                self.grand, grand_span = s.expr, s.span
            elif isinstance(s, ast.WorthFormula):
                if self.formula is not None:
                    self.err("duplicate-formula", "a second `worth S = ...` formula", s.span,
                             "combine them with `if ... then ... else ...`")
                    continue
                var = s.var.name
                if var in self.party_spans or var in self.params or var in self.attributes:
                    self.err("name-clash", f"`{var}` already names a party, param or attribute", s.var.span,
                             "use a fresh name such as `S` for the coalition")
                    continue
                self.formula = s
                self._check_expr(s.expr, "formula", var)
            elif isinstance(s, ast.WorthOtherwise):
                if self.otherwise is not None:
                    self.err("duplicate-otherwise", "a second `worth otherwise` line", s.span)
                    continue
                self.otherwise = s.value.value
        if grand_span is not None:
            self.table_spans[full] = grand_span
        if self.formula is None and self.otherwise is None and len(self.parties) >= 2:
            covered = len(self.table) + (self.grand is not None)
            if covered < full:
                missing = self._first_missing(full)
                anchor = next((s.span for s in stmts if isinstance(s, (ast.WorthEntry, ast.WorthGrand))), None)
                anchor = anchor or (stmts[0].span if stmts else None)
                self.err("missing-worth", f"coalition {{{', '.join(missing)}}} has no worth "
                         f"({full - covered} of {full} coalitions have none)", anchor,
                         "add a `worth {...} = ...` line, a `worth S = ...` formula or `worth otherwise = NUMBER`")
        if self.formula is not None:
            needed: set[str] = set()
            for node in walk(self.formula.expr):
                if isinstance(node, ast.Call) and node.func in ("sum", "max", "min") and len(node.args) == 1 \
                        and isinstance(node.args[0], ast.Member) and node.args[0].item in self.attributes:
                    needed.add(node.args[0].item)
            for attr in sorted(needed):
                self._require_attribute(attr, self.parties, self.formula.span)

    def _first_missing(self, full: int) -> list[str]:
        for mask in range(1, full + 1):
            if mask not in self.table and not (mask == full and self.grand is not None):
                return [p for i, p in enumerate(self.parties) if mask >> i & 1]
        return []

    def _require_attribute(self, attr: str, parties, span) -> None:
        values = self.attributes.get(attr, {})
        for p in parties:
            if p not in values:
                self.err("missing-attribute", f"party `{p}` has no attribute `{attr}`", self.party_spans[p],
                         f"add `{attr} NUMBER` to its line (used at line {span.line})" if span else None)

    # ------------------------------------------------------------ expressions
    def _check_expr(self, expr: ast.Expr, context: str, var: str | None = None) -> None:
        """context: "formula" (may read the coalition `var`), "constant"
        (table entries, `worth all`) or "payout" (may read worth(all))."""
        aggregate_items: set[int] = set()
        for node in walk(expr):
            match node:
                case ast.Name(name=name):
                    if name in self.params:
                        continue
                    if context == "formula" and name == var:
                        if id(node) not in aggregate_items:
                            self.err("bare-coalition", f"`{name}` is a coalition, not a number", node.span,
                                     f"use count({name}), sum(ATTR in {name}) or PARTY in {name}")
                    elif name in self.party_spans:
                        hint = f"use `{name} in {var}` for membership" if var else None
                        self.err("party-as-number", f"party `{name}` is not a number", node.span, hint)
                    elif name in self.attributes:
                        hint = f"use sum({name} in {var}) or max({name} in {var})" if var else \
                            "attributes are read over a coalition in a `worth S` formula"
                        self.err("attribute-as-number", f"attribute `{name}` is not a number here", node.span, hint)
                    else:
                        self.err("unknown-name", f"unknown name `{name}`", node.span,
                                 "declare it with `param NAME = NUMBER`")
                case ast.Member(item=item, coalition=coal):
                    if context != "formula":
                        self.err("coalition-outside-formula", "membership can only be tested in a `worth S` formula", node.span)
                        continue
                    if coal != var:
                        self.err("unknown-coalition", f"unknown coalition `{coal}`", node.span,
                                 f"this formula's coalition is `{var}`")
                    if id(node) in aggregate_items:
                        if item not in self.attributes:
                            what = "a party" if item in self.party_spans else "not an attribute"
                            self.err("unknown-attribute", f"`{item}` is {what}; an aggregate needs an attribute", node.span)
                    elif item not in self.party_spans:
                        if item in self.attributes:
                            self.err("attribute-membership", f"`{item}` is an attribute, not a party", node.span,
                                     f"use sum({item} in {coal}), max(...) or min(...)")
                        else:
                            self.err("unknown-party", f"unknown party `{item}`", node.span)
                case ast.Call(func=func, args=args):
                    if func not in FUNCTIONS:
                        self.err("unknown-function", f"unknown function `{func}`", node.span,
                                 "the functions are sum, max, min and count")
                        continue
                    if func == "count":
                        if context != "formula":
                            self.err("coalition-outside-formula", "count(...) can only be used in a `worth S` formula", node.span)
                        elif len(args) != 1 or not isinstance(args[0], ast.Name) or args[0].name != var:
                            self.err("bad-call", f"count takes the coalition: count({var})", node.span)
                        else:
                            aggregate_items.add(id(args[0]))
                        continue
                    if len(args) == 1 and isinstance(args[0], ast.Member):
                        aggregate_items.add(id(args[0]))
                        if context != "formula":
                            self.err("coalition-outside-formula", f"{func}(... in ...) can only be used in a `worth S` formula", node.span)
                    elif func == "sum":
                        self.err("bad-call", f"sum takes an attribute over the coalition: sum(ATTR in {var or 'S'})", node.span)
                    elif len(args) < 2:
                        self.err("bad-call", f"{func} takes an attribute over the coalition or two or more values", node.span)
                case ast.WorthOfAll():
                    if context != "payout":
                        self.err("worth-all-here", "`worth(all)` can only be used in payout lines", node.span)

    # ------------------------------------------------------------ payouts
    def _payouts(self, stmts) -> Payouts:
        fixed: dict[str, ast.PayoutFixed] = {}
        rules = []
        for s in stmts:
            if isinstance(s, ast.PayoutFixed):
                self._check_expr(s.expr, "payout")
                name = s.party.name
                if name not in self.party_spans:
                    self.err("unknown-party", f"unknown party `{name}`", s.party.span)
                elif name in fixed:
                    self.err("paid-twice", f"party `{name}` has two payout lines", s.span)
                else:
                    fixed[name] = s
            elif isinstance(s, (ast.PayoutAll, ast.PayoutRest)):
                rules.append(s)
        for extra in rules[1:]:
            self.err("duplicate-rule", "a second payout rule", extra.span, "keep one `payout by` or `payout rest by` line")
        rule, scope, span = None, None, None
        if rules:
            line = rules[0]
            rule, span = line.rule, line.span
            scope = "all" if isinstance(line, ast.PayoutAll) else "rest"
            if scope == "all" and fixed:
                first = next(iter(fixed.values()))
                self.err("paid-twice", f"party `{first.party.name}` is paid by its own line and by `payout by`",
                         first.span, "use `payout rest by ...` for the parties without a line of their own")
            if scope == "rest" and rule.kind not in ("equal", "proportional"):
                self.err("rest-rule", "`payout rest by` takes `equal split` or `proportional to ATTR`", rule.span,
                         "a solution rule shares the whole game: use `payout by ...`")
            if rule.kind == "proportional":
                attr = rule.attribute
                if attr.name not in self.attributes:
                    self.err("unknown-attribute", f"unknown attribute `{attr.name}`", attr.span)
                else:
                    scope_parties = [p for p in self.parties if scope == "all" or p not in fixed]
                    self._require_attribute(attr.name, scope_parties, rule.span)
        else:
            for p in self.parties:
                if p not in fixed:
                    self.err("unpaid-party", f"party `{p}` has no payout", self.party_spans[p],
                             "add `payout NAME = ...` or a `payout by`/`payout rest by` rule")
        rounding, rounding_span = None, None
        rounds = [s for s in stmts if isinstance(s, ast.RoundPayouts)]
        for extra in rounds[1:]:
            self.err("duplicate-rounding", "a second `round payouts` line", extra.span)
        if rounds:
            rounding, rounding_span = rounds[0].step.value, rounds[0].span
            if rounding <= 0:
                self.err("rounding-step", "the rounding step must be above zero", rounds[0].step.span)
        return Payouts(fixed, rule, scope, span, rounding, rounding_span)

    # ------------------------------------------------------------ contingencies
    def _contingency(self, c: ast.Contingency) -> None:
        withdrawn = set()
        for line in c.lines:
            match line:
                case ast.AttrRange(attribute=a, party=p) | ast.AttrFixed(attribute=a, party=p):
                    if a.name not in self.attributes:
                        self.err("unknown-attribute", f"unknown attribute `{a.name}`", a.span)
                    if p.name not in self.party_spans:
                        self.err("unknown-party", f"unknown party `{p.name}`", p.span)
                    elif a.name in self.attributes and p.name not in self.attributes[a.name]:
                        self.err("missing-attribute", f"party `{p.name}` has no attribute `{a.name}`", a.span)
                case ast.ParamRange(param=p) | ast.ParamFixed(param=p):
                    if p.name not in self.params:
                        self.err("unknown-param", f"unknown param `{p.name}`", p.span)
                case ast.WorthRange(members=members):
                    self._coalition(members)
                case ast.Without(party=p):
                    if p.name not in self.party_spans:
                        self.err("unknown-party", f"unknown party `{p.name}`", p.span)
                    withdrawn.add(p.name)
            if isinstance(line, (ast.AttrRange, ast.ParamRange, ast.WorthRange)) and line.low.value > line.high.value:
                self.err("empty-range", "the range is empty: its low end is above its high end", line.span)
        if withdrawn and len(self.parties) - len(withdrawn) < 2:
            self.err("too-few-parties", "at least two parties must remain", c.span)


def resolve(doc: ast.Document, path: str = "<agreement>") -> Model:
    """Resolve names and numbers; raise `AgreementError` listing every problem."""
    return _Resolver(doc, path).run()
