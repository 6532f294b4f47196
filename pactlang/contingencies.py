"""`Model` + one contingency -> `Result`s: fixed values checked exactly, ranges proved with Z3.

The lines of a contingency apply together. Fixed values (`ATTR of PARTY =
X`, `PARAM = X`, a range whose ends agree) and withdrawals give a smaller or
changed agreement that the enumerating (or integer-programming) `Checker`
decides exactly. Ranges make each requirement a claim about every value in
them, decided by Z3 over one Boolean per party and one real per ranged
quantity (see `encode_z3`):

- `holds` only when Z3 proves that no coalition and no values violate it
  (unsat);
- `fails` only with counterexamples whose coalition and values are evaluated
  again in Fractions from the model (`Model.with_values`, `Worths`,
  `payout`) and confirmed to violate it;
- `unknown` with the reason otherwise (solver limit, time limit, a rule that
  cannot be decided under ranges).

Each requirement is settled first by a plain satisfiability query; the worst
violators are then ranked, and the worst excess found, in the time left. The
worst excess is the exact supremum over the ranges: from Z3's optimizer when
every term is linear (its bound proved again by a plain unsat query), or by
bisection whose ends are exact (a witness evaluated in Fractions below, an
unsat query above) when the query is nonlinear. `method` says which.

Ranged weights of a proportional rule that nothing else reads are taken at
the corners of their box, each corner a linear query (`weight_ranges` gives
the argument). The nucleolus under ranges is `unknown`: it is not linear in
the worths, so no finite set of values stands for the whole box.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction
from itertools import product

import z3

from . import ast
from .check import CheckOptions, Checker
from .encode_z3 import Encoding, Ranged, Unsupported, fraction_of, real
from .formula import EvaluationError, walk
from .model import Model
from .results import FAILS, HOLDS, UNKNOWN, Counterexample, Result
from .worths import PayoutUnavailable, Worths, excess, paid_by, payout

DEFAULT_TIME_LIMIT = 60.0  # seconds per requirement when --time-limit is not given
MAX_BISECTION_STEPS = 40


# ---------------------------------------------------------------- scenarios


@dataclass
class Scenario:
    """A contingency made concrete: the agreement with its fixed lines and
    withdrawals applied, the quantities still ranged, and the fixed values
    (shown beside every counterexample)."""

    model: Model
    ranged: list[Ranged]
    fixed: dict[str, Fraction] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)


def worth_key(names) -> str:
    return "worth {" + ", ".join(names) + "}"


def scenario_of(model: Model, contingency: ast.Contingency) -> Scenario:
    """Apply the fixed lines and withdrawals of a contingency; collect its ranges."""
    attrs: dict[tuple[str, str], Fraction] = {}
    params: dict[str, Fraction] = {}
    worth_lines: list[tuple[tuple[str, ...], Fraction, Fraction]] = []
    ranges: list[tuple[str, Fraction, Fraction, tuple]] = []
    gone: list[str] = []
    fixed: dict[str, Fraction] = {}
    for line in contingency.lines:
        match line:
            case ast.AttrFixed(attribute=a, party=p, value=v):
                attrs[(a.name, p.name)] = v.value
                fixed[f"{a.name} of {p.name}"] = v.value
            case ast.ParamFixed(param=p, value=v):
                params[p.name] = v.value
                fixed[p.name] = v.value
            case ast.AttrRange(attribute=a, party=p, low=lo, high=hi):
                if lo.value == hi.value:
                    attrs[(a.name, p.name)] = lo.value
                    fixed[f"{a.name} of {p.name}"] = lo.value
                else:
                    ranges.append((f"{a.name} of {p.name}", lo.value, hi.value, ("attribute", a.name, p.name)))
            case ast.ParamRange(param=p, low=lo, high=hi):
                if lo.value == hi.value:
                    params[p.name] = lo.value
                    fixed[p.name] = lo.value
                else:
                    ranges.append((p.name, lo.value, hi.value, ("param", p.name)))
            case ast.WorthRange(members=members, low=lo, high=hi):
                worth_lines.append((tuple(m.name for m in members), lo.value, hi.value))
            case ast.Without(party=p):
                gone.append(p.name)
    notes = []
    scenario = model.with_values(attributes=attrs, params=params)
    for party in gone:
        if party in scenario.parties:
            scenario = scenario.without(party)
    ranged: list[Ranged] = []
    for key, lo, hi, what in ranges:
        if what[0] == "attribute":
            if what[2] not in scenario.parties:
                notes.append(f"`{key}` is ignored: the party has withdrawn")
                continue
            ranged.append(Ranged(key, "attribute", lo, hi, attribute=what[1], party=what[2]))
        else:
            ranged.append(Ranged(key, "param", lo, hi, param=what[1]))
    pins: dict[int, Fraction] = {}
    for names, lo, hi in worth_lines:
        if any(p not in scenario.parties for p in names):
            notes.append(f"`{worth_key(names)}` is ignored: a member has withdrawn")
            continue
        mask = scenario.mask_of(names)
        key = worth_key(scenario.names_of(mask))
        if lo == hi:
            pins[mask] = lo
            fixed[key] = lo
        else:
            ranged.append(Ranged(key, "worth", lo, hi, mask=mask))
    if pins:
        scenario = scenario.with_values(worths=pins)
    # a later line on the same quantity replaces an earlier one
    by_key = {r.key: r for r in ranged}
    return Scenario(scenario, list(by_key.values()), fixed, notes)


def check_contingency(model: Model, contingency: ast.Contingency, options: CheckOptions) -> list[Result]:
    """Every requirement of the agreement under one contingency."""
    scenario = scenario_of(model, contingency)
    if not scenario.ranged:
        return Checker(scenario.model, options, contingency=contingency.name, parameters=dict(scenario.fixed)).run()
    weights = weight_ranges(scenario)
    if weights:
        return check_weight_corners(scenario, weights, options, contingency.name)
    return RangedCheck(scenario, options, contingency.name).run()


# ---------------------------------------------------------------- ranged weights


def weight_ranges(scenario: Scenario) -> list[Ranged]:
    """The ranged weights of a proportional rule that nothing else reads.

    Why their corners suffice: with every other quantity and the coalition
    fixed, the payout of S is remaining * w(S) / w(all), a ratio of two affine
    functions of the weights whose denominator keeps one sign on the box (it
    is proved non-zero). Such a function is quasi-linear (monotone along every
    segment), so its largest and smallest values over the box sit at corners.
    The excess is a constant minus that payout, the allowed excess does not
    read the weights, and so a violation or a supremum anywhere in the box is
    matched or beaten at a corner. Each corner leaves a linear query.
    """
    model = scenario.model
    rule = model.payouts.rule
    if rule is None or rule.kind != "proportional":
        return []
    attr = rule.attribute.name
    exprs = ([model.formula.expr] if model.formula else []) + list(model.table.values())
    if model.grand is not None:
        exprs.append(model.grand)
    for e in exprs:
        for node in walk(e):
            if isinstance(node, ast.Member) and node.item == attr:
                return []  # the formula reads the weights too: no corner argument
    return [r for r in scenario.ranged if r.kind == "attribute" and r.attribute == attr]


def check_weight_corners(scenario: Scenario, weights: list[Ranged], options: CheckOptions, name: str) -> list[Result]:
    """Run the ranged check once per corner of the weight ranges and merge:
    fails if any corner fails, holds if every corner holds, the worst excess
    is the largest over the corners."""
    model = scenario.model
    rule = model.payouts.rule
    sharing = [p for p in model.parties if model.payouts.scope == "all" or p not in model.payouts.fixed]
    # the weight total is affine in the weights: its range over the box runs between corner values
    totals = [sum((corner.get(f"{rule.attribute.name} of {p}", model.attributes[rule.attribute.name][p])
                   for p in sharing), Fraction(0)) for corner in corners(weights)]
    if min(totals) <= 0 <= max(totals):
        reason = (f"the sum of `{rule.attribute.name}` over the parties it shares among can be zero in the ranges "
                  f"(it runs from {min(totals)} to {max(totals)})")
        return [Result(ast.requirement_text(r), r.span.line if r.span else 0, name, UNKNOWN, None, "z3",
                       reason=reason, span=r.span) for r in model.requirements]
    others = [r for r in scenario.ranged if r not in weights]
    runs = []
    count = 1 << len(weights)
    share = None if options.time_limit is None else options.time_limit / count
    sub_options = CheckOptions(top=options.top, time_limit=share if share is not None else None,
                               low_bits=options.low_bits, search=options.search)
    for corner in corners(weights):
        attrs = {(r.attribute, r.party): corner[r.key] for r in weights}
        sub = Scenario(scenario.model.with_values(attributes=attrs), others,
                       dict(scenario.fixed) | corner, scenario.notes)
        if others:
            runs.append(RangedCheck(sub, sub_options, name).run())
        else:
            runs.append(Checker(sub.model, sub_options, contingency=name, parameters=dict(sub.fixed)).run())
    merged = []
    for results in zip(*runs):
        merged.append(_merge(results, options.top, scenario.model.n))
    return merged


def _merge(results: tuple[Result, ...], top: int, n: int) -> Result:
    first = results[0]
    failing = [r for r in results if r.status == FAILS]
    unknown = [r for r in results if r.status == UNKNOWN]
    worsts = [r.worst_excess for r in results]
    worst = None if any(w is None for w in worsts) else max(worsts)
    at = None if worst is None else next(r for r in results if r.worst_excess == worst)
    method = f"{first.method}, at every corner of the weight ranges"
    if failing:
        # one line per coalition (at its worst corner); an unbalanced budget first, as in the baseline
        best: dict[tuple[str, ...], Counterexample] = {}
        for c in (c for r in failing for c in r.counterexamples):
            if c.coalition not in best or c.excess > best[c.coalition].excess:
                best[c.coalition] = c
        cex = sorted(best.values(), key=lambda c: (len(c.coalition) != n, -c.excess))
        status, reason = FAILS, None
    elif unknown:
        cex, status, reason = [], UNKNOWN, unknown[0].reason
    else:
        cex, status, reason = [], HOLDS, None
    return Result(first.requirement, first.line, first.contingency, status, worst, method, reason=reason,
                  counterexamples=tuple(cex[:top]), span=first.span,
                  worst_coalition=at.worst_coalition if at is not None else None)


# ---------------------------------------------------------------- helpers


def allowed(req: ast.Require, worth: Fraction) -> Fraction:
    """The excess a coalition may have under a coalition requirement."""
    if req.kind == "within":
        bound = req.bound
        return bound.value * abs(worth) if isinstance(bound, ast.Percent) else bound.value
    return Fraction(0)


def _opt_value(term: z3.ExprRef) -> tuple[Fraction, Fraction] | None:
    """An optimizer's bound `s + k*epsilon` as (s, k); None for infinity."""
    value = fraction_of(term)
    if value is not None:
        return value, Fraction(0)
    if z3.is_const(term):
        name = term.decl().name()
        if name == "epsilon":
            return Fraction(0), Fraction(1)
        return None
    if z3.is_app_of(term, z3.Z3_OP_ADD):
        s = k = Fraction(0)
        for c in term.children():
            part = _opt_value(c)
            if part is None:
                return None
            s, k = s + part[0], k + part[1]
        return s, k
    if z3.is_app_of(term, z3.Z3_OP_MUL):
        kids = term.children()
        coef, rest = Fraction(1), []
        for c in kids:
            v = fraction_of(c)
            if v is None:
                rest.append(c)
            else:
                coef *= v
        if len(rest) == 1:
            part = _opt_value(rest[0])
            if part is not None:
                return coef * part[0], coef * part[1]
    return None


