"""`Scenario` with ranges -> `Result`s: every requirement decided by Z3 over every value in the ranges.

One Boolean per party and one real per ranged quantity (see `encode_z3`):

- `holds` only when Z3 proves that no coalition and no values violate it
  (unsat);
- `fails` only with counterexamples whose coalition and values are evaluated
  again in Fractions from the model (`exact_points`) and confirmed to violate
  it;
- `unknown` with the reason otherwise (solver limit, time limit, a rule that
  cannot be decided under ranges).

Each requirement is settled first by a plain satisfiability query; the worst
violators are then ranked, and the worst excess found (`supremum`), in the
time left.
"""

from __future__ import annotations

from fractions import Fraction

import z3

from . import ast
from .check import CheckOptions
from .encode_z3 import Encoding, Unsupported
from .exact_points import ExactPoints, Point
from .formula import EvaluationError
from .results import FAILS, HOLDS, UNKNOWN, Counterexample, Result
from .scenario import Scenario
from .supremum import supremum
from .verdict_rules import allowed_excess, rank, status_of
from .worths import PayoutUnavailable
from .z3_queries import Deadline, Mismatch, Queries, QueryUnknown

DEFAULT_TIME_LIMIT = 60.0  # seconds per requirement when --time-limit is not given


allowed = allowed_excess  # the name this module has always exported


def _rank(p: Point) -> tuple:
    """The order counterexamples are listed in (`verdict_rules.rank`)."""
    return rank(p.excess, p.mask)


