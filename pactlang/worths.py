"""`Model` -> exact worth of any coalition, and the payout every party gets.

`Worths(model).exact(mask)` is the single source of truth for v(S) or c(S):
a pinned value from a contingency, else the table, else `worth all` for the
grand coalition, else the formula, else `worth otherwise`. Payout clauses are
evaluated here too, exactly; rules that need a solver are delegated to
`pactlang.solutions` on the game in value form.
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import cached_property


from .formula import Env, EvaluationError, evaluate
from .game import Game
from .model import Model
from .verdict_rules import excess_of


class PayoutUnavailable(Exception):
    """The payout cannot be computed (for a reason worth printing)."""


class Worths:
    """Exact worths of one model, with the constant entries evaluated once."""

    def __init__(self, model: Model):
        self.model = model
        env = Env(model.params, model.attributes)
        self.constants: dict[int, Fraction] = {}
        for mask, expr in model.table.items():
            self.constants[mask] = evaluate(expr, env)
        if model.grand is not None and model.full not in self.constants:
            self.constants[model.full] = evaluate(model.grand, env)
        self.constants.update(model.pinned)

    def exact(self, mask: int) -> Fraction:
        """The worth of the coalition `mask` (non-empty), exactly."""
        if mask in self.constants:
            return self.constants[mask]
        model = self.model
        if model.formula is not None:
            members = tuple(model.names_of(mask))
            env = Env(model.params, model.attributes, members, model.formula.var.name)
            try:
                return evaluate(model.formula.expr, env)
            except EvaluationError as exc:
                raise EvaluationError(f"{exc.message} in the worth of {{{', '.join(members)}}}", exc.span) from None
        if model.otherwise is not None:
            return model.otherwise
        raise EvaluationError(f"coalition {{{', '.join(model.names_of(mask))}}} has no worth", None)

    def value_form(self, mask: int) -> Fraction:
        """The worth with the sign of a value game (costs negated); 0 for the empty set."""
        if mask == 0:
            return Fraction(0)
        w = self.exact(mask)
        return -w if self.model.kind == "cost" else w

    @cached_property
    def worth_all(self) -> Fraction:
        return self.exact(self.model.full)

    def game(self) -> Game:
        """The game in value form for the solvers (n <= 24: all worths tabulated)."""
        from .sweep import worth_table  # lazy: numpy sweep only when a solver needs it

        floats, scaled = worth_table(self)
        if not all(map(math.isfinite, floats)):
            from .solutions.errors import SolverError

            raise SolverError("some worths are beyond the float range (about 1.8e308) the payout solvers work in")
        sign = -1 if self.model.kind == "cost" else 1
        if scaled is not None:
            scaled = (scaled[0] * sign, scaled[1])
        return Game(self.model.n, self.value_form, floats * sign, scaled, self.model.parties)


def payout(worths: Worths) -> list[Fraction]:
    """The exact payout of every party, in party order, rounded when the agreement says so."""
    amounts = _unrounded_payout(worths)
    step = worths.model.payouts.rounding
    return amounts if step is None else largest_remainder(amounts, step)


def largest_remainder(amounts: list[Fraction], step: Fraction) -> list[Fraction]:
    """Amounts rounded to multiples of `step` by the largest remainder method (after Hamilton).

    Every amount is first rounded down to the step; the steps this leaves
    over go one each to the parties with the largest remainders, ties to the
    party declared first, so the total is kept whenever it is a multiple of
    the step. When it is not, the total moves by less than one step and the
    `balanced budget` requirement reports it.
    """
    floors = [(x / step).__floor__() for x in amounts]
    remainders = [x - f * step for x, f in zip(amounts, floors)]
    leftover = (sum(amounts, Fraction(0)) - sum(floors) * step) / step
    extra = max(0, min(len(amounts), leftover.__floor__()))
    order = sorted(range(len(amounts)), key=lambda i: (-remainders[i], i))
    for i in order[:extra]:
        floors[i] += 1
    return [Fraction(f) * step for f in floors]


def _unrounded_payout(worths: Worths) -> list[Fraction]:
    model = worths.model
    n = model.n
    wall = worths.worth_all
    env = Env(model.params, model.attributes, worth_all=wall, percent_base=wall)
    result: list[Fraction | None] = [None] * n
    for name, line in model.payouts.fixed.items():
        result[model.index(name)] = evaluate(line.expr, env)
    rule = model.payouts.rule
    if rule is None:
        return result  # resolve guarantees every party has a line
    rest = [i for i in range(n) if result[i] is None] if model.payouts.scope == "rest" else list(range(n))
    if not rest:
        return result
    fixed_total = sum((x for x in result if x is not None), Fraction(0))
    remaining = wall - fixed_total
    if rule.kind == "equal":
        share = remaining / len(rest)
        for i in rest:
            result[i] = share
    elif rule.kind == "proportional":
        weights = model.attributes[rule.attribute.name]
        total = sum((weights[model.parties[i]] for i in rest), Fraction(0))
        if total == 0:
            raise PayoutUnavailable(f"`proportional to {rule.attribute.name}`: the weights add up to zero")
        for i in rest:
            result[i] = remaining * weights[model.parties[i]] / total
    else:
        values = _solution_rule(rule.kind, worths)
        sign = -1 if model.kind == "cost" else 1
        for i in rest:
            result[i] = values[i] * sign
    return result


def _solution_rule(kind: str, worths: Worths) -> list[Fraction]:
    """A solution concept on the value-form game; raises PayoutUnavailable."""
    try:
        from . import solutions
    except ImportError as exc:  # pragma: no cover - the package ships with solutions
        raise PayoutUnavailable(f"the `{kind}` rule is not available: {exc}") from None
    if worths.model.n > 24:
        raise PayoutUnavailable(f"the `{kind}` rule needs every coalition; {worths.model.n} parties is above 24")
    try:
        game = worths.game()
        if kind == "shapley":
            return solutions.shapley(game)
        if kind == "nucleolus":
            return solutions.nucleolus(game)
        if kind == "scrb":
            return solutions.separable_costs_remaining_benefits(game)
    except (solutions.NotApplicable, solutions.SolverError, ValueError) as exc:
        # no exactly proved answer: the requirement becomes `unknown` with this reason
        raise PayoutUnavailable(str(exc)) from None
    raise PayoutUnavailable(f"unknown rule `{kind}`")


def excess(model: Model, worth: Fraction, paid: Fraction) -> Fraction:
    """e(S): what S gains by leaving (value: v - x; cost: x - c)."""
    return excess_of(model.kind, worth, paid)


def paid_by(payouts: list[Fraction], mask: int) -> Fraction:
    return sum((x for i, x in enumerate(payouts) if mask >> i & 1), Fraction(0))
