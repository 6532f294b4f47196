"""`ast.Document` + `Model` (or None) -> `LintContext`: what the rule checks read.

The names declared and read, and exact baseline worths and fixed payouts
computed once and shared by every check. Worths come from the same evaluator
the checker uses; the integer table of all worths (`all_worths`) may be
recovered from the checker's vectorised table, but only after a spot check
against that evaluator.
"""

from __future__ import annotations

from fractions import Fraction
from functools import cached_property
from math import lcm

from .. import ast
from ..deadline import checkpoint
from ..formula import Env, EvaluationError, evaluate, walk
from ..model import Model

MAX_PAIRS_PARTIES = 12  # checks over pairs of coalitions enumerate 3**n pairs


class LintContext:
    """What the checks read: the document, the model if any, exact worths."""

    def __init__(self, doc: ast.Document, model: Model | None):
        self.doc = doc
        self.model = model
        self.stmts = doc.statements
        self._worths: dict[int, Fraction | None] = {}
        self.scaled: tuple[list[int], int] | None | bool = False  # False: not computed yet

    def of(self, kind) -> list:
        return [s for s in self.stmts if isinstance(s, kind)]

    @cached_property
    def formula(self) -> ast.WorthFormula | None:
        found = self.of(ast.WorthFormula)
        return found[0] if found else None

    @cached_property
    def attributes_read(self) -> set[str]:
        """Attributes an aggregate of the formula or a payout rule reads."""
        read = set()
        for f in self.of(ast.WorthFormula):
            for node in walk(f.expr):
                if isinstance(node, ast.Member) and node.coalition == f.var.name:
                    read.add(node.item)
        for line in self.of((ast.PayoutAll, ast.PayoutRest)):
            if line.rule.attribute is not None:
                read.add(line.rule.attribute.name)
        return read

    @cached_property
    def params_read(self) -> set[str]:
        read = set()
        for s in self.stmts:
            expr = getattr(s, "expr", None)
            if expr is not None:
                read.update(n.name for n in walk(expr) if isinstance(n, ast.Name))
        return read

    @cached_property
    def declared_params(self) -> dict[str, ast.ParamDecl]:
        out = {}
        for decl in self.of(ast.ParamDecl):
            out.setdefault(decl.name.name, decl)
        return out

    @cached_property
    def declared_attributes(self) -> dict[str, dict[str, ast.Attribute]]:
        """attribute -> party -> its declaration (first one wins, as in resolve)."""
        out: dict[str, dict[str, ast.Attribute]] = {}
        for party in self.of(ast.PartyDecl):
            for attr in party.attributes:
                out.setdefault(attr.name.name, {}).setdefault(party.name.name, attr)
        return out

    # ------------------------------------------------------------ exact values
    @cached_property
    def worth_all(self) -> Fraction | None:
        return self.worth(self.model.full) if self.model else None

    def worth(self, mask: int) -> Fraction | None:
        """The baseline worth of a coalition, None if it cannot be evaluated;
        read from the integer table once `all_worths` has built it."""
        if isinstance(self.scaled, tuple):
            values, den = self.scaled
            return Fraction(values[mask], den)
        return self.exact_worth(mask)

    def exact_worth(self, mask: int) -> Fraction | None:
        """The baseline worth from the reference evaluator alone."""
        if mask not in self._worths:
            self._worths[mask] = self._worth(mask)
        return self._worths[mask]

    def _worth(self, mask: int) -> Fraction | None:
        checkpoint()  # the command's deadline: one evaluation can cost O(parties)
        m = self.model
        env = Env(m.params, m.attributes)
        try:
            if mask in m.table:
                return evaluate(m.table[mask], env)
            if mask == m.full and m.grand is not None:
                return evaluate(m.grand, env)
            return self.default_worth(mask)
        except EvaluationError:
            return None

    def default_worth(self, mask: int) -> Fraction | None:
        """What the formula, else `worth otherwise`, gives a coalition."""
        m = self.model
        if m.formula is not None:
            env = Env(m.params, m.attributes, tuple(m.names_of(mask)), m.formula.var.name)
            try:
                return evaluate(m.formula.expr, env)
            except EvaluationError:
                return None
        return m.otherwise

    @cached_property
    def fixed_payouts(self) -> dict[str, Fraction] | None:
        """The exact amount of every fixed payout line, None if one fails."""
        m, wall = self.model, self.worth_all
        if wall is None:
            return None
        env = Env(m.params, m.attributes, worth_all=wall, percent_base=wall)
        try:
            return {p: evaluate(line.expr, env) for p, line in m.payouts.fixed.items()}
        except EvaluationError:
            return None


def all_worths(ctx: LintContext) -> tuple[list[int], int] | None:
    """Every worth times one common denominator (index = mask), and that
    denominator, so that sums compare exactly in integers; None when a worth
    cannot be evaluated. Computed once per context."""
    if ctx.scaled is False:
        ctx.scaled = _fast_worths(ctx) or _exact_worths(ctx)
    return ctx.scaled


def _fast_worths(ctx: LintContext) -> tuple[list[int], int] | None:
    """The checker's vectorised table, when it recovered every worth exactly;
    spot-checked against the exact evaluator (and the exact path is used
    whenever anything about it is off: it only saves time)."""
    try:
        from ..sweep import worth_table
        from ..worths import Worths

        _, scaled = worth_table(Worths(ctx.model))
    except Exception:  # noqa: BLE001 - an optional speed-up; the exact path follows
        return None
    if scaled is None:
        return None
    nums, den = scaled
    values = [int(v) for v in nums]
    m = ctx.model
    if len(values) != m.full + 1:
        return None
    for mask in {1, m.full, m.full >> 1 or 1, (m.full // 3) or 1}:
        if Fraction(values[mask], den) != ctx.exact_worth(mask):
            return None
    return values, int(den)


def _exact_worths(ctx: LintContext) -> tuple[list[int], int] | None:
    m = ctx.model
    values = [Fraction(0)]
    for mask in range(1, m.full + 1):
        w = ctx.exact_worth(mask)
        if w is None:
            return None
        values.append(w)
    scale = lcm(*(v.denominator for v in values))
    return [v.numerator * (scale // v.denominator) for v in values], scale
