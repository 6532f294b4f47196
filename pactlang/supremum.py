"""Excess over a coalition scope -> its exact supremum over the ranges, with a coalition attaining it.

The excess of a coalition is `e_num / den` with `den` positive. When every
term is linear the supremum comes from Z3's optimizer, its bound proved again
by a plain unsat query; otherwise, or when that proof does not go through, by
bisection whose ends are exact: a witness evaluated in Fractions below, an
unsat query above.
"""

from __future__ import annotations

from fractions import Fraction

import z3

from .encode_z3 import real
from .exact_points import ExactPoints
from .z3_queries import Deadline, Mismatch, Queries, QueryUnknown

MAX_BISECTION_STEPS = 40

Supremum = tuple[Fraction | None, int | None, str]  # (value, a coalition attaining it, a note for `method`)


def supremum(queries: Queries, points: ExactPoints, e_num, scope, deadline: Deadline) -> Supremum:
    """(sup of the excess over `scope` and the ranges, a coalition attaining
    it, a note for `method`). The excess is e_num / den."""
    enc = queries.enc
    if enc.linear:
        answer = queries.maximize(e_num, [scope], deadline)
        if answer is None:
            return None, None, ""
        bound, zmodel = answer
        if bound is not None and bound[1] <= 0:
            s, k = bound
            # the optimizer's bound, proved again by a plain unsat query
            if queries.solve([scope, enc.z(e_num) > real(s) if k == 0 else enc.z(e_num) >= real(s)],
                             deadline) is None:
                if k < 0:
                    return s, None, " (supremum not attained)"
                mask, values = queries.witness(zmodel, deadline, extra=[scope])
                if points.point(mask, values).excess != s:
                    m = queries.solve([scope, enc.z(e_num) == real(s)], deadline)
                    if m is None:
                        raise Mismatch("the optimizer's bound is not attained by any coalition")
                    mask, values = queries.witness(m, deadline, extra=[scope])
                    if points.point(mask, values).excess != s:
                        raise Mismatch("the worst excess did not re-check exactly")
                return s, first_attaining(queries, points, e_num, scope, s, mask, deadline), ""
    return bisect(queries, points, e_num, scope, deadline)


def seeded(queries: Queries, points: ExactPoints, e_num, scope, deadline: Deadline, seeds) -> Supremum | None:
    """The supremum when it is the best seed (moved to its coalition's worst
    breakpoint), proved by two unsat queries: no other coalition reaches it,
    and its own coalition does not exceed it (a query on that coalition
    alone, so a small one). Then it is attained by that coalition only, which
    is therefore the first in any order. None when either query is sat."""
    enc = queries.enc
    best = points.polish(max(seeds, key=lambda p: (p.excess, -bin(p.mask).count("1"), -p.mask)))
    bound = enc.scale(enc.den, best.excess)
    others = [scope, z3.Not(enc.is_coalition(best.mask)), enc.zb(enc.compare(">=", e_num, bound))]
    if queries.solve(others, deadline) is not None:
        return None
    own, _ = enc.fixed_excess(best.mask)
    if queries.solve([enc.zb(enc.compare(">", own, bound))], deadline) is not None:
        return None
    return best.excess, best.mask, ""


def first_attaining(queries: Queries, points: ExactPoints, e_num, scope, s: Fraction, mask: int,
                    deadline: Deadline) -> int:
    """Of the coalitions whose excess reaches the supremum `s`, the first in
    the checker's order (fewest members, then smallest mask), as enumeration
    names it; `mask` is one of them."""
    enc = queries.enc
    reaches = enc.zb(enc.compare(">=", e_num, enc.scale(enc.den, s)))
    while True:
        constraints = [scope, reaches, enc.ranks_before(mask)]
        try:
            m = queries.solve(constraints, deadline)
        except QueryUnknown:
            return mask  # a coalition attaining it, if not the first
        if m is None:
            return mask
        mask, values = queries.witness(m, deadline, extra=constraints)
        if points.point(mask, values).excess != s:
            raise Mismatch("a coalition reaching the worst excess did not re-check exactly")


