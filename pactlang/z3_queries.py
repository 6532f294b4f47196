"""`Encoding` + constraints -> Z3 models, optimizer bounds and rational witnesses, within a deadline.

Every query carries the ranges of the encoding and the time left. Z3's
`unknown` (a time limit, a solver giving up) becomes `QueryUnknown` with a
reason worth printing, never an answer.
"""

from __future__ import annotations

import time
from fractions import Fraction

import z3

from .encode_z3 import Encoding, fraction_of, real


class QueryUnknown(Exception):
    """A query did not finish; the reason is worth printing."""


class Mismatch(Exception):
    """The solver's answer did not re-check exactly (an internal error)."""


class Deadline:
    """The end of the time one requirement may use."""

    def __init__(self, seconds: float):
        self.seconds = seconds
        self.end = time.monotonic() + seconds

    def left(self) -> float:
        """Seconds left, at least 0."""
        return max(0.0, self.end - time.monotonic())

    def left_ms(self) -> int:
        """Milliseconds left, at least 1 (Z3 reads 0 as no limit)."""
        return max(1, int((self.end - time.monotonic()) * 1000))

    @property
    def passed(self) -> bool:
        return time.monotonic() >= self.end


def opt_value(term: z3.ExprRef) -> tuple[Fraction, Fraction] | None:
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
            part = opt_value(c)
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
            part = opt_value(rest[0])
            if part is not None:
                return coef * part[0], coef * part[1]
    return None


def _time_limit(deadline: Deadline) -> QueryUnknown:
    return QueryUnknown(f"the time limit of {deadline.seconds:g} s was reached")


class Queries:
    """Satisfiability and optimization queries over one encoding."""

    def __init__(self, enc: Encoding):
        self.enc = enc

    def solve(self, constraints, deadline: Deadline):
        """(model or None); raises QueryUnknown."""
        if deadline.passed:
            raise _time_limit(deadline)
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
            raise _time_limit(deadline)
        raise QueryUnknown(f"the solver gave up ({reason})")

    def maximize(self, objective, constraints, deadline: Deadline):
        """(bound (s, k) or None for unbounded, model) or None when infeasible; raises QueryUnknown."""
        if deadline.passed:
            raise _time_limit(deadline)
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
                raise _time_limit(deadline)
            raise QueryUnknown(f"the optimizer gave up ({reason})")
        return opt_value(h.value()), o.model()

    def witness(self, zmodel, deadline: Deadline, fixed_mask: int | None = None, extra=()) -> tuple[int, dict]:
        """Coalition and rational values from a Z3 model; an irrational value is
        pinned to a nearby rational and the query repeated."""
        mask = self.enc.mask_of(zmodel) if fixed_mask is None else fixed_mask
        values, rational = self.enc.values_of(zmodel)
        if rational:
            return mask, values
        pins = []
        for key in list(values):
            pins.append(self.enc.var[key] == real(values[key]))
            m = self.solve([*extra, self.enc.is_coalition(mask), *pins], deadline)
            if m is None:
                break
            values, rational = self.enc.values_of(m)
            if rational:
                return mask, values
        raise QueryUnknown("the solver's witness has irrational values that could not be replaced by rational ones")