class _Deadline:
    def __init__(self, seconds: float):
        self.seconds = seconds
        self.end = time.monotonic() + seconds

    def left_ms(self) -> int:
        return max(1, int((self.end - time.monotonic()) * 1000))

    @property
    def passed(self) -> bool:
        return time.monotonic() >= self.end


class _Unknown(Exception):
    """A query did not finish; the reason is worth printing."""


class _Mismatch(Exception):
    """The solver's answer did not re-check exactly (an internal error)."""


@dataclass
class _Point:
    """A coalition and values of the ranged quantities, evaluated exactly."""

    mask: int
    values: dict[str, Fraction]
    excess: Fraction
    worth: Fraction
    paid: Fraction


# ---------------------------------------------------------------- the ranged check


class RangedCheck:
    """Decides the requirements of one scenario over every value in its ranges."""

    def __init__(self, scenario: Scenario, options: CheckOptions, name: str):
        self.scenario = scenario
        self.model = scenario.model
        self.options = options
        self.name = name
        self.limit = options.time_limit if options.time_limit is not None else DEFAULT_TIME_LIMIT
        self._exact_cache: dict = {}
        self._candidates = self._breakpoints()

    # ------------------------------------------------------------ results
    def _result(self, req, status, worst, method, reason=None, cex=(), worst_mask=None) -> Result:
        names = tuple(self.model.names_of(worst_mask)) if worst_mask is not None else None
        return Result(ast.requirement_text(req), req.span.line if req.span else 0, self.name, status, worst,
                      method, reason=reason, counterexamples=tuple(cex), span=req.span, worst_coalition=names)

    def _unknown_all(self, reason: str, method: str = "z3") -> list[Result]:
        return [self._result(r, UNKNOWN, None, method, reason=reason) for r in self.model.requirements]

    def _cex(self, p: _Point, allowed_excess: Fraction) -> Counterexample:
        return Counterexample(tuple(self.model.names_of(p.mask)), p.worth, p.paid, p.excess, allowed_excess,
                              dict(self.scenario.fixed) | dict(p.values))

    # ------------------------------------------------------------ exact side
    def exact(self, values: dict[str, Fraction]) -> tuple[Worths, list[Fraction]]:
        """Worths and payouts of the agreement at these values, in Fractions."""
        key = tuple(sorted(values.items()))
        hit = self._exact_cache.get(key)
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
            if len(self._exact_cache) > 4096:
                self._exact_cache.clear()
            self._exact_cache[key] = hit
        return hit

    def point(self, mask: int, values: dict[str, Fraction]) -> _Point:
        w, pay = self.exact(values)
        worth = w.exact(mask)
        paid = paid_by(pay, mask) if mask != self.model.full else sum(pay, Fraction(0))
        return _Point(mask, dict(values), excess(self.model, worth, paid), worth, paid)

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

    def polish(self, p: _Point, keep=lambda p: True) -> _Point:
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

    # ------------------------------------------------------------ solver side
    def _solve(self, constraints, deadline: _Deadline):
        """(model or None); raises _Unknown."""
        if deadline.passed:
            raise _Unknown(f"the time limit of {deadline.seconds:g} s was reached")
        s = z3.Solver()
        s.set("timeout", deadline.left_ms())
        s.add(*self.enc.ranges, *constraints)
        r = s.check()
        if r == z3.sat:
            return s.model()
        if r == z3.unsat:
            return None
        reason = s.reason_unknown()
        if deadline.passed or "timeout" in reason or "canceled" in reason:
            raise _Unknown(f"the time limit of {deadline.seconds:g} s was reached")
        raise _Unknown(f"the solver gave up ({reason})")

    def _maximize(self, objective, constraints, deadline: _Deadline):
        """(bound (s, k) or None for unbounded, model) or None when infeasible; raises _Unknown."""
        if deadline.passed:
            raise _Unknown(f"the time limit of {deadline.seconds:g} s was reached")
        o = z3.Optimize()
        o.set("timeout", deadline.left_ms())
        o.add(*self.enc.ranges, *constraints)
        h = o.maximize(self.enc.z(objective))
        r = o.check()
        if r == z3.unsat:
            return None
        if r != z3.sat:
            reason = o.reason_unknown()
            if deadline.passed or "timeout" in reason or "canceled" in reason:
                raise _Unknown(f"the time limit of {deadline.seconds:g} s was reached")
            raise _Unknown(f"the optimizer gave up ({reason})")
        return _opt_value(h.value()), o.model()

    def _witness(self, zmodel, deadline: _Deadline, fixed_mask: int | None = None, extra=()) -> tuple[int, dict]:
        """Coalition and rational values from a Z3 model; an irrational value is
        pinned to a nearby rational and the query repeated."""
        mask = self.enc.mask_of(zmodel) if fixed_mask is None else fixed_mask
        values, rational = self.enc.values_of(zmodel)
        if rational:
            return mask, values
        pins = []
        for key in list(values):
            pins.append(self.enc.var[key] == real(values[key]))
            m = self._solve([*extra, self.enc.is_coalition(mask), *pins], deadline)
            if m is None:
                break
            values, rational = self.enc.values_of(m)
            if rational:
                return mask, values
        raise _Unknown("the solver's witness has irrational values that could not be replaced by rational ones")

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
        deadline = _Deadline(self.limit)
        proper = self.proper_scope()
        for term, what in enc.divisors:
            m = self._solve([proper, term == 0], deadline)
            if m is not None:
                _, values = self._witness(m, deadline, extra=[proper, term == 0])
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
            worths, pay = self.exact(corner)
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
        b = self.enc.member
        return z3.And(z3.Or(b), z3.Not(z3.And(b)))

    def singleton_scope(self):
        return z3.PbEq([(b, 1) for b in self.enc.member], 1)

    # ------------------------------------------------------------ run
    def run(self) -> list[Result]:
        try:
            reason = self._prepare()
        except PayoutUnavailable as exc:
            return self._unknown_all(f"the payout cannot be computed: {exc}")
        except EvaluationError as exc:
            return self._unknown_all(exc.message)
        except _Unknown as exc:
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
            except _Unknown as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(), reason=str(exc)))
            except _Mismatch as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(), reason=f"internal: {exc}"))
            except (PayoutUnavailable, EvaluationError) as exc:
                results.append(self._result(req, UNKNOWN, None, self._method(),
                                            reason=getattr(exc, "message", None) or str(exc)))
        return results

    def _method(self, extra: str = "") -> str:
        base = "z3 optimize" if self.enc.linear else "z3 bisection"
        return base + extra

    def _requirement(self, req) -> Result:
        deadline = _Deadline(self.limit)
        if req.kind == "budget":
            return self._budget(req, deadline)
        which = "singletons" if req.kind == "rational" else "proper"
        scope = self.singleton_scope() if which == "singletons" else self.proper_scope()
        cex = []
        if req.kind in ("stable", "within"):
            budget = self.budget_point(deadline)
            if budget is not None:
                cex.append(self._cex(budget, Fraction(0)))
        cond = self._violation(req)
        for p in self.violators(cond, scope, deadline, lambda p, req=req: p.excess > allowed(req, p.worth)):
            cex.append(self._cex(p, allowed(req, p.worth)))
        cex = cex[: self.options.top]
        status = FAILS if cex else HOLDS
        # the verdict is settled; the supremum uses the time that is left and is
        # shared by the requirements over the same coalitions
        if which not in self._sup_cache:
            try:
                self._sup_cache[which] = self.supremum(self.e_num, scope, deadline)
            except _Unknown:
                self._sup_cache[which] = (None, None, ", worst excess not settled within the time limit")
        worst, worst_mask, note = self._sup_cache[which]
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
    def violators(self, cond, scope, deadline: _Deadline, violates) -> list[_Point]:
        """Up to `top` coalitions that violate `cond` for some values, worst
        first, each with values at which it does, re-checked exactly.

        A plain satisfiability query decides first (unsat is the proof that
        nothing violates); then, in the time left, the worst violators are
        ranked, each found coalition cut off by a no-good on the membership
        Booleans before the next query."""
        enc = self.enc
        first = self._solve([scope, cond], deadline)
        if first is None:
            return []
        witness = self._checked_point(first, [scope, cond], deadline, violates)
        found: list[_Point] = []
        cuts = []
        try:
            while len(found) < self.options.top:
                constraints = [scope, cond, *cuts]
                if enc.linear:
                    answer = self._maximize(self.e_num, constraints, deadline)
                    zmodel = None if answer is None else answer[1]
                else:
                    zmodel = self._solve(constraints, deadline)
                if zmodel is None:
                    break
                p = self._checked_point(zmodel, constraints, deadline, violates)
                found.append(self.polish(p, violates))
                cuts.append(z3.Not(enc.is_coalition(p.mask)))
        except _Unknown:
            pass  # the refutation in hand stands; the list is just shorter
        if not any(p.mask == witness.mask for p in found):
            found.append(self.polish(witness, violates))
        found.sort(key=lambda p: (-p.excess, bin(p.mask).count("1"), p.mask))
        return found[: self.options.top]

    def _checked_point(self, zmodel, constraints, deadline: _Deadline, violates) -> _Point:
        """The violating point of a Z3 model, re-checked exactly; when an
        optimizer's model sits at a bound that is not attained, any violating
        values for the same coalition are asked for instead."""
        mask, values = self._witness(zmodel, deadline, extra=constraints)
        p = self.point(mask, values)
        if violates(p):
            return p
        m = self._solve([*constraints, self.enc.is_coalition(mask)], deadline)
        if m is None:
            raise _Mismatch(f"coalition {{{', '.join(self.model.names_of(mask))}}} was reported "
                            "violating but no values make it so")
        mask, values = self._witness(m, deadline, fixed_mask=mask, extra=constraints)
        p = self.point(mask, values)
        if not violates(p):
            raise _Mismatch(f"the counterexample {{{', '.join(self.model.names_of(mask))}}} at "
                            f"{values} did not re-check exactly")
        return p

    # ------------------------------------------------------------ supremum
    def supremum(self, e_num, scope, deadline: _Deadline) -> tuple[Fraction | None, int | None, str]:
        """(sup of the excess over `scope` and the ranges, a coalition attaining
        it, a note for `method`). The excess is e_num / den."""
        enc = self.enc
        if enc.linear:
            answer = self._maximize(e_num, [scope], deadline)
            if answer is None:
                return None, None, ""
            bound, zmodel = answer
            if bound is not None and bound[1] <= 0:
                s, k = bound
                # the optimizer's bound, proved again by a plain unsat query
                if self._solve([scope, enc.z(e_num) > real(s) if k == 0 else enc.z(e_num) >= real(s)], deadline) is None:
                    if k < 0:
                        return s, None, " (supremum not attained)"
                    mask, values = self._witness(zmodel, deadline, extra=[scope])
                    if self.point(mask, values).excess != s:
                        m = self._solve([scope, enc.z(e_num) == real(s)], deadline)
                        if m is None:
                            raise _Mismatch("the optimizer's bound is not attained by any coalition")
                        mask, values = self._witness(m, deadline, extra=[scope])
                        if self.point(mask, values).excess != s:
                            raise _Mismatch("the worst excess did not re-check exactly")
                    return s, mask, ""
        return self._bisect(e_num, scope, deadline)

    def _bisect(self, e_num, scope, deadline: _Deadline) -> tuple[Fraction | None, int | None, str]:
        """Exact supremum by bisection: `low` is always the exact excess of a
        witness, `high` always a bound proved by an unsat query; the search ends
        when `excess > low` is unsat (then low is the supremum, attained)."""
        enc = self.enc
        den = enc.den

        def above(t: Fraction):
            return enc.zb(enc.compare(">", e_num, enc.scale(den, t)))

        m = self._solve([scope], deadline)
        if m is None:
            return None, None, ""
        mask, values = self._witness(m, deadline, extra=[scope])
        best = self.polish(self.point(mask, values))
        high: Fraction | None = None
        step = Fraction(1)
        for _ in range(MAX_BISECTION_STEPS):
            try:
                m = self._solve([scope, above(best.excess)], deadline)
            except _Unknown:
                break
            if m is None:
                return best.excess, best.mask, ""
            mask, values = self._witness(m, deadline, extra=[scope, above(best.excess)])
            p = self.polish(self.point(mask, values))
            if p.excess <= best.excess:
                raise _Mismatch("a witness above the best excess did not re-check exactly")
            best = p
            # probe above the best, to bring the proved upper end down
            if high is None:
                target = best.excess + step
                step *= 4
            else:
                if high <= best.excess:
                    raise _Mismatch("a witness exceeded a proved bound")
                target = _simple_between(best.excess, high)
            try:
                m = self._solve([scope, above(target)], deadline)
            except _Unknown:
                break
            if m is None:
                high = target
            else:
                mask, values = self._witness(m, deadline, extra=[scope, above(target)])
                p = self.polish(self.point(mask, values))
                if p.excess > best.excess:
                    best = p
        upper = "unbounded so far" if high is None else str(high)
        return None, best.mask, f", supremum between {best.excess} and {upper} (not settled)"

    # ------------------------------------------------------------ budget
    def budget_point(self, deadline: _Deadline) -> _Point | None:
        """Values at which the payouts do not add up to worth(all), or None (proved)."""
        if self._budget_cache is None:
            full = self.model.full
            e_full, _ = self.enc.fixed_excess(full)
            cond = self.enc.zb(self.enc.compare("!=", e_full, Fraction(0)))
            m = self._solve([cond], deadline)
            point = None
            if m is not None:
                _, values = self._witness(m, deadline, fixed_mask=full, extra=[cond])
                point = self.point(full, values)
                if point.excess == 0:
                    raise _Mismatch("an unbalanced budget did not re-check exactly")
                point = self.polish(point, lambda p: p.excess != 0)
            self._budget_cache = (point,)
        return self._budget_cache[0]

    def _budget(self, req, deadline: _Deadline) -> Result:
        p = self.budget_point(deadline)
        if p is None:
            return self._result(req, HOLDS, Fraction(0), "z3", worst_mask=self.model.full)
        return self._result(req, FAILS, p.excess, "z3", cex=[self._cex(p, Fraction(0))], worst_mask=self.model.full)


def _simple_between(low: Fraction, high: Fraction) -> Fraction:
    """A fraction with a small denominator strictly inside (low, high), near the middle."""
    a, b = low + (high - low) / 4, high - (high - low) / 4
    den = 1
    while True:
        n = -((-a.numerator * den) // a.denominator)  # ceil(a * den)
        if Fraction(n, den) <= b:
            return Fraction(n, den)
        den *= 2


def corners(ranged: list[Ranged]):
    """Every vertex of the box of ranges (for tests and small cross-checks)."""
    for ends in product(*[(r.low, r.high) for r in ranged]):
        yield {r.key: v for r, v in zip(ranged, ends)}