class RangedCheck:
    """Decides the requirements of one scenario over every value in its ranges."""

    def __init__(self, scenario: Scenario, options: CheckOptions, name: str):
        self.scenario = scenario
        self.model = scenario.model
        self.options = options
        self.name = name
        self.limit = options.time_limit if options.time_limit is not None else DEFAULT_TIME_LIMIT
        self.points = ExactPoints(scenario)

    # ------------------------------------------------------------ results
    def _result(self, req, status, worst, method, reason=None, cex=(), worst_mask=None) -> Result:
        names = tuple(self.model.names_of(worst_mask)) if worst_mask is not None else None
        return Result(ast.requirement_text(req), req.span.line if req.span else 0, self.name, status, worst,
                      method, reason=reason, counterexamples=tuple(cex), span=req.span, worst_coalition=names)

    def _unknown_all(self, reason: str, method: str = "z3") -> list[Result]:
        return [self._result(r, UNKNOWN, None, method, reason=reason) for r in self.model.requirements]

    def _cex(self, p: Point, allowed_excess: Fraction) -> Counterexample:
        return Counterexample(tuple(self.model.names_of(p.mask)), p.worth, p.paid, p.excess, allowed_excess,
                              dict(self.scenario.fixed) | dict(p.values))

    # ------------------------------------------------------------ setup
    def _prepare(self) -> str | None:
        """Build the encoding, rule out zero divisors, orient the denominator and
        compare the symbolic payouts with the exact ones at two corners."""
        try:
            self.enc = enc = Encoding(self.model, self.scenario.ranged)
        except Unsupported as exc:
            return str(exc)
        except EvaluationError as exc:
            return exc.message
        self.queries = queries = Queries(enc)
        deadline = Deadline(self.limit)
        proper = self.proper_scope()
        for term, what in enc.divisors:
            m = queries.solve([proper, term == 0], deadline)
            if m is not None:
                _, values = queries.witness(m, deadline, extra=[proper, term == 0])
                shown = ", ".join(f"{k} = {v}" for k, v in values.items())
                return f"{what} can be zero in the ranges (at {shown})"
        low = {r.key: r.low for r in self.scenario.ranged}
        high = {r.key: r.high for r in self.scenario.ranged}
        den = enc.at(enc.den, low)
        if not isinstance(den, Fraction) or den == 0:
            return "internal: the common denominator of the payouts could not be evaluated"
        enc.orient(1 if den > 0 else -1)
        n, full = self.model.n, self.model.full
        probes = sorted({1 << i for i in range(n)} | {full & ~(1 << i) for i in range(n)} | {full})
        worth_term = enc.worth()
        for corner in (low, high):
            where = ", ".join(f"{k} = {v}" for k, v in corner.items())
            worths, pay = self.points.exact(corner)
            den = enc.at(enc.den, corner)
            for i, p in enumerate(enc.pay_num):
                symbolic = enc.at(p, corner)
                if not isinstance(symbolic, Fraction) or symbolic != pay[i] * den:
                    return f"internal: the encoded payout of `{self.model.parties[i]}` disagrees with the exact one at {where}"
            # the coalition-generic worth term against the exact evaluator at a few coalitions
            for mask in probes:
                bits = [(b, z3.BoolVal(bool(mask >> i & 1))) for i, b in enumerate(enc.member)]
                symbolic = enc.at(z3.substitute(enc.z(worth_term), *bits), corner)
                if symbolic != worths.exact(mask):
                    return (f"internal: the encoded worth of {{{', '.join(self.model.names_of(mask))}}} "
                            f"disagrees with the exact one at {where}")
        return None

    def proper_scope(self):
        """Z3 condition: the coalition is neither empty nor everyone."""
        b = self.enc.member
        return z3.And(z3.Or(b), z3.Not(z3.And(b)))

    def singleton_scope(self):
        """Z3 condition: the coalition has exactly one member."""
        return z3.PbEq([(b, 1) for b in self.enc.member], 1)

    # ------------------------------------------------------------ run
    def run(self) -> list[Result]:
        """One result per requirement of the agreement, in their order."""
        try:
            reason = self._prepare()
        except PayoutUnavailable as exc:
            return self._unknown_all(f"the payout cannot be computed: {exc}")
        except EvaluationError as exc:
            return self._unknown_all(exc.message)
        except QueryUnknown as exc:
            return self._unknown_all(str(exc))
        if reason is not None:
            return self._unknown_all(reason)
        self.e_num, self.e_worth = self.enc.coalition_excess()
        self._budget_cache = None
        self._sup_cache: dict[str, tuple] = {}
        results = []
        for req in self.model.requirements:
            try:
                results.append(self._requirement(req))
            except QueryUnknown as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(), reason=str(exc)))
            except Mismatch as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(), reason=f"internal: {exc}"))
            except (PayoutUnavailable, EvaluationError) as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(),
                                            reason=getattr(exc, "message", None) or str(exc)))
        return results

    def _method(self, extra: str = "") -> str:
        base = "z3 optimize" if self.enc.linear else "z3 bisection"
        return base + extra

    def _requirement(self, req) -> Result:
        deadline = Deadline(self.limit)
        if req.kind == "budget":
            return self._budget(req, deadline)
        which = "singletons" if req.kind == "rational" else "proper"
        scope = self.singleton_scope() if which == "singletons" else self.proper_scope()
        cex = []
        budget_excess = Fraction(0)
        if req.kind in ("stable", "within"):
            budget = self.budget_point(deadline)
            if budget is not None:
                cex.append(self._cex(budget, Fraction(0)))
                budget_excess = budget.excess
        cond = self._violation(req)
        found = self.violators(cond, scope, deadline, lambda p, req=req: p.excess > allowed(req, p.worth))
        for p in found:
            cex.append(self._cex(p, allowed(req, p.worth)))
        cex = cex[: self.options.top]
        # the verdict is settled; the supremum uses the time that is left and is
        # shared by the requirements over the same coalitions
        if which not in self._sup_cache:
            try:
                self._sup_cache[which] = supremum(self.queries, self.points, self.e_num, scope, deadline)
            except QueryUnknown:
                self._sup_cache[which] = (None, None, ", worst excess not settled within the time limit")
        worst, worst_mask, note = self._sup_cache[which]
        status = status_of(req, worst, len(found), budget_excess)
        return self._result(req, status, worst, self._method(note), cex=cex, worst_mask=worst_mask)

    def _violation(self, req):
        """The condition `excess > allowed`, multiplied through by the positive denominator."""
        enc = self.enc
        if req.kind == "within" and isinstance(req.bound, ast.Percent):
            w = self.e_worth
            absw = enc.ite(enc.compare(">=", w, Fraction(0)), w, enc.neg(w))
            bound = enc.mul(enc.scale(absw, req.bound.value), enc.den)
        else:
            bound = enc.scale(enc.den, allowed(req, Fraction(0)))
        return enc.zb(enc.compare(">", self.e_num, bound))

    # ------------------------------------------------------------ violators
    def violators(self, cond, scope, deadline: Deadline, violates) -> list[Point]:
        """Up to `top` coalitions that violate `cond` for some values, worst
        first, each with values at which it does, re-checked exactly.

        A plain satisfiability query decides first (unsat is the proof that
        nothing violates); then, in the time left, the worst violators are
        ranked, each found coalition cut off by a no-good on the membership
        Booleans before the next query."""
        enc = self.enc
        first = self.queries.solve([scope, cond], deadline)
        if first is None:
            return []
        witness = self._checked_point(first, [scope, cond], deadline, violates)
        found: list[Point] = []
        cuts = []
        try:
            while len(found) < self.options.top:
                constraints = [scope, cond, *cuts]
                if enc.linear:
                    answer = self.queries.maximize(self.e_num, constraints, deadline)
                    zmodel = None if answer is None else answer[1]
                else:
                    zmodel = self.queries.solve(constraints, deadline)
                if zmodel is None:
                    break
                p = self._checked_point(zmodel, constraints, deadline, violates)
                found.append(self.points.polish(p, violates))
                cuts.append(z3.Not(enc.is_coalition(p.mask)))
        except QueryUnknown:
            pass  # the refutation in hand stands; the list is just shorter
        if not any(p.mask == witness.mask for p in found):
            found.append(self.points.polish(witness, violates))
        # the solver finds coalitions in an order of its own: list them in the checker's order
        found.sort(key=_rank)
        return found[: self.options.top]

    def _checked_point(self, zmodel, constraints, deadline: Deadline, violates) -> Point:
        """The violating point of a Z3 model, re-checked exactly; when an
        optimizer's model sits at a bound that is not attained, any violating
        values for the same coalition are asked for instead."""
        mask, values = self.queries.witness(zmodel, deadline, extra=constraints)
        p = self.points.point(mask, values)
        if violates(p):
            return p
        m = self.queries.solve([*constraints, self.enc.is_coalition(mask)], deadline)
        if m is None:
            raise Mismatch(f"coalition {{{', '.join(self.model.names_of(mask))}}} was reported "
                           "violating but no values make it so")
        mask, values = self.queries.witness(m, deadline, fixed_mask=mask, extra=constraints)
        p = self.points.point(mask, values)
        if not violates(p):
            raise Mismatch(f"the counterexample {{{', '.join(self.model.names_of(mask))}}} at "
                           f"{values} did not re-check exactly")
        return p

    # ------------------------------------------------------------ budget
    def budget_point(self, deadline: Deadline) -> Point | None:
        """Values at which the payouts do not add up to worth(all), or None (proved)."""
        if self._budget_cache is None:
            full = self.model.full
            e_full, _ = self.enc.fixed_excess(full)
            cond = self.enc.zb(self.enc.compare("!=", e_full, Fraction(0)))
            m = self.queries.solve([cond], deadline)
            point = None
            if m is not None:
                _, values = self.queries.witness(m, deadline, fixed_mask=full, extra=[cond])
                point = self.points.point(full, values)
                if point.excess == 0:
                    raise Mismatch("an unbalanced budget did not re-check exactly")
                point = self.points.polish(point, lambda p: p.excess != 0)
            self._budget_cache = (point,)
        return self._budget_cache[0]

    def _budget(self, req, deadline: Deadline) -> Result:
        p = self.budget_point(deadline)
        if p is None:
            return self._result(req, HOLDS, Fraction(0), "z3", worst_mask=self.model.full)
        return self._result(req, FAILS, p.excess, "z3", cex=[self._cex(p, Fraction(0))], worst_mask=self.model.full)
