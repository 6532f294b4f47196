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
time left. A list whose order is not proved in that time (the query budget
or the time limit ran out) says so in `method`.
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
from .supremum import seeded, supremum
from .verdict_rules import allowed_excess, rank, status_of
from .worths import PayoutUnavailable
from .z3_queries import Deadline, Mismatch, Queries, QueryUnknown

DEFAULT_TIME_LIMIT = 60.0  # seconds per requirement when --time-limit is not given
MAX_RANKING_QUERIES = 200  # queries spent ordering the counterexamples of one requirement
MAX_SEED_BITS = 22  # candidates enumerated only while corners * coalitions stays within 2**22


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
        if enc.scrb_parts is not None:
            reason = self._scrb_form(deadline)
            if reason is not None:
                return reason
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
        self.points.attach(enc)
        return None

    def _scrb_form(self, deadline: Deadline) -> str | None:
        """Decide where the sum of the remaining benefits is zero and choose the
        encoding of the rule (`Encoding.scrb_form`); the reason when the rule is
        not defined somewhere in the ranges."""
        enc, queries = self.enc, self.queries
        _, _, total, left = enc.scrb_parts
        total, left = enc.z(total), enc.z(left)
        zero = queries.solve([total == 0], deadline)
        if zero is None:
            enc.scrb_form("never")
            return None
        bad = queries.solve([total == 0, left != 0], deadline)
        if bad is not None:
            _, values = queries.witness(bad, deadline, extra=[total == 0, left != 0])
            shown = ", ".join(f"{k} = {v}" for k, v in values.items())
            return ("separable costs remaining benefits is not defined where the remaining benefits add up "
                    f"to zero and the non-separable part does not (at {shown})")
        if queries.solve([total != 0], deadline) is None:
            enc.scrb_form("always")
            return None
        positive = queries.solve([total > 0], deadline) is not None
        negative = queries.solve([total < 0], deadline) is not None
        enc.scrb_form("sometimes, changing sign" if positive and negative
                      else "sometimes, positive" if positive else "sometimes, negative")
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
        self.seeds = self._seed_points()
        results = []
        for index, req in enumerate(self.model.requirements):
            try:
                results.append(self._requirement(req, self.seeds.get(index, [])))
            except QueryUnknown as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(), reason=str(exc)))
            except Mismatch as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(), reason=f"internal: {exc}"))
            except (PayoutUnavailable, EvaluationError) as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(),
                                            reason=getattr(exc, "message", None) or str(exc)))
        return results

    def _seed_points(self) -> dict[int, list[Point]]:
        """Candidate points for each requirement (by index): the worst coalition
        and the counterexamples of the enumerating checker at a few fixed
        values (the corners of the box of ranges), evaluated exactly. They
        only start the search: every claim is still settled by a query, but
        when the worst case sits at such a point one unsat query proves it."""
        from .check import MAX_ENUMERATED, Checker
        from .scenario import corners

        if self.model.n > MAX_ENUMERATED or self.model.n + len(self.scenario.ranged) > MAX_SEED_BITS:
            return {}
        seeds: dict[int, list[Point]] = {}
        options = CheckOptions(top=self.options.top, search="enumeration", time_limit=self.limit / 4)
        for values in corners(self.scenario.ranged):
            try:
                at = self.points.fixed_model(values)
                for index, r in enumerate(Checker(at, options).run()):
                    masks = [self.model.mask_of(c.coalition) for c in r.counterexamples]
                    if r.worst_coalition is not None:
                        masks.append(self.model.mask_of(r.worst_coalition))
                    seeds.setdefault(index, []).extend(self.points.point(m, values) for m in dict.fromkeys(masks))
            except (PayoutUnavailable, EvaluationError):
                continue  # no candidates from a corner where the agreement cannot be evaluated
        return seeds

    def _method(self, extra: str = "") -> str:
        base = "z3 optimize" if self.enc.linear else "z3 bisection"
        return base + extra

    def _requirement(self, req, seeds: list[Point]) -> Result:
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
        in_scope = self._seeds_in(which, seeds)
        if which not in self._sup_cache and in_scope:
            # candidates from exact enumeration at the corners: when the best one is the
            # worst case, two unsat queries prove it, and the verdict follows from it
            try:
                quick = seeded(self.queries, self.points, self.e_num, scope,
                               Deadline(min(self.limit / 3, deadline.left())), in_scope)
            except QueryUnknown:
                quick = None
            if quick is not None:
                self._sup_cache[which] = quick
        settled = self._sup_cache.get(which)
        if settled is not None and settled[0] is not None and settled[0] <= allowed(req, Fraction(0)):
            # every excess is at most the proved supremum (below it when not attained),
            # and no allowed excess is below allowed(req, 0): nothing violates
            violators = []
            self.order_proved = True
        else:
            violators = self.violators(cond, scope, deadline, lambda p, req=req: p.excess > allowed(req, p.worth),
                                       in_scope)
        for p in violators:
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
        status = status_of(req, worst, len(violators), budget_excess)
        if violators and not self.order_proved:
            # every listed coalition is re-checked, but that none is missing before them is not proved
            note += ", counterexamples not proved to be the worst ones (query or time limit reached)"
        return self._result(req, status, worst, self._method(note), cex=cex, worst_mask=worst_mask)

    def _seeds_in(self, which: str, own: list[Point]) -> list[Point]:
        """The seed points of every requirement that lie in the scope, this
        requirement's own first."""
        out: dict[tuple, Point] = {}
        for p in [*own, *(p for ps in self.seeds.values() for p in ps)]:
            if p.mask in (0, self.model.full) or (which == "singletons" and bin(p.mask).count("1") != 1):
                continue
            out.setdefault((p.mask, tuple(sorted(p.values.items()))), p)
        return list(out.values())

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
    def violators(self, cond, scope, deadline: Deadline, violates, seeds=()) -> list[Point]:
        """Up to `top` coalitions that violate `cond` for some values, worst
        first, each at its worst violating values, re-checked exactly.

        A plain satisfiability query decides first (unsat is the proof that
        nothing violates). Then, in the time left, the list is ranked: each
        query asks for a point that beats what is known, either a coalition
        not listed with an excess above the `top`-th (or equal to it and
        before it in the checker's order) or a listed coalition above its own
        best. Unsat proves the list and each coalition's worst; a witness is
        moved to its coalition's worst breakpoint (`ExactPoints.polish`) and
        the query repeated."""
        violating = [p for p in seeds if violates(p)]
        if violating:
            witness = max(violating, key=lambda p: p.excess)  # evaluated exactly: the refutation
        else:
            first = self.queries.solve([scope, cond], deadline)
            if first is None:
                return []
            witness = self._checked_point(first, [scope, cond], deadline, violates)
        found: dict[int, Point] = {}
        bound: dict[int, Fraction] = {}  # per listed coalition: a value its violating excess is below or at

        def add(p: Point) -> None:
            p = self.points.polish(p, violates)
            if p.mask not in found or p.excess > found[p.mask].excess:
                found[p.mask] = p
            bound[p.mask] = max(bound.get(p.mask, p.excess), self._coalition_limit(p, cond, scope, deadline))

        self.order_proved = False
        try:
            for p in [witness, *violating]:
                add(p)
            for _ in range(MAX_RANKING_QUERIES):
                ranked = sorted(found.values(), key=_rank)
                constraints = [scope, cond, *(self._beats(mask, bound[mask]) for mask in found)]
                if len(ranked) >= self.options.top:
                    kth = ranked[self.options.top - 1]
                    constraints.append(z3.Or(self._above(kth.excess),
                                             z3.And(self._reaches(kth.excess), self.enc.ranks_before(kth.mask))))
                if self.enc.linear:
                    answer = self.queries.maximize(self.e_num, constraints, deadline)
                    zmodel = None if answer is None else answer[1]
                else:
                    zmodel = self.queries.solve(constraints, deadline)
                if zmodel is None:
                    self.order_proved = True
                    break
                add(self._checked_point(zmodel, constraints, deadline, violates))
        except QueryUnknown:
            pass  # the refutation in hand stands; the list is the best found in the time
        return sorted(found.values(), key=_rank)[: self.options.top]

    def _above(self, value: Fraction):
        """Z3 condition: the coalition's excess is above `value`."""
        enc = self.enc
        return enc.zb(enc.compare(">", self.e_num, enc.scale(enc.den, value)))

    def _reaches(self, value: Fraction):
        """Z3 condition: the coalition's excess is `value` or more."""
        enc = self.enc
        return enc.zb(enc.compare(">=", self.e_num, enc.scale(enc.den, value)))

    def _beats(self, mask: int, value: Fraction):
        """Z3 condition: another coalition than `mask`, or `mask` above `value`."""
        return z3.Or(z3.Not(self.enc.is_coalition(mask)), self._above(value))

    def _coalition_limit(self, p: Point, cond, scope, deadline: Deadline) -> Fraction:
        """The best bound known for the coalition of `p`: its excess, or the
        largest limit of its excess at a threshold when no violating point of
        the coalition exceeds that limit (then the list need not chase a
        supremum that is not attained)."""
        limits = [lim for lim, _, _ in self.points.side_limits(p.mask, p.values) if lim > p.excess]
        if not limits:
            return p.excess
        top = max(limits)
        m = self.queries.solve([scope, cond, self.enc.is_coalition(p.mask), self._above(top)], deadline)
        return top if m is None else p.excess

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