def _limit_above(queries: Queries, points: ExactPoints, e_num, scope, best, deadline: Deadline) -> Supremum | None:
    """The supremum when it is a limit of the best coalition's excess at one of
    its thresholds: the limit L is approached (`ExactPoints.side_limits`), and
    an unsat query proves that nothing exceeds it. Attained when some point
    reaches L exactly, otherwise reported as not attained. None when no limit
    is above the best excess or one is exceeded."""
    enc = queries.enc
    limits = [lim for lim, _, _ in points.side_limits(best.mask, best.values) if lim > best.excess]
    if not limits:
        return None
    top = max(limits)
    above = enc.zb(enc.compare(">", e_num, enc.scale(enc.den, top)))
    if queries.solve([scope, above], deadline) is not None:
        return None
    reaches = enc.zb(enc.compare(">=", e_num, enc.scale(enc.den, top)))
    m = queries.solve([scope, reaches], deadline)
    if m is None:
        return top, None, " (supremum not attained)"
    mask, values = queries.witness(m, deadline, extra=[scope, reaches])
    if points.point(mask, values).excess != top:
        raise Mismatch("a point reaching the worst excess did not re-check exactly")
    return top, first_attaining(queries, points, e_num, scope, top, mask, deadline), ""


def bisect(queries: Queries, points: ExactPoints, e_num, scope, deadline: Deadline) -> Supremum:
    """Exact supremum by bisection: `low` is always the exact excess of a
    witness, `high` always a bound proved by an unsat query; the search ends
    when `excess > low` is unsat (then low is the supremum, attained)."""
    enc = queries.enc
    den = enc.den

    def above(t: Fraction):
        return enc.zb(enc.compare(">", e_num, enc.scale(den, t)))

    m = queries.solve([scope], deadline)
    if m is None:
        return None, None, ""
    mask, values = queries.witness(m, deadline, extra=[scope])
    best = points.polish(points.point(mask, values))
    high: Fraction | None = None
    step = Fraction(1)
    for _ in range(MAX_BISECTION_STEPS):
        try:
            m = queries.solve([scope, above(best.excess)], deadline)
            if m is None:
                return best.excess, first_attaining(queries, points, e_num, scope, best.excess, best.mask,
                                                    deadline), ""
            settled = _limit_above(queries, points, e_num, scope, best, deadline)
        except QueryUnknown:
            break
        if settled is not None:
            return settled
        mask, values = queries.witness(m, deadline, extra=[scope, above(best.excess)])
        p = points.polish(points.point(mask, values))
        if p.excess <= best.excess:
            raise Mismatch("a witness above the best excess did not re-check exactly")
        best = p
        # probe above the best, to bring the proved upper end down
        if high is None:
            target = best.excess + step
            step *= 4
        else:
            if high < best.excess:
                raise Mismatch("a witness exceeded a proved bound")
            if high == best.excess:  # nothing exceeds it (proved) and best reaches it
                return best.excess, first_attaining(queries, points, e_num, scope, best.excess, best.mask,
                                                    deadline), ""
            target = simple_between(best.excess, high)
        try:
            m = queries.solve([scope, above(target)], deadline)
        except QueryUnknown:
            break
        if m is None:
            high = target
        else:
            mask, values = queries.witness(m, deadline, extra=[scope, above(target)])
            p = points.polish(points.point(mask, values))
            if p.excess > best.excess:
                best = p
    upper = "unbounded so far" if high is None else str(high)
    return None, best.mask, f", supremum between {best.excess} and {upper} (not settled)"


def simple_between(low: Fraction, high: Fraction) -> Fraction:
    """A fraction with a small denominator strictly inside (low, high), near the middle."""
    a, b = low + (high - low) / 4, high - (high - low) / 4
    den = 1
    while True:
        n = -((-a.numerator * den) // a.denominator)  # ceil(a * den)
        if Fraction(n, den) <= b:
            return Fraction(n, den)
        den *= 2
