"""`Scenario` + values of its ranged quantities -> `Point`s: worth, payout and excess in Fractions.

The solver only proposes coalitions and values; every claim printed is about
a `Point` evaluated here from the model (`Model.with_values`, `Worths`,
`payout`), never about the solver's own arithmetic.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from . import ast
from .formula import walk
from .scenario import Scenario
from .worths import Worths, excess, paid_by, payout

EXACT_CACHE_SIZE = 4096  # evaluated value sets kept before the cache starts over


@dataclass
class Point:
    """A coalition and values of the ranged quantities, evaluated exactly."""

    mask: int
    values: dict[str, Fraction]
    excess: Fraction
    worth: Fraction
    paid: Fraction


class ExactPoints:
    """Exact evaluation of one scenario at given values, and the local search
    that moves a witness to a point of larger excess."""

    def __init__(self, scenario: Scenario):
        self.scenario = scenario
        self.model = scenario.model
        self._cache: dict = {}
        self._candidates = self._breakpoints()

    def exact(self, values: dict[str, Fraction]) -> tuple[Worths, list[Fraction]]:
        """Worths and payouts of the agreement at these values, in Fractions."""
        key = tuple(sorted(values.items()))
        hit = self._cache.get(key)
        if hit is None:
            attrs, params, worths = {}, {}, {}
            for r in self.scenario.ranged:
                v = values[r.key]
                if r.kind == "attribute":
                    attrs[(r.attribute, r.party)] = v
                elif r.kind == "param":
                    params[r.param] = v
                else:
                    worths[r.mask] = v
            w = Worths(self.model.with_values(attributes=attrs, params=params, worths=worths))
            hit = (w, payout(w))
            if len(self._cache) > EXACT_CACHE_SIZE:
                self._cache.clear()
            self._cache[key] = hit
        return hit

    def point(self, mask: int, values: dict[str, Fraction]) -> Point:
        """The coalition `mask` at these values, evaluated exactly."""
        w, pay = self.exact(values)
        worth = w.exact(mask)
        paid = paid_by(pay, mask) if mask != self.model.full else sum(pay, Fraction(0))
        return Point(mask, dict(values), excess(self.model, worth, paid), worth, paid)

    def _breakpoints(self) -> dict[str, list[Fraction]]:
        """Values worth trying for each ranged quantity when polishing a witness:
        its ends, and the numbers it is compared with in the formula."""
        model = self.model
        literals: set[Fraction] = set()
        exprs = [model.formula.expr] if model.formula else []
        exprs += list(model.table.values()) + [line.expr for line in model.payouts.fixed.values()]
        for e in exprs:
            for node in walk(e):
                if isinstance(node, ast.Num):
                    literals.add(node.value)
        out = {}
        for r in self.scenario.ranged:
            cands = {r.low, r.high}
            if r.kind == "attribute":
                cands |= set(model.attributes[r.attribute].values())
            cands |= literals
            out[r.key] = sorted(c for c in cands if r.low <= c <= r.high)
        return out

    def polish(self, p: Point, keep=lambda p: True) -> Point:
        """Coordinate ascent over the breakpoints: a witness from the solver is
        moved to a point of larger exact excess (still satisfying `keep`).
        Only guides the search; every claim is still decided by a query."""
        best = p
        for _ in range(3):
            improved = False
            for r in self.scenario.ranged:
                for c in self._candidates[r.key]:
                    if c == best.values[r.key]:
                        continue
                    trial = self.point(best.mask, best.values | {r.key: c})
                    if trial.excess > best.excess and keep(trial):
                        best, improved = trial, True
            if not improved:
                break
        return best
